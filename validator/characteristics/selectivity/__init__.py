"""Selectivity (ICH M10): the ``[selectivity]`` section."""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from ..runs.analysis import RunsResult
from .analysis import Selectivity, SelectivityInjection, assess_selectivity, selectivity_criteria, selectivity_from_runs
from .settings import SelectivityData, SelectivitySection

__all__ = ["ENTRY", "Selectivity"]


def assess(ctx) -> Assessment[Selectivity] | None:
    """The analyte's selectivity and its criterion; ``None`` when it has no selectivity injections."""
    data: SelectivityData | None = ctx.data_of(ENTRY)
    s: SelectivitySection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    limits = dict(analyte_limit_pct=s.analyte_limit_pct, internal_standard_limit_pct=s.internal_standard_limit_pct)
    if isinstance(data, RunsResult):      # no file of its own: the matrix blanks of the runs (characteristics.runs)
        result = selectivity_from_runs(data.calibrators + data.injections, **limits, min_lots=s.min_lots,
                                       min_fraction=s.min_fraction)
        if result is None:
            return None
        with_is = result.lots[0].internal_standard_percent is not None
    else:
        result = assess_selectivity(data, **limits, min_lots=s.min_lots, min_fraction=s.min_fraction)
        with_is = data.blank_internal_standard is not None
    return Assessment(result, selectivity_criteria(result, **limits, with_internal_standard=with_is))


ENTRY: Characteristic[Selectivity] = Characteristic(
    "selectivity", "Selectivity", assess, settings=settings.SelectivitySection, load=settings.load, result_types=(Selectivity, SelectivityInjection),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/selectivity.html.j2")
