"""Registry entries of the characteristics not yet moved into packages of their own.

Each is one ``assess(ctx)`` step; its study-file table is still declared in
``validator/inputs/study.py``, its data still read by ``validator/inputs/loading.py`` and its
results.json section still written by ``validator/results.py``. Moving one out means a
package as ``validator/characteristics/recovery/`` (see DEVELOPERS.md, "Adding a
characteristic") and deleting its step here.
"""

from __future__ import annotations

import numpy as np

from ..criteria import (Criterion, at_most, calibration_criteria, comparison_criteria, interval_within, loq_criterion,
                        precision_level_criteria, working_range_criterion)
from . import recovery
from ._entry import Assessment, Characteristic
from .calibration import analyse_calibration, quantify
from .comparison import assess_comparison
from .detection import assess_detection
from .precision import PrecisionLevel, assess_precision_level
from .revalidation import RunSummary, assess_revalidation, run_summary
from .working_range import verify_loq, working_range

__all__ = ["CALIBRATION", "SAMPLES", "DETECTION", "PRECISION", "LOQ_CHECK", "WORKING_RANGE", "COMPARISON",
           "REVALIDATION"]


def _calibration(ctx) -> Assessment:
    cal_cfg, crit = ctx.config.calibration, ctx.config.criteria
    d = ctx.data.calibration
    cal = analyse_calibration(d.concentration, d.response, model=cal_cfg.model, weighting=cal_cfg.weighting,
                              through_origin=cal_cfg.through_origin, alpha=ctx.alpha,
                              tolerance_pct=crit.back_calculation_tolerance_pct,
                              lowest_tolerance_pct=crit.lowest_level_tolerance_pct)
    return Assessment(cal, calibration_criteria(cal, crit))


def _samples(ctx) -> Assessment:
    # a sample from [[runs]] goes through its run's calibration (SampleData.calibration)
    return Assessment(tuple(quantify(s.calibration or ctx.calibration.fit, s.id, s.responses)
                            for s in ctx.data.samples))


def _detection(ctx) -> Assessment:
    det = ctx.config.detection
    return Assessment(assess_detection(ctx.calibration, ctx.data.blanks, lod_factor=det.lod_factor,
                                       loq_factor=det.loq_factor, readings_per_sample=det.readings_per_sample,
                                       beta=det.beta, alpha=ctx.alpha, reporting_method=det.reporting_basis))


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


def _recovery_levels(ctx) -> tuple:
    found = ctx.result_of(recovery.ENTRY)
    return found.levels if found is not None else ()


def _loq_check(ctx) -> Assessment:
    check = verify_loq(ctx.detection.reported.loq, ctx.precision, _recovery_levels(ctx),
                       ctx.config.detection.loq_rsd_max_pct)
    return Assessment(check, (loq_criterion(check),) if check.levels else ())


def _working_range(ctx) -> Assessment:
    """The range narrowed by every recovery or precision level that fails its own criteria."""
    reported = ctx.detection.reported
    levels = _recovery_levels(ctx)
    assessed = [lv.added for lv in levels] + [lv.level for lv in ctx.precision]
    failing = ([(lv.added, "recovery") for lv in levels if not lv.passed]
               + [(lv.level, "precision") for lv in ctx.precision
                  if any(c.passed is False for c in _precision_criteria(ctx, lv))])
    wr = working_range(ctx.calibration.back_calculated, reported.loq, reported.method, failing, assessed, ctx.unit)
    return Assessment(wr, (working_range_criterion(wr, "" if reported.loq is not None else
                                                   (reported.reason or "it does not exist for these data")),))


def _comparison(ctx) -> Assessment | None:
    cd = ctx.data.comparison
    if cd is None:
        return None
    cc = ctx.config.comparison
    comparison = assess_comparison(cd.samples, cd.reference, cd.test, error_ratio=cc.error_ratio,
                                   slope_limits=cc.slope_limits, intercept_limits=cc.intercept_limits,
                                   percentage=cc.percentage_differences, alpha=ctx.alpha)
    return Assessment(comparison, comparison_criteria(comparison, cc.slope_limits, cc.intercept_limits))


def _revalidation(ctx) -> Assessment | None:
    rc = ctx.config.revalidation
    if ctx.data.previous is not None:
        reval = assess_revalidation(RunSummary.from_results(ctx.data.previous),
                                    run_summary(ctx.calibration, ctx.detection, ctx.result_of(recovery.ENTRY),
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


CALIBRATION = Characteristic("calibration", "Calibration", _calibration, required=True)
SAMPLES = Characteristic("samples", "Quantified samples", _samples)
DETECTION = Characteristic("detection", "Detection capability", _detection,
                           fragment="characteristics/detection.html.j2")
PRECISION = Characteristic("precision", "Precision", _precision, fragment="characteristics/precision.html.j2")
LOQ_CHECK = Characteristic("loq_check", "LOQ verification", _loq_check)
WORKING_RANGE = Characteristic("working_range", "Working range", _working_range,
                               fragment="characteristics/working_range.html.j2")
COMPARISON = Characteristic("comparison", "Method comparison", _comparison)
REVALIDATION = Characteristic("revalidation", "Re-validation", _revalidation)
