"""Carry-over (ICH M10): the ``[carry_over]`` section; its data file, or the sequences of [[runs]]."""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from ..runs.analysis import RunsResult
from .analysis import CarryOver, CarryOverBlank, assess_carry_over, carry_over_criteria, carry_over_from_runs
from .settings import CarryOverData, CarryOverSection

__all__ = ["ENTRY", "CarryOver"]


def assess(ctx) -> Assessment[CarryOver] | None:
    """The analyte's carry-over and its criteria; ``None`` when it has no carry-over injections."""
    data: CarryOverData | None = ctx.data_of(ENTRY)
    s: CarryOverSection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    if isinstance(data, RunsResult):      # no file of its own: the run sequences (characteristics.runs)
        result = carry_over_from_runs(data.calibrators + data.injections, analyte_limit_pct=s.analyte_limit_pct,
                                      internal_standard_limit_pct=s.internal_standard_limit_pct)
    else:
        result = assess_carry_over(data, analyte_limit_pct=s.analyte_limit_pct,
                                   internal_standard_limit_pct=s.internal_standard_limit_pct)
    return Assessment(result, carry_over_criteria(result))


ENTRY: Characteristic[CarryOver] = Characteristic(
    "carry_over", "Carry-over", assess, settings=settings.CarryOverSection, load=settings.load, result_types=(CarryOver, CarryOverBlank),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/carry_over.html.j2")
