"""Detection capability: LOD and LOQ on each basis (ICH residual SD, intercept SD, blank SD) and
ISO 11843-2's critical and minimum detectable values.

Two registry entries: :data:`BLANKS` reads the ``[blanks]`` table's data file (the blank
readings; it assesses nothing itself) and :data:`ENTRY` assesses detection from the calibration
and the blanks with the ``[detection]`` table. Parts: :mod:`.settings` (tables, loader),
:mod:`.analysis` (pure), :mod:`.presentation` (sentences), fragment
``report_templates/characteristics/detection.html.j2``.
"""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from .. import calibration
from . import presentation, settings
from .analysis import METHODS, DetectionEstimate, DetectionResult, assess_detection, noncentrality_delta

__all__ = ["ENTRY", "BLANKS", "METHODS", "DetectionEstimate", "DetectionResult", "assess_detection",
           "noncentrality_delta"]


def _no_assessment(ctx) -> None:
    return None


BLANKS: Characteristic[None] = Characteristic(
    "blanks", "Blank readings", _no_assessment, settings=settings.BlanksSection, load=settings.load_blanks,
    judges=False)


def assess(ctx) -> Assessment[DetectionResult]:
    det = ctx.settings_of(ENTRY)
    return Assessment(assess_detection(ctx.result_of(calibration.ENTRY), ctx.data_of(BLANKS), lod_factor=det.lod_factor,
                                       loq_factor=det.loq_factor, readings_per_sample=det.readings_per_sample,
                                       beta=det.beta, alpha=ctx.alpha, reporting_method=det.reporting_basis))


ENTRY: Characteristic[DetectionResult] = Characteristic(
    "detection", "Limits of detection and quantitation", assess, settings=settings.DetectionSection,
    result_types=(DetectionResult,), sentences=presentation.sentences,
    fragment="characteristics/detection.html.j2")
