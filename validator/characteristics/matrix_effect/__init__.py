"""Matrix effect (SANTE/11312/2021 slope ratio; ICH M10 matrix lots and IS-normalised matrix factor):
the ``[matrix_effect]`` section."""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .. import calibration, runs
from ..runs.analysis import matrix_factor_responses, solvent_calibration, study_qc_found
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
    # the parts whose own file is left out, with [[runs]]: the lots are the QC injections with a lot, found
    # through their run's calibration; the matrix factor the areas of the post_extraction and neat injections;
    # the solvent calibration the solvent_calibrator injections
    sequence = ctx.result_of(runs.ENTRY)
    lots = study_qc_found(sequence, "matrix_effect") if sequence is not None and s.lots_data is None else None
    factor = matrix_factor_responses(sequence) if sequence is not None and s.factor_data is None else None
    solvent = solvent_calibration(sequence) if sequence is not None and s.solvent_data is None else None
    if lots is not None:
        data = replace(data or MatrixEffectData(), lots=tuple(lots.labels), lot_nominal=lots.nominal,
                       lot_found=lots.found)
    if factor is not None:
        neat = np.arange(factor.analyte.size + factor.neat_analyte.size) >= factor.analyte.size
        data = replace(data or MatrixEffectData(), factor_lots=factor.lots + ("",) * factor.neat_analyte.size,
                       factor_analyte=np.concatenate([factor.analyte, factor.neat_analyte]),
                       factor_internal_standard=np.concatenate([factor.internal_standard,
                                                                factor.neat_internal_standard]),
                       factor_neat=neat)
    if solvent is not None:
        data = replace(data or MatrixEffectData(), solvent_concentration=solvent.concentration,
                       solvent_response=solvent.response)
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
    from_runs = {"data_from": lots, "factor_data_from": factor, "slope_ratio_data_from": solvent}
    result = replace(result, **{key: "runs" for key, part in from_runs.items() if part is not None})
    return Assessment(result, matrix_effect_criteria(result, judge_slope_ratio=s.judge_slope_ratio, limit_pct=s.limit_pct))


ENTRY: Characteristic[MatrixEffect] = Characteristic(
    "matrix_effect", "Matrix effect", assess, settings=settings.MatrixEffectSection, load=settings.load, result_types=(MatrixEffect,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/matrix_effect.html.j2")
