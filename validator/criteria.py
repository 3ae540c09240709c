"""Acceptance criteria: results judged against limits declared in the study file.

A criterion is judged ``True`` (met), ``False`` (not met) or ``None`` (not
applicable to these data, with the reason in ``note``). Not-applicable
criteria never fail a study, but they are listed so a reviewer sees them.

The limits are the study's own; validator's defaults are examples taken
from common practice, not regulatory limits.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Criterion", "calibration_criteria", "recovery_criteria", "precision_criteria",
           "reference_material_criterion", "loq_criterion", "overall_verdict"]


@dataclass(frozen=True)
class Criterion:
    id: str
    description: str
    value: float | None
    limit: float | list | None       # a maximum/minimum, or [low, high] for a range
    passed: bool | None
    note: str = ""


def calibration_criteria(cal, crit) -> tuple:
    """Criteria on one analyte's calibration (see docs/results.md for each id)."""
    out = []
    lof = cal.lack_of_fit
    out.append(Criterion(
        "lack-of-fit", f"lack-of-fit F test: p-value at least alpha = {crit.alpha:g}",
        lof.pvalue, crit.alpha, (lof.pvalue >= crit.alpha) if lof.applicable else None,
        "" if lof.applicable else f"not applicable: {lof.reason}"))
    bad = [b for b in cal.back_calculated if b.passed is False]
    frac = cal.fraction_within_tolerance
    out.append(Criterion(
        "back-calculation",
        f"fraction of calibrators back-calculated within +/-{crit.back_calculation_tolerance_pct:g} % "
        f"(+/-{crit.lowest_level_tolerance_pct:g} % at the lowest level) at least "
        f"{crit.min_fraction_within_tolerance:g}",
        frac, crit.min_fraction_within_tolerance,
        None if frac is None else frac >= crit.min_fraction_within_tolerance,
        ("outside tolerance at nominal " + ", ".join(f"{b.nominal:g}" for b in bad)) if bad else
        ("" if frac is not None else "not applicable: no calibrator with a non-zero nominal value")))
    if crit.r_squared_min is not None:
        r2 = cal.fit.r_squared
        out.append(Criterion("r-squared", f"coefficient of determination R² at least {crit.r_squared_min:g}",
                             r2, crit.r_squared_min, r2 >= crit.r_squared_min))
    return tuple(out)


def overall_verdict(criteria) -> str:
    """"fail" if any criterion is not met, else "pass"."""
    return "fail" if any(c.passed is False for c in criteria) else "pass"


def recovery_criteria(recovery) -> tuple:
    """One criterion per spiking level: mean recovery inside its range."""
    return tuple(Criterion(
        f"recovery-{lv.added:g}",
        f"mean recovery at added {lv.added:g} within {lv.range_pct[0]:g} to {lv.range_pct[1]:g} %",
        lv.mean_pct, list(lv.range_pct), lv.passed) for lv in recovery.levels)


def precision_criteria(levels, limits_for) -> tuple:
    """Repeatability and intermediate RSD against their maxima, per level (where set)."""
    out = []
    for lv in levels:
        r_max, i_max = limits_for(lv.level)
        for kind, label, value, limit in (
                ("repeatability", "repeatability RSD", lv.repeatability_rsd_pct, r_max),
                ("intermediate", "intermediate precision RSD", lv.intermediate_rsd_pct, i_max)):
            if limit is None:
                continue
            out.append(Criterion(f"{kind}-rsd-{lv.level:g}", f"{label} at level {lv.level:g} at most {limit:g} %",
                                 value, limit, None if value is None else value <= limit,
                                 "" if value is not None else f"not applicable: {lv.reason or 'the mean is zero'}"))
    return tuple(out)


def reference_material_criterion(rm) -> Criterion:
    return Criterion("reference-material-bias",
                     f"|bias| against the certified value at most k·sqrt(u_mean² + u_CRM²), k = {rm.coverage_factor:g}",
                     abs(rm.bias), rm.expanded_uncertainty,
                     None if rm.significant is None else not rm.significant,
                     "" if rm.significant is not None else "not applicable: needs at least 2 results")


def loq_criterion(check) -> Criterion:
    worst = max((r[2] for r in check.levels if r[2] is not None), default=None)
    return Criterion("loq-verification",
                     f"RSD at every precision/recovery level up to 2 × LOQ at most {check.rsd_max_pct:g} %",
                     worst, check.rsd_max_pct, check.passed,
                     "" if check.passed is not None else f"not applicable: {check.reason}")
