"""Acceptance criteria: results judged against limits declared in the study file.

A criterion is judged ``True`` (met), ``False`` (not met) or ``None`` (not
applicable to these data, with the reason in ``note``). Not-applicable
criteria never fail a study, but they are listed so a reviewer sees them.

No verdict from nothing: a criterion whose value (a number, or an interval
``[low, high]``) does not exist or is not finite, or whose limit is missing,
is not applicable, whatever verdict its caller computed. :class:`Criterion`
enforces this when it is constructed, so no statistic can bypass it; the
helpers :func:`at_least`, :func:`at_most` and :func:`interval_within` judge a
value only when it exists.

The limits are the study's own; validator's defaults are examples taken
from common practice, not regulatory limits.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

__all__ = ["Criterion", "calibration_criteria", "precision_level_criteria", "loq_criterion", "comparison_criteria",
           "overall_verdict", "at_least", "at_most", "interval_within", "missing", "working_range_criterion"]


def _finite(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def missing(value) -> str:
    """Why ``value`` (a number or a ``[low, high]`` pair) cannot be judged, or "" when it can."""
    if value is None:
        return "does not exist"
    if isinstance(value, (list, tuple)):
        if len(value) != 2:
            return f"is not a [low, high] pair ({value!r})"
        bad = [v for v in value if not _finite(_as_float(v))]
        return "" if not bad else ("does not exist" if all(v is None for v in bad) else f"is not finite ({value!r})")
    v = _as_float(value)
    return "" if _finite(v) else f"is not finite ({value!r})"


def _as_float(v):
    if v is None or isinstance(v, bool):
        return v
    try:
        return float(v)
    except (TypeError, ValueError):
        return None


@dataclass(frozen=True)
class Criterion:
    """One acceptance criterion and its verdict.

    ``value`` is the judged number, or the judged interval as ``[low, high]``;
    ``limit`` a maximum/minimum or a ``[low, high]`` range. When the value or
    the limit is missing or not finite, ``passed`` is forced to ``None`` and
    ``note`` gives the reason (the caller's, or one naming what is missing),
    whatever verdict was passed in.
    """

    id: str
    description: str
    value: float | list | None = field(metadata={"as_float": True})
    # a maximum/minimum, or [low, high] for a range
    limit: float | list | None = field(metadata={"as_float": True})
    passed: bool | None = field(metadata={"json": "pass"})
    note: str = ""

    @property
    def null_reason(self) -> str:
        """Why the value, limit or verdict is missing (results.json ``not_applicable``)."""
        return self.note

    def __post_init__(self):
        if isinstance(self.value, tuple):
            object.__setattr__(self, "value", list(self.value))
        if isinstance(self.limit, tuple):
            object.__setattr__(self, "limit", list(self.limit))
        why = []
        if (m := missing(self.value)):
            why.append(f"the value {m}")
        if (m := missing(self.limit)):
            why.append(f"the limit {m}")
        if why:
            object.__setattr__(self, "passed", None)
        elif self.passed is not None:
            object.__setattr__(self, "passed", bool(self.passed))
        if self.passed is None and not self.note.startswith("not applicable"):
            reason = "; ".join(why) if why else "no verdict was reached"
            note = f"not applicable: {reason}" + (f" ({self.note})" if self.note else "")
            object.__setattr__(self, "note", note)


def at_least(value, limit) -> bool | None:
    """value >= limit, or None when either does not exist (see :func:`missing`)."""
    return None if missing(value) or missing(limit) else bool(value >= limit)


def at_most(value, limit) -> bool | None:
    """value <= limit, or None when either does not exist."""
    return None if missing(value) or missing(limit) else bool(value <= limit)


def interval_within(interval, limits) -> bool | None:
    """The interval [low, high] lies inside ``limits`` (a [low, high] range, or one value it must
    contain); None when either does not exist."""
    if missing(interval) or missing(limits):
        return None
    low, high = interval
    if isinstance(limits, (list, tuple)):
        return bool(limits[0] <= low and high <= limits[1])
    return bool(low <= limits <= high)


def calibration_criteria(cal, crit) -> tuple:
    """Criteria on one analyte's calibration (see docs/results.md for each id)."""
    out = []
    lof = cal.lack_of_fit
    out.append(Criterion(
        "lack-of-fit", f"lack-of-fit F test: p-value at least alpha = {crit.alpha:g}",
        lof.pvalue, crit.alpha, at_least(lof.pvalue, crit.alpha),
        "" if lof.applicable else f"not applicable: {lof.reason}"))
    bad = [b for b in cal.back_calculated if b.passed is False]
    frac = cal.fraction_within_tolerance
    out.append(Criterion(
        "back-calculation",
        f"fraction of calibrators back-calculated within +/-{crit.back_calculation_tolerance_pct:g} % "
        f"(+/-{crit.lowest_level_tolerance_pct:g} % at the lowest level) at least "
        f"{crit.min_fraction_within_tolerance:g}",
        frac, crit.min_fraction_within_tolerance, at_least(frac, crit.min_fraction_within_tolerance),
        ("outside tolerance at nominal " + ", ".join(f"{b.nominal:g}" for b in bad)) if bad else
        ("" if frac is not None else "not applicable: no calibrator with a non-zero nominal value")))
    ratio = cal.sensitivity_ratio
    out.append(Criterion(
        "monotonic", "calibration function monotonic over the calibrated range: slope at its flatter end "
        "over slope at its steeper end greater than 0", ratio, 0.0,
        None if ratio is None else ratio > 0,
        "not applicable: the slope is zero at both ends of the range" if ratio is None else
        ("" if ratio > 0 else "the curve turns over inside the calibrated range: some responses "
         "correspond to two concentrations")))
    if crit.r_squared_min is not None:
        r2 = cal.fit.r_squared
        out.append(Criterion("r-squared", f"coefficient of determination R² at least {crit.r_squared_min:g}",
                             r2, crit.r_squared_min, at_least(r2, crit.r_squared_min),
                             "" if not missing(r2) else "not applicable: R² does not exist "
                             "(the responses do not vary)"))
    return tuple(out)


def working_range_criterion(wr, loq_missing: str = "") -> Criterion:
    """A working range must remain and hold at least one calibrator level that passes back-calculation.

    It fails when the LOQ lies above every passing calibrator or failing levels narrow the range
    to nothing: the method was then not shown to quantify anything. When the reported basis gives
    no LOQ (``loq_missing`` says why), the low end of the range was not checked against one, so the
    criterion is not applicable.
    # common practice, no published source: the rule that a range holds a passing calibrator
    """
    description = "working range remains and holds at least 1 calibrator level that passes back-calculation"
    if loq_missing:
        return Criterion("working-range", description, None, 1, None,
                         f"not applicable: there is no LOQ on the reported basis ({loq_missing}), so the low "
                         "end of the working range was not checked against one")
    return Criterion("working-range", description, wr.passing_levels, 1, at_least(wr.passing_levels, 1),
                     "" if wr.low is not None else wr.basis)


def overall_verdict(criteria) -> str:
    """"pass" only when every criterion was evaluated and met.

    "fail" when any criterion is not met; "incomplete" when none failed but at
    least one could not be evaluated on these data (not applicable), or there
    is no criterion at all: what was not shown is not passed.
    """
    if any(c.passed is False for c in criteria):
        return "fail"
    if not criteria or any(c.passed is None for c in criteria):
        return "incomplete"
    return "pass"


def precision_level_criteria(lv, limits: tuple) -> tuple:
    """Repeatability and intermediate RSD of one level against their maxima ``limits`` (where set)."""
    out = []
    r_max, i_max = limits
    for kind, label, value, limit in (
            ("repeatability", "repeatability RSD", lv.repeatability_rsd_pct, r_max),
            ("intermediate", "intermediate precision RSD", lv.intermediate_rsd_pct, i_max)):
        if limit is None:
            continue
        out.append(Criterion(f"{kind}-rsd-{lv.level:g}", f"{label} at level {lv.level:g} at most {limit:g} %",
                             value, limit, at_most(value, limit),
                             "" if value is not None else f"not applicable: {lv.reason or 'the mean is zero'}"))
    return tuple(out)



def loq_criterion(check) -> Criterion:
    worst = max((r.rsd_pct for r in check.levels if r.rsd_pct is not None), default=None)
    return Criterion("loq-verification",
                     f"RSD at every precision/recovery level up to 2 × LOQ at most {check.rsd_max_pct:g} %",
                     worst, check.rsd_max_pct, check.passed,
                     "" if check.passed is not None else f"not applicable: {check.reason}")


def _interval(ci):
    """[low, high] of a confidence interval, or None when it does not exist."""
    if ci is None:
        return None
    pair = [getattr(ci, "low", None), getattr(ci, "high", None)]
    return None if missing(pair) else pair


def comparison_criteria(comparison, slope_limits=None, intercept_limits=None) -> tuple:
    """Method comparison: the Passing-Bablok slope and intercept CIs, each judged on its own.

    Each CI must lie inside its limits where the study gives them, else contain the ideal
    value (slope 1, intercept 0); together they are the comparison's verdict [EP09].
    A CI that does not exist gives a not-applicable criterion with the comparison's reason.
    """
    pb = comparison.passing_bablok
    reason = getattr(comparison, "reason", "") or "the Passing-Bablok interval does not exist"
    out = []
    for name, ci, limits, ideal in (("slope", pb.slope_ci, slope_limits, 1.0),
                                    ("intercept", pb.intercept_ci, intercept_limits, 0.0)):
        value = _interval(ci)
        limit = list(limits) if limits is not None else ideal
        rule = f"inside [{limits[0]:g}, {limits[1]:g}]" if limits is not None else f"contains {ideal:g}"
        out.append(Criterion(f"method-comparison-{name}", f"Passing-Bablok {name} CI {rule}", value, limit,
                             interval_within(value, limit),
                             "" if value is not None else f"not applicable: {reason}"))
    return tuple(out)
