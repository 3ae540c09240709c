"""Incurred-sample reanalysis (ICH M10): the ``[reanalysis]`` section."""

from __future__ import annotations

# the study schema before the settings that extend it (it imports them in turn)
from ...inputs import study as _study  # noqa: F401
from .analysis import IncurredSampleReanalysis, reanalysis, reanalysis_criteria
from .settings import ReanalysisData, ReanalysisSection, load

__all__ = ["NAME", "TITLE", "SETTINGS", "RESULT_TYPES", "FRAGMENT", "PRESENTATION", "load", "assess"]

NAME = "reanalysis"
TITLE = "Incurred-sample reanalysis"
SETTINGS = ReanalysisSection
RESULT_TYPES = (IncurredSampleReanalysis,)
FRAGMENT = f"characteristics/{NAME}.html.j2"
PRESENTATION = f"{__name__}.presentation"      # sentences and figures (imported by the report only)


def assess(ctx):
    """The analyte's reanalysis and its criterion; ``None`` when it has no reanalysed samples."""
    from ...engine import Assessment

    data: ReanalysisData | None = ctx.data.characteristic_data.get(NAME)
    s: ReanalysisSection | None = getattr(ctx.config, NAME)
    if data is None or s is None:
        return None
    result = reanalysis(data.samples, data.original, data.repeat, limit_pct=s.limit_pct, min_fraction=s.min_fraction)
    return Assessment(result, reanalysis_criteria(result))
