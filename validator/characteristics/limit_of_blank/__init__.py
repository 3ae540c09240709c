"""Limit of blank, limit of detection, limit of quantitation (CLSI EP17-A2): the ``[limit_of_blank]`` section."""

from __future__ import annotations

# the study schema before the settings that extend it (it imports them in turn)
from ...inputs import study as _study  # noqa: F401
from .analysis import DetectionCapability, detection_capability, detection_capability_criteria
from .settings import LimitOfBlankData, LimitOfBlankSection, load

__all__ = ["NAME", "TITLE", "SETTINGS", "RESULT_TYPES", "FRAGMENT", "load", "assess"]

NAME = "limit_of_blank"
TITLE = "Limit of blank, detection and quantitation (CLSI EP17-A2)"
SETTINGS = LimitOfBlankSection
RESULT_TYPES = (DetectionCapability,)
FRAGMENT = f"characteristics/{NAME}.html.j2"
PRESENTATION = f"{__name__}.presentation"      # sentences and figures (imported by the report only)


def assess(ctx):
    """The analyte's LoB/LoD/LoQ and their criteria; ``None`` when it has no blank results."""
    from ...engine import Assessment

    data: LimitOfBlankData | None = ctx.data.characteristic_data.get(NAME)
    s: LimitOfBlankSection | None = getattr(ctx.config, NAME)
    if data is None or s is None:
        return None
    result = detection_capability(data.blanks, data.blank_samples, data.blank_lots, data.low, data.low_samples,
                                  data.low_lots, data.low_nominal, method=s.method, purpose=s.purpose,
                                  percentile=s.percentile, loq_max_cv_pct=s.loq_max_cv_pct,
                                  loq_max_total_error=s.loq_max_total_error)
    return Assessment(result, detection_capability_criteria(result, lob_max=s.lob_max, lod_max=s.lod_max,
                                                            loq_max=s.loq_max))
