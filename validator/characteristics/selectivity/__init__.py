"""Selectivity (ICH M10): the ``[selectivity]`` section."""

from __future__ import annotations

# the study schema before the settings that extend it (it imports them in turn)
from ...inputs import study as _study  # noqa: F401
from .analysis import Selectivity, assess_selectivity, selectivity_criteria
from .settings import SelectivityData, SelectivitySection, load

__all__ = ["NAME", "TITLE", "SETTINGS", "RESULT_TYPES", "FRAGMENT", "PRESENTATION", "load", "assess"]

NAME = "selectivity"
TITLE = "Selectivity"
SETTINGS = SelectivitySection
RESULT_TYPES = (Selectivity,)
FRAGMENT = f"characteristics/{NAME}.html.j2"
PRESENTATION = f"{__name__}.presentation"      # sentences and figures (imported by the report only)


def assess(ctx):
    """The analyte's selectivity and its criterion; ``None`` when it has no selectivity injections."""
    from ...engine import Assessment

    data: SelectivityData | None = ctx.data.characteristic_data.get(NAME)
    s: SelectivitySection | None = getattr(ctx.config, NAME)
    if data is None or s is None:
        return None
    result = assess_selectivity(data, analyte_limit_pct=s.analyte_limit_pct,
                                internal_standard_limit_pct=s.internal_standard_limit_pct, min_lots=s.min_lots,
                                min_fraction=s.min_fraction)
    return Assessment(result, selectivity_criteria(result, analyte_limit_pct=s.analyte_limit_pct,
                                                   internal_standard_limit_pct=s.internal_standard_limit_pct,
                                                   with_internal_standard=data.blank_internal_standard is not None))
