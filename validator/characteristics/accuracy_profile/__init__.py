"""Accuracy profile: beta-expectation tolerance intervals per level and the validated range.

The package is one validation characteristic: its study-file table (:mod:`.settings`), its pure
analysis and criteria (:mod:`.analysis`), its sentences and figure (:mod:`.presentation`) and its
dossier fragment ``report_templates/characteristics/accuracy_profile.html.j2``, assembled in
:data:`ENTRY`. It reads the precision data and follows the precision entry in the registry.
"""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from .. import precision
from . import presentation, settings
from .analysis import (AccuracyProfileResult, ContentInterval, ProfileLevelResult, ValidatedRange,
                       accuracy_profile_criteria, assess_accuracy_profile)

__all__ = ["ENTRY", "AccuracyProfileResult", "ProfileLevelResult", "ContentInterval", "ValidatedRange",
           "assess_accuracy_profile", "accuracy_profile_criteria"]


def assess(ctx) -> Assessment[AccuracyProfileResult] | None:
    ac, p = ctx.settings_of(ENTRY), ctx.data_of(precision.ENTRY)
    if ac is None or p is None:
        return None
    design = ctx.settings_of(precision.ENTRY).design
    by = f"units of the innermost design factor ({design[-1]})" if p.factors else "series"
    profile = assess_accuracy_profile(p.level, p.found + p.offset, precision.runs_of(p), beta=ac.beta,
                                      acceptance_for=ac.acceptance_for, runs_by=by, content=ac.content,
                                      confidence=ac.confidence)
    return Assessment(profile, accuracy_profile_criteria(profile))


ENTRY: Characteristic[AccuracyProfileResult] = Characteristic(
    "accuracy_profile", "Accuracy profile", assess, settings=settings.AccuracyProfileSection, load=settings.load,
    result_types=(AccuracyProfileResult,), sentences=presentation.sentences, figures=presentation.figures,
    fragment="characteristics/accuracy_profile.html.j2")
