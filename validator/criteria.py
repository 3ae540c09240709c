"""Acceptance criteria: results judged against limits declared in the study file.

A criterion is judged ``True`` (met), ``False`` (not met) or ``None`` (not
applicable to these data, with the reason in ``note``). Not-applicable
criteria never fail a study, but they are listed so a reviewer sees them.

The limits are the study's own; validator's defaults are examples taken
from common practice, not regulatory limits.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["Criterion", "calibration_criteria", "overall_verdict"]


@dataclass(frozen=True)
class Criterion:
    id: str
    description: str
    value: float | None
    limit: float | None
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
