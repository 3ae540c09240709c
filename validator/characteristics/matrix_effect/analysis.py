"""Matrix effect judged: the SANTE slope ratio with its interval, ICH M10 matrix lots, and the
internal-standard-normalised matrix factor.

Thin wrappers over :mod:`validator.sector.matrix_effect`. The matrix-matched calibration is the
study's ``[calibration]`` data. Both it and the solvent calibration are fitted as straight lines
with the weighting of the ``[calibration]`` fit (the declared one, or the one "auto" chose), so
like is compared with like; the weighting is recorded in results.json.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ...criteria import Criterion, interval_within
from ...maths.regression import WEIGHTED_BY, raw_weights
from ...sector._shared import number_id
from ...sector.matrix_effect import (LotAccuracyAssessment, NormalisedMatrixFactor, SlopeRatioMatrixEffect,
                                     lot_accuracy, normalised_matrix_factor, slope_ratio_matrix_effect)

__all__ = ["MatrixEffect", "matrix_effect", "matrix_effect_criteria"]

@dataclass(frozen=True)
class MatrixEffect:
    """What was assessed; a part not assessed is ``None`` (or an empty tuple of lots) with its reason."""

    slope_ratio: SlopeRatioMatrixEffect | None = field(metadata={"null_reason": "slope_ratio_reason"})
    lots: tuple[LotAccuracyAssessment, ...]
    normalised_factor: NormalisedMatrixFactor | None = field(metadata={"null_reason": "factor_reason"})
    slope_ratio_reason: str = ""
    factor_reason: str = ""
    # whether ME % is a criterion (judge_slope_ratio); when it is not, why it is reported only
    slope_ratio_judged: bool = False
    slope_ratio_note: str = ""
    # where the lots' results came from: "file" (lots_data) or "runs" (the QC injections of [[runs]] with a
    # lot, each found through its run's calibration, as listed in the runs' chain); "file" without lots too
    data_from: str = "file"
    # likewise for the matrix factor ("runs": the areas of the post_extraction and neat injections) and the
    # slope ratio's solvent calibration ("runs": the solvent_calibrator injections); "file" without them too
    factor_data_from: str = "file"
    slope_ratio_data_from: str = "file"


# the slope ratio is reported, not judged, unless judge_slope_ratio = true: why, in results.json and the dossier
NOT_JUDGED = ("ME % is reported, not judged (judge_slope_ratio = false): its limit (SANTE/11312/2021, from memory) "
              "decides whether solvent standards may be used for quantification or matrix-matched calibration is "
              "needed; this study's [calibration] is the matrix-matched one, so a matrix effect beyond the limit "
              "does not by itself make the method unfit. Set judge_slope_ratio = true to make it a criterion "
              "(e.g. when results are to be quantified against solvent standards)")


def _slope_ratio(data, matrix_concentration, matrix_response, *, level: float, variance: str, limit_pct: float,
                 weighting: str) -> SlopeRatioMatrixEffect | str:
    """The slope ratio with both lines weighted by ``weighting``, or why it cannot be weighted."""
    if weighting != "none":
        what = WEIGHTED_BY[weighting]
        values = data.solvent_concentration if what == "concentration" else data.solvent_response
        bad = [float(v) for v in values if not v > 0]
        if bad:
            return (f"the weighting of the calibration, {weighting}, needs every solvent-calibration {what} > 0 "
                    f"(found {bad[0]:g}); both lines are fitted with the same weighting")
    ws = raw_weights(weighting, data.solvent_concentration, data.solvent_response)
    wm = raw_weights(weighting, matrix_concentration, matrix_response)
    return slope_ratio_matrix_effect(data.solvent_concentration, data.solvent_response, matrix_concentration,
                                     matrix_response, level=level, variance=variance, limit_percent=limit_pct,
                                     weighting=weighting, weights_solvent=ws, weights_matrix=wm)


def matrix_effect(data, matrix_concentration, matrix_response, *, level: float, variance: str = "separate",
                  weighting: str = "none", limit_pct: float = 20.0, lot_max_bias_pct: float = 15.0,
                  lot_max_cv_pct: float = 15.0, min_lots: int = 6, min_replicates: int = 3, factor_max_cv_pct: float = 15.0,
                  judge_slope_ratio: bool = False) -> MatrixEffect:
    """Each part for which ``data`` (a ``MatrixEffectData``) holds results.

    Notes
    -----
    Slope ratio: ME % = 100 (b_matrix / b_solvent − 1), both slopes from straight lines weighted by
    ``weighting`` (raw weights, :func:`validator.maths.regression.raw_weights`), Fieller's interval
    at ``level`` with separate (Welch-Satterthwaite, the default) or pooled residual variances
    (:func:`~validator.sector.matrix_effect.slope_ratio_matrix_effect`). Lots: accuracy
    100·mean/nominal and CV per lot at each nominal level
    (:func:`~validator.sector.matrix_effect.lot_accuracy`). Matrix factor: per lot, mean response in
    matrix over mean response in neat solution, analyte over IS; CV across lots
    (:func:`~validator.sector.matrix_effect.normalised_matrix_factor`).
    """
    slope = None
    slope_reason = ""
    if data.solvent_concentration is None:
        slope_reason = "no solvent calibration (solvent_data) was given"
    else:
        slope = _slope_ratio(data, matrix_concentration, matrix_response, level=level, variance=variance,
                             limit_pct=limit_pct, weighting=weighting)
        if isinstance(slope, str):
            slope, slope_reason = None, slope
    lots = ()
    if data.lot_found is not None:
        lots = tuple(lot_accuracy(data.lot_found[data.lot_nominal == nominal],
                                  [lot for lot, nom in zip(data.lots, data.lot_nominal) if nom == nominal],
                                  float(nominal), max_bias_percent=lot_max_bias_pct, max_cv_percent=lot_max_cv_pct,
                                  min_lots=min_lots, min_replicates=min_replicates)
                     for nominal in np.unique(data.lot_nominal))
    factor = None
    factor_reason = ""
    if data.factor_analyte is None:
        factor_reason = "no matrix-factor responses (factor_data) were given"
    else:
        neat = np.asarray(data.factor_neat, bool)
        factor = normalised_matrix_factor(data.factor_analyte[~neat], data.factor_internal_standard[~neat],
                                          [lot for lot, n in zip(data.factor_lots, neat) if not n],
                                          data.factor_analyte[neat], data.factor_internal_standard[neat],
                                          max_cv_percent=factor_max_cv_pct, min_lots=min_lots)
    note = "" if judge_slope_ratio or slope is None else NOT_JUDGED
    return MatrixEffect(slope, lots, factor, slope_reason, factor_reason, bool(judge_slope_ratio), note)


def matrix_effect_criteria(result: MatrixEffect, *, judge_slope_ratio: bool, limit_pct: float) -> tuple[Criterion, ...]:
    """``matrix-effect-slope-ratio`` (only when judged), ``matrix-lots-<nominal>`` per QC level,
    ``matrix-factor-cv``."""
    out = []
    if judge_slope_ratio:
        sr = result.slope_ratio
        value = None if sr is None else sr.statistic
        why = result.slope_ratio_reason or (sr.reason if sr is not None else "")
        if value is not None and sr.interval is None:
            # a ratio whose interval is unbounded (solvent slope not different from zero) is not an estimate
            # to judge: any ME % is compatible with the data
            value, why = None, (f"the slope ratio has no bounded interval ({why or 'no interval'}); "
                                f"its estimate, {sr.statistic:.4g} %, is not judged")
        limit = [-limit_pct, limit_pct]
        out.append(Criterion("matrix-effect-slope-ratio",
                             f"matrix effect ME % = 100 (slope in matrix / slope in solvent − 1) within ±{limit_pct:g} %",
                             value, limit, interval_within([value, value], limit) if value is not None else None,
                             "" if value is not None else f"not applicable: {why or 'it does not exist'}"))
    for lv in result.lots:
        out.append(Criterion(f"matrix-lots-{number_id(lv.nominal)}",
                             f"every matrix lot (at least {lv.min_lots}) at nominal {lv.nominal:g}: accuracy within "
                             f"±{lv.max_bias_percent:g} % and CV at most {lv.max_cv_percent:g} %; value: lots meeting it",
                             lv.n_lots_passed, max(lv.n_lots, lv.min_lots), lv.passed,
                             "" if lv.passed is not None else f"not applicable: {lv.reason}"))
    mf = result.normalised_factor
    if mf is not None:
        out.append(Criterion("matrix-factor-cv",
                             f"CV of the IS-normalised matrix factor across lots at most {mf.max_cv_percent:g} %",
                             mf.cv_percent, mf.max_cv_percent, mf.passed,
                             "" if mf.passed is not None else f"not applicable: {mf.reason}"))
    return tuple(out)
