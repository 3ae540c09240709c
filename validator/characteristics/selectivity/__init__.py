"""Selectivity (ICH M10): the ``[selectivity]`` section."""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import Selectivity, assess_selectivity, selectivity_criteria
from .settings import SelectivityData, SelectivitySection

__all__ = ["ENTRY", "Selectivity"]


def assess(ctx) -> Assessment[Selectivity] | None:
    """The analyte's selectivity and its criterion; ``None`` when it has no selectivity injections."""
    data: SelectivityData | None = ctx.data_of(ENTRY)
    s: SelectivitySection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    result = assess_selectivity(data, analyte_limit_pct=s.analyte_limit_pct,
                                internal_standard_limit_pct=s.internal_standard_limit_pct, min_lots=s.min_lots,
                                min_fraction=s.min_fraction)
    return Assessment(result, selectivity_criteria(result, analyte_limit_pct=s.analyte_limit_pct,
                                                   internal_standard_limit_pct=s.internal_standard_limit_pct,
                                                   with_internal_standard=data.blank_internal_standard is not None))


ENTRY: Characteristic[Selectivity] = Characteristic(
    "selectivity", "Selectivity", assess, settings=settings.SelectivitySection, load=settings.load, result_types=(Selectivity,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/selectivity.html.j2")
