"""The validated working range and the verification of the reported LOQ.

Notes
-----
Low end: the larger of the lowest calibrator that passes back-calculation
and the LOQ chosen for reporting. High end: the highest calibrator that
passes. Each recovery or precision level that fails its criteria then
narrows the range: a failing level in the lower half of the assessed
levels moves the low end up to the next passing calibrator above it, one in
the upper half moves the high end down to the next passing calibrator below
it. ICH Q2(R2) sec. 3.2 (range); Eurachem Guide (2014) sec. 6.3.
# common practice, no published source: the narrowing rule for failing levels
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ...criteria import Criterion, at_least, at_most

__all__ = ["WorkingRange", "LoqCheck", "LoqLevel", "working_range", "verify_loq", "working_range_criterion",
           "loq_criterion"]


@dataclass(frozen=True)
class WorkingRange:
    """The validated working range; ``low``/``high`` are ``None`` when no range remains.

    ``passing_levels`` counts the distinct calibrator levels that pass
    back-calculation and lie inside [low, high] (0 when no range remains): a
    working range must hold at least one, else nothing in it was shown.
    """

    low: float | None
    high: float | None
    basis: str
    passing_levels: int = 0

    @property
    def null_reason(self) -> str:
        """Why ``low``/``high`` are missing (results.json ``not_applicable``)."""
        return self.basis or "no calibrator passed its back-calculation"


def working_range(back_calculated, loq, loq_method, failing_levels, assessed_levels, unit="") -> WorkingRange:
    passing = sorted(b.nominal for b in back_calculated if b.passed)
    if not passing:
        return WorkingRange(None, None, "no calibrator passes back-calculation, so no range can be stated")
    low, high = passing[0], passing[-1]
    basis = [f"lowest passing calibrator {low:g} {unit}".strip(), f"highest passing calibrator {high:g} {unit}".strip()]
    if loq is not None and loq > low:
        low = loq
        basis[0] = f"reported LOQ {loq:.4g} {unit} ({loq_method}), above the lowest passing calibrator".strip()
    middle = float(np.median(assessed_levels)) if len(assessed_levels) else None
    for level, why in sorted(failing_levels):
        if level <= middle:
            above = [c for c in passing if c > level]
            new_low = above[0] if above else np.inf
            if new_low > low:
                low = new_low
                basis.append(f"low end raised to {low:g} because {why} fails at {level:g}")
        else:
            below = [c for c in passing if c < level]
            new_high = below[-1] if below else -np.inf
            if new_high < high:
                high = new_high
                basis.append(f"high end lowered to {high:g} because {why} fails at {level:g}")
    if not np.isfinite(low) or not np.isfinite(high) or low >= high:
        return WorkingRange(None, None, "no range remains: " + "; ".join(basis))
    inside = len({c for c in passing if low <= c <= high})
    return WorkingRange(float(low), float(high), "; ".join(basis), inside)


@dataclass(frozen=True)
class LoqLevel:
    """One precision or recovery level at or below 2 x LOQ: its RSD (and mean recovery)."""

    source: str                      # "precision" or "recovery"
    level: float
    rsd_pct: float | None = field(metadata={"null_reason": "rsd_reason"})
    # None for a precision level (recovery is not measured there)
    recovery_pct: float | None = field(metadata={"null_reason": "recovery_reason"})

    rsd_reason = "no RSD exists at this level (see its section)"

    @property
    def recovery_reason(self) -> str:
        return "a precision level: recovery is not measured there" if self.source == "precision" else ""


@dataclass(frozen=True)
class LoqCheck:
    """The LOQ verification. Field order and ``metadata`` give its results.json form."""

    loq: float | None
    rsd_max_pct: float
    passed: bool | None = field(metadata={"json": "pass"})
    reason: str
    levels: tuple[LoqLevel, ...]


def verify_loq(loq, precision_levels, recovery_levels, rsd_max_pct) -> LoqCheck:
    """Evidence that the LOQ is fit for use: RSD (and recovery) at levels up to 2 x LOQ.

    ICH Q2(R2) sec. 3.3: the quantitation limit is validated by the accuracy
    and precision of results at or near it.
    """
    if loq is None:
        return LoqCheck(loq=None, rsd_max_pct=rsd_max_pct, passed=None, reason="no LOQ could be estimated",
                        levels=())
    rows = []
    for p in precision_levels:
        if p.level <= 2 * loq:
            rows.append(LoqLevel("precision", p.level, p.repeatability_rsd_pct, None))
    for r in recovery_levels:
        if r.added <= 2 * loq:
            rows.append(LoqLevel("recovery", r.added, r.rsd_pct, r.mean_pct))
    if not rows:
        return LoqCheck(loq=loq, rsd_max_pct=rsd_max_pct, passed=None,
                        reason="no precision or recovery level at or below 2 × LOQ", levels=())
    rsds = [r.rsd_pct for r in rows if r.rsd_pct is not None]
    missing = [f"{r.source} level {r.level:g}" for r in rows if r.rsd_pct is None]
    # identical results (SD exactly 0) show no spread within the resolution of the reported values:
    # an RSD of 0 is never judged met (README "On the limit"; as precision's criteria)
    no_spread = [f"{r.source} level {r.level:g}" for r in rows if r.rsd_pct == 0]
    # a level without an RSD (one result, a mean that is not positive) shows nothing: the check is met
    # only when every level up to 2 x LOQ has an RSD within the maximum (not shown is not passed)
    if any(at_most(v, rsd_max_pct) is False for v in rsds):
        passed, reason = False, ""
    elif missing or no_spread:
        parts = ([f"no RSD exists at {', '.join(missing)} (see its section)"] if missing else []) + (
            [f"the results at {', '.join(no_spread)} show no spread at all (SD exactly 0): the spread is below "
             "the resolution of the reported values, so precision is not shown; report the results with more "
             "digits"] if no_spread else [])
        passed, reason = None, "; ".join(parts)
    else:
        passed, reason = True, ""
    return LoqCheck(loq=loq, rsd_max_pct=rsd_max_pct, passed=passed, reason=reason, levels=tuple(rows))


# the calibration criteria a working range rests on (validator.characteristics.calibration.calibration_criteria)
CALIBRATION_CRITERIA = ("lack-of-fit", "back-calculation", "monotonic", "r-squared")


def working_range_criterion(wr, loq_missing: str = "", calibration_unmet: tuple[str, ...] = ()) -> Criterion:
    """A working range must remain and hold at least one calibrator level that passes back-calculation.

    It fails when the LOQ lies above every passing calibrator or failing levels narrow the range
    to nothing: the method was then not shown to quantify anything. When the reported basis gives
    no LOQ (``loq_missing`` says why), the low end of the range was not checked against one, so the
    criterion is not applicable. A range is read from its calibration, so it is validated only when
    the calibration's criteria are met: when one of them is not met or could not be evaluated
    (``calibration_unmet``, e.g. ``("lack-of-fit not met",)``) this criterion is not applicable
    (the failure is counted once, by the calibration's criterion) and no range is validated.
    # common practice, no published source: the rule that a range holds a passing calibrator
    """
    description = "working range remains and holds at least 1 calibrator level that passes back-calculation"
    if calibration_unmet and wr.low is not None:
        return Criterion("working-range", description, None, 1, None,
                         "not applicable: the calibration it rests on has " + ", ".join(calibration_unmet)
                         + "; a range is validated only when its calibration criteria are met")
    if loq_missing:
        return Criterion("working-range", description, None, 1, None,
                         f"not applicable: there is no LOQ on the reported basis ({loq_missing}), so the low "
                         "end of the working range was not checked against one")
    return Criterion("working-range", description, wr.passing_levels, 1, at_least(wr.passing_levels, 1),
                     "" if wr.low is not None else wr.basis)


def loq_criterion(check) -> Criterion:
    # an RSD of exactly 0 is not a value that is judged (see verify_loq): never shown as the criterion value
    worst = max((r.rsd_pct for r in check.levels if r.rsd_pct), default=None)
    return Criterion("loq-verification",
                     f"RSD at every precision/recovery level up to 2 × LOQ at most {check.rsd_max_pct:g} %",
                     worst, check.rsd_max_pct, check.passed,
                     "" if check.passed is not None else f"not applicable: {check.reason}")
