"""Method detection limit (40 CFR Part 136 Appendix B, Revision 2): the ``[method_detection_limit]`` section."""

from __future__ import annotations

# the study schema before the settings that extend it (it imports them in turn)
from ...inputs import study as _study  # noqa: F401
from .analysis import MethodDetectionLimit, mdl, mdl_criteria
from .settings import MethodDetectionLimitData, MethodDetectionLimitSection, load

__all__ = ["NAME", "TITLE", "SETTINGS", "RESULT_TYPES", "FRAGMENT", "PRESENTATION", "load", "assess"]

NAME = "method_detection_limit"
TITLE = "Method detection limit (40 CFR 136 Appendix B)"
SETTINGS = MethodDetectionLimitSection
RESULT_TYPES = (MethodDetectionLimit,)
FRAGMENT = f"characteristics/{NAME}.html.j2"
PRESENTATION = f"{__name__}.presentation"      # sentences and figures (imported by the report only)


def assess(ctx):
    """The analyte's MDL and its criterion; ``None`` when it has no spiked results."""
    from ...engine import Assessment

    data: MethodDetectionLimitData | None = ctx.data.characteristic_data.get(NAME)
    s: MethodDetectionLimitSection | None = getattr(ctx.config, NAME)
    if data is None or s is None:
        return None
    result = mdl(data, confidence=s.confidence)
    return Assessment(result, mdl_criteria(result, s.mdl_max))
