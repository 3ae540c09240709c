"""Stability (ICH M10): the ``[stability]`` section."""

from __future__ import annotations

# the study schema before the settings that extend it (it imports them in turn)
from ...inputs import study as _study  # noqa: F401
from .analysis import StabilityResult, assess_stability, stability_criteria
from .settings import StabilityData, StabilitySection, load

__all__ = ["NAME", "TITLE", "SETTINGS", "RESULT_TYPES", "FRAGMENT", "PRESENTATION", "load", "assess"]

NAME = "stability"
TITLE = "Stability"
SETTINGS = StabilitySection
RESULT_TYPES = (StabilityResult,)
FRAGMENT = f"characteristics/{NAME}.html.j2"
PRESENTATION = f"{__name__}.presentation"      # sentences and figures (imported by the report only)


def assess(ctx):
    """The analyte's stability conditions and their criteria; ``None`` when it has no stability results."""
    from ...engine import Assessment

    data: StabilityData | None = ctx.data.characteristic_data.get(NAME)
    s: StabilitySection | None = getattr(ctx.config, NAME)
    if data is None or s is None:
        return None
    result = assess_stability(data, reference=s.reference, limit_pct=s.limit_pct, judged_on=s.judged_on,
                              min_replicates=s.min_replicates, level=1 - ctx.alpha)
    return Assessment(result, stability_criteria(result))
