"""Method detection limit (40 CFR Part 136 Appendix B, Revision 2): the ``[method_detection_limit]`` section."""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import MethodDetectionLimit, mdl, mdl_criteria
from .settings import MethodDetectionLimitData, MethodDetectionLimitSection

__all__ = ["ENTRY", "MethodDetectionLimit"]


def assess(ctx) -> Assessment[MethodDetectionLimit] | None:
    """The analyte's MDL and its criterion; ``None`` when it has no spiked results."""
    data: MethodDetectionLimitData | None = ctx.data_of(ENTRY)
    s: MethodDetectionLimitSection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    result = mdl(data, confidence=s.confidence)
    return Assessment(result, mdl_criteria(result, s.mdl_max))


ENTRY: Characteristic[MethodDetectionLimit] = Characteristic(
    "method_detection_limit", "Method detection limit (40 CFR 136 Appendix B)", assess, settings=settings.MethodDetectionLimitSection, load=settings.load, result_types=(MethodDetectionLimit,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/method_detection_limit.html.j2")
