"""Carry-over (ICH M10): the ``[carry_over]`` section."""

from __future__ import annotations

# the study schema before the settings that extend it (it imports them in turn)
from ...inputs import study as _study  # noqa: F401
from .analysis import CarryOver, assess_carry_over, carry_over_criteria
from .settings import CarryOverData, CarryOverSection, load

__all__ = ["NAME", "TITLE", "SETTINGS", "RESULT_TYPES", "FRAGMENT", "PRESENTATION", "load", "assess"]

NAME = "carry_over"
TITLE = "Carry-over"
SETTINGS = CarryOverSection
RESULT_TYPES = (CarryOver,)
FRAGMENT = f"characteristics/{NAME}.html.j2"
PRESENTATION = f"{__name__}.presentation"      # sentences and figures (imported by the report only)


def assess(ctx):
    """The analyte's carry-over and its criteria; ``None`` when it has no carry-over injections."""
    from ...engine import Assessment

    data: CarryOverData | None = ctx.data.characteristic_data.get(NAME)
    s: CarryOverSection | None = getattr(ctx.config, NAME)
    if data is None or s is None:
        return None
    result = assess_carry_over(data, analyte_limit_pct=s.analyte_limit_pct,
                               internal_standard_limit_pct=s.internal_standard_limit_pct)
    return Assessment(result, carry_over_criteria(result))
