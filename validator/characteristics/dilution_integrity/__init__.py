"""Dilution integrity (ICH M10): the ``[dilution_integrity]`` section."""

from __future__ import annotations

# the study schema before the settings that extend it (it imports them in turn)
from ...inputs import study as _study  # noqa: F401
from .analysis import DilutionResult, assess_dilution, dilution_criteria
from .settings import DilutionData, DilutionIntegritySection, load

__all__ = ["NAME", "TITLE", "SETTINGS", "RESULT_TYPES", "FRAGMENT", "PRESENTATION", "load", "assess"]

NAME = "dilution_integrity"
TITLE = "Dilution integrity"
SETTINGS = DilutionIntegritySection
RESULT_TYPES = (DilutionResult,)
FRAGMENT = f"characteristics/{NAME}.html.j2"
PRESENTATION = f"{__name__}.presentation"      # sentences and figures (imported by the report only)


def assess(ctx):
    """The analyte's diluted QCs and their criteria; ``None`` when it has none."""
    from ...engine import Assessment

    data: DilutionData | None = ctx.data.characteristic_data.get(NAME)
    s: DilutionIntegritySection | None = getattr(ctx.config, NAME)
    if data is None or s is None:
        return None
    result = assess_dilution(data, max_bias_pct=s.max_bias_pct, max_cv_pct=s.max_cv_pct, min_replicates=s.min_replicates)
    return Assessment(result, dilution_criteria(result))
