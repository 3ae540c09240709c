"""Calibration: the fitted calibration function, its diagnostics, back-calculation and the
automatic choice of model and weighting; also the inverse prediction used by the samples.

The first registry entry: its data file names the analytes. Parts: :mod:`.settings` (table,
loader), :mod:`.analysis` (pure, criteria), :mod:`.presentation` (sentences); its dossier
section is ``report_templates/characteristics/calibration.html.j2`` (a section of its own for
each analyte). Its figures are still drawn in ``report/plots.py`` from the engine's plot series;
results.json writes its :class:`~.analysis.CalibrationRecord`.
"""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import (BackCalculated, CalibrationRecord, CalibrationResult, ChoiceStep, OutlierFlag, SampleResult,
                       WeightingCandidate, analyse_calibration, back_calculate, calibration_criteria,
                       calibration_record, choose_weighting, lack_of_fit, mandel_test, quantify)

__all__ = ["ENTRY", "CalibrationResult", "BackCalculated", "OutlierFlag", "WeightingCandidate", "ChoiceStep",
           "SampleResult", "analyse_calibration", "quantify", "lack_of_fit", "mandel_test", "choose_weighting",
           "back_calculate", "calibration_criteria", "CalibrationRecord", "calibration_record"]


def assess(ctx) -> Assessment[CalibrationResult]:
    cfg, crit = ctx.settings_of(ENTRY), ctx.config.criteria
    d = ctx.data_of(ENTRY)
    cal = analyse_calibration(d.concentration, d.response, model=cfg.model, weighting=cfg.weighting,
                              through_origin=cfg.through_origin, alpha=ctx.alpha,
                              tolerance_pct=crit.back_calculation_tolerance_pct,
                              lowest_tolerance_pct=crit.lowest_level_tolerance_pct)
    return Assessment(cal, calibration_criteria(cal, crit))


ENTRY: Characteristic[CalibrationResult] = Characteristic(
    "calibration", "Calibration", assess, settings=settings.CalibrationSection, required=True, load=settings.load,
    result_types=(CalibrationRecord,), record=calibration_record, sentences=presentation.sentences,
    fragment="characteristics/calibration.html.j2", placement="analyte")
