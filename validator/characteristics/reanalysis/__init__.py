"""Incurred-sample reanalysis (ICH M10): the ``[reanalysis]`` section."""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import IncurredSampleReanalysis, reanalysis, reanalysis_criteria
from .settings import ReanalysisData, ReanalysisSection

__all__ = ["ENTRY", "IncurredSampleReanalysis"]


def assess(ctx) -> Assessment[IncurredSampleReanalysis] | None:
    """The analyte's reanalysis and its criterion; ``None`` when it has no reanalysed samples."""
    data: ReanalysisData | None = ctx.data_of(ENTRY)
    s: ReanalysisSection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    result = reanalysis(data.samples, data.original, data.repeat, limit_pct=s.limit_pct, min_fraction=s.min_fraction,
                        study_samples=s.study_samples, size_rule=s.size_rule)
    return Assessment(result, reanalysis_criteria(result))


ENTRY: Characteristic[IncurredSampleReanalysis] = Characteristic(
    "reanalysis", "Incurred-sample reanalysis", assess, settings=settings.ReanalysisSection, load=settings.load, result_types=(IncurredSampleReanalysis,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/reanalysis.html.j2")
