"""Limit of blank, limit of detection, limit of quantitation (CLSI EP17-A2): the ``[limit_of_blank]`` section."""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import DetectionCapability, detection_capability, detection_capability_criteria
from .settings import LimitOfBlankData, LimitOfBlankSection

__all__ = ["ENTRY", "DetectionCapability"]


def assess(ctx) -> Assessment[DetectionCapability] | None:
    """The analyte's LoB/LoD/LoQ and their criteria; ``None`` when it has no blank results."""
    data: LimitOfBlankData | None = ctx.data_of(ENTRY)
    s: LimitOfBlankSection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    result = detection_capability(data.blanks, data.blank_samples, data.blank_lots, data.low, data.low_samples,
                                  data.low_lots, data.low_nominal, method=s.method, purpose=s.purpose,
                                  percentile=s.percentile, loq_max_cv_pct=s.loq_max_cv_pct,
                                  loq_max_total_error=s.loq_max_total_error)
    return Assessment(result, detection_capability_criteria(result, lob_max=s.lob_max, lod_max=s.lod_max,
                                                            loq_max=s.loq_max))


ENTRY: Characteristic[DetectionCapability] = Characteristic(
    "limit_of_blank", "Limit of blank, detection and quantitation (CLSI EP17-A2)", assess, settings=settings.LimitOfBlankSection, load=settings.load, result_types=(DetectionCapability,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/limit_of_blank.html.j2")
