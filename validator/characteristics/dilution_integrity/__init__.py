"""Dilution integrity (ICH M10): the ``[dilution_integrity]`` section."""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import DilutionResult, assess_dilution, dilution_criteria
from .settings import DilutionData, DilutionIntegritySection

__all__ = ["ENTRY", "DilutionResult"]


def assess(ctx) -> Assessment[DilutionResult] | None:
    """The analyte's diluted QCs and their criteria; ``None`` when it has none."""
    data: DilutionData | None = ctx.data_of(ENTRY)
    s: DilutionIntegritySection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    result = assess_dilution(data, max_bias_pct=s.max_bias_pct, max_cv_pct=s.max_cv_pct, min_replicates=s.min_replicates)
    return Assessment(result, dilution_criteria(result))


ENTRY: Characteristic[DilutionResult] = Characteristic(
    "dilution_integrity", "Dilution integrity", assess, settings=settings.DilutionIntegritySection, load=settings.load, result_types=(DilutionResult,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/dilution_integrity.html.j2")
