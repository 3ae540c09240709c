"""Recovery (trueness): spiked results against the amount added, per spiking level.

The package is one validation characteristic: its study-file table and loader
(:mod:`.settings`), its pure analysis and criteria (:mod:`.analysis`), its sentences and figure
(:mod:`.presentation`) and its dossier fragment ``report_templates/characteristics/recovery.html.j2``,
assembled in :data:`ENTRY`.
"""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from ..interval_judgement import recovery_interval_criteria
from . import presentation, settings
from .analysis import RecoveryLevel, RecoveryResult, assess_recovery, recovery_criteria

__all__ = ["ENTRY", "RecoveryLevel", "RecoveryResult", "assess_recovery", "recovery_criteria"]


def assess(ctx) -> Assessment[RecoveryResult] | None:
    data = ctx.data_of(ENTRY)
    if data is None:
        return None
    result = assess_recovery(data.added, data.found, data.native, alpha=ctx.alpha,
                             range_for=ctx.settings_of(ENTRY).range_for)
    if ctx.config.criteria.on_intervals:      # [criteria] judge_on = "interval": two one-sided tests
        return Assessment(result, recovery_interval_criteria(result, ctx.alpha))
    return Assessment(result, recovery_criteria(result))


ENTRY: Characteristic[RecoveryResult] = Characteristic(
    "recovery", "Recovery (trueness)", assess, settings=settings.RecoverySection, load=settings.load,
    result_types=(RecoveryResult,), sentences=presentation.sentences, figures=presentation.figures,
    fragment="characteristics/recovery.html.j2")
