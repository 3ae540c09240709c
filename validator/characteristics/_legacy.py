"""Registry entries of the characteristics not yet moved into packages of their own.

Each is one ``assess(ctx)`` step; its study-file table is still declared in
``validator/inputs/study.py``, its data still read by ``validator/inputs/loading.py`` and its
results.json section still written by ``validator/results.py``. Moving one out means a
package as ``validator/characteristics/recovery/`` (see DEVELOPERS.md, "Adding a
characteristic") and deleting its step here.
"""

from __future__ import annotations

import numpy as np

from ..criteria import Criterion, at_most, interval_within, precision_level_criteria
from . import calibration, detection, recovery
from ._entry import Assessment, Characteristic
from .precision import PrecisionLevel, assess_precision_level
from .revalidation import RunSummary, assess_revalidation, run_summary

__all__ = ["PRECISION", "REVALIDATION", "precision_level_failed"]


def _precision(ctx) -> Assessment | None:
    p = ctx.data.precision
    if p is None:
        return None
    levels = tuple(assess_precision_level(level, p.found[p.level == level],
                                          [s for s, lv in zip(p.series, p.level) if lv == level],
                                          alpha=ctx.alpha, unit=ctx.unit, offset=p.offset)
                   for level in np.unique(p.level))
    return Assessment(levels, tuple(c for lv in levels for c in _precision_criteria(ctx, lv)))


def _precision_criteria(ctx, lv: PrecisionLevel) -> tuple:
    return precision_level_criteria(lv, ctx.config.precision.limits_for(lv.level))


def precision_level_failed(ctx, lv: PrecisionLevel) -> bool:
    """Whether a precision level fails one of its own criteria (for the working range)."""
    return any(c.passed is False for c in _precision_criteria(ctx, lv))


def _revalidation(ctx) -> Assessment | None:
    rc = ctx.config.revalidation
    if ctx.data.previous is not None:
        reval = assess_revalidation(RunSummary.from_results(ctx.data.previous),
                                    run_summary(ctx.result_of(calibration.ENTRY), ctx.result_of(detection.ENTRY), ctx.result_of(recovery.ENTRY),
                                                ctx.precision),
                                    slope_change_max_pct=rc.slope_change_max_pct,
                                    residual_sd_ratio_max=rc.residual_sd_ratio_max, alpha=ctx.alpha)
        return Assessment(reval, tuple(_revalidation_criteria(reval, rc)))
    if rc is not None:       # a re-validation in which this analyte has no counterpart
        margin = rc.slope_change_max_pct
        return Assessment(None, (Criterion(
            "slope-equivalence", f"slope change inside ±{margin:g} % of the previous validation", None,
            [-margin, margin], None, "not applicable: the previous results have no analyte matching this one "
            "(map renamed analytes with [revalidation] analytes = {new = \"old\"}), so nothing was compared"),))
    return None


def _revalidation_criteria(reval, rc) -> list:
    """Slope (sensitivity) equivalence and residual SD ratio; "not applicable" when no value exists."""
    sl = reval.slope
    what = sl.quantity if sl.sensitivity_range is None else \
        f"{sl.quantity} over {sl.sensitivity_range[0]:g} to {sl.sensitivity_range[1]:g}"
    ci = sl.change_ci_pct
    level = "" if ci is None else f"{ci.label} "
    value = None if ci is None else [ci.low, ci.high]
    margin = [-rc.slope_change_max_pct, rc.slope_change_max_pct]
    slope = Criterion("slope-equivalence",
                      f"{level}CI of the {what} change inside ±{rc.slope_change_max_pct:g} % of the previous "
                      "validation", value, margin, interval_within(value, margin),
                      f"not applicable: {sl.reason}" if ci is None else sl.verdict)
    ratio = reval.residual_sd_ratio
    sd = Criterion("residual-sd-ratio", f"s(y/x) ratio current/previous at most {rc.residual_sd_ratio_max:g}",
                   ratio, rc.residual_sd_ratio_max, at_most(ratio, rc.residual_sd_ratio_max),
                   "not applicable: the previous residual SD is zero, so no ratio exists" if ratio is None else "")
    return [slope, sd]


PRECISION = Characteristic("precision", "Precision", _precision, fragment="characteristics/precision.html.j2")
REVALIDATION = Characteristic("revalidation", "Re-validation", _revalidation)
