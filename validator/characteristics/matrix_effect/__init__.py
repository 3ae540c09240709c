"""Matrix effect (SANTE/11312/2021 slope ratio; ICH M10 matrix lots and IS-normalised matrix factor):
the ``[matrix_effect]`` section."""

from __future__ import annotations

from dataclasses import replace

from .. import calibration, runs
from ..runs.analysis import study_qc_found
from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import MatrixEffect, matrix_effect, matrix_effect_criteria
from .settings import MatrixEffectData, MatrixEffectSection

__all__ = ["ENTRY", "MatrixEffect"]


def assess(ctx) -> Assessment[MatrixEffect] | None:
    """The analyte's matrix effect and its criteria; ``None`` when it has no matrix-effect data.
    The matrix-matched calibration is the analyte's ``[calibration]`` data, and both lines are fitted
    with the weighting of its fit."""
    data: MatrixEffectData | None = ctx.data_of(ENTRY)
    s: MatrixEffectSection | None = ctx.settings_of(ENTRY)
    if s is None:
        return None
    # no lots_data with [[runs]]: the lots are the QC injections with a lot, found through their run's calibration
    lots = ctx.result_of(runs.ENTRY) if s.lots_data is None else None
    lots = None if lots is None else study_qc_found(lots, "matrix lots")
    if lots is not None:
        data = replace(data or MatrixEffectData(), lots=tuple(lots.labels), lot_nominal=lots.nominal,
                       lot_found=lots.found)
    if data is None:
        return None
    cal = ctx.data.calibration
    fitted = ctx.result_of(calibration.ENTRY)
    # both lines take the weighting of the calibration fit (the declared one, or the one "auto" chose)
    weighting = fitted.fit.weighting if fitted is not None else "none"
    result = matrix_effect(data, cal.concentration, cal.response, level=1 - ctx.alpha, variance=s.variance,
                           weighting=weighting,
                           limit_pct=s.limit_pct, lot_max_bias_pct=s.lot_max_bias_pct, lot_max_cv_pct=s.lot_max_cv_pct,
                           min_lots=s.min_lots, min_replicates=s.min_replicates, factor_max_cv_pct=s.factor_max_cv_pct,
                           judge_slope_ratio=s.judge_slope_ratio)
    if lots is not None:
        result = replace(result, data_from="runs")
    return Assessment(result, matrix_effect_criteria(result, judge_slope_ratio=s.judge_slope_ratio, limit_pct=s.limit_pct))


ENTRY: Characteristic[MatrixEffect] = Characteristic(
    "matrix_effect", "Matrix effect", assess, settings=settings.MatrixEffectSection, load=settings.load, result_types=(MatrixEffect,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/matrix_effect.html.j2")
