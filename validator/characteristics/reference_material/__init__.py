"""Bias against a certified reference material (trueness), judged with both uncertainties.

The package is one validation characteristic: its study-file table and loader
(:mod:`.settings`), its pure analysis and criterion (:mod:`.analysis`), its sentence
(:mod:`.presentation`) and its dossier fragment
``report_templates/characteristics/reference_material.html.j2``, assembled in :data:`ENTRY`.
"""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import ReferenceMaterialResult, assess_reference_material, reference_material_criterion

__all__ = ["ENTRY", "ReferenceMaterialResult", "assess_reference_material", "reference_material_criterion"]


def assess(ctx) -> Assessment[ReferenceMaterialResult] | None:
    found = ctx.data_of(ENTRY)
    if found is None:
        return None
    rmc = ctx.settings_of(ENTRY)
    result = assess_reference_material(found, rmc.certified_value, rmc.standard_uncertainty, k=rmc.coverage_factor,
                                       measurement_uncertainty=rmc.measurement_standard_uncertainty)
    return Assessment(result, (reference_material_criterion(result),))


ENTRY: Characteristic[ReferenceMaterialResult] = Characteristic(
    "reference_material", "Certified reference material", assess, settings=settings.ReferenceMaterialSection,
    load=settings.load, result_types=(ReferenceMaterialResult,), sentences=presentation.sentences,
    fragment="characteristics/reference_material.html.j2")
