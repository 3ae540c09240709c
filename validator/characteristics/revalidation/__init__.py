"""Re-validation: this run compared with an earlier validation of the same method (slope or
mean sensitivity equivalence, residual SD ratio, LOD/LOQ, recovery and repeatability changes).

The last registry entry: it reads the results of calibration, detection, recovery and
precision. Parts: :mod:`.settings` (table, loader of the earlier results.json),
:mod:`.analysis` (pure, criteria), :mod:`.presentation` (its figure, drawn from results.json);
its dossier section ("What changed since the previous validation", with the method comparison)
is ``report_templates/characteristics/revalidation.html.j2``.
"""

from __future__ import annotations

from dataclasses import replace

from .. import calibration, detection, precision, recovery
from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import (CalibrationChoice, CalibrationFunction, PreviousResults, RecoveryChange, RepeatabilityChange, ResidualSdChange,
                       RevalidationResult, RunPair, RunSummary, SlopeComparison, assess_revalidation,
                       compare_slopes, joint_comparison, refit_like, residual_sd_ratio, revalidation_criteria,
                       run_summary, unmatched_criterion)

__all__ = ["ENTRY", "RevalidationResult", "SlopeComparison", "ResidualSdChange", "RunPair", "RecoveryChange",
           "RepeatabilityChange", "CalibrationChoice", "PreviousResults", "RunSummary", "assess_revalidation",
           "compare_slopes", "joint_comparison", "refit_like", "residual_sd_ratio", "run_summary",
           "revalidation_criteria"]


def _precision_levels(ctx):
    found = ctx.result_of(precision.ENTRY)
    return None if found is None else found.levels


def assess(ctx) -> Assessment[RevalidationResult | None] | None:
    rc = ctx.settings_of(ENTRY)
    if rc is None:
        return None
    previous = ctx.data_of(ENTRY)
    if previous is None:     # a re-validation in which this analyte has no counterpart
        return Assessment(None, (unmatched_criterion(rc.slope_change_max_pct),))
    current = run_summary(ctx.result_of(calibration.ENTRY), ctx.result_of(detection.ENTRY),
                          ctx.result_of(recovery.ENTRY), _precision_levels(ctx))
    result = assess_revalidation(RunSummary.from_results(previous.entry), current,
                                 slope_change_max_pct=rc.slope_change_max_pct,
                                 residual_sd_ratio_max=rc.residual_sd_ratio_max, alpha=ctx.alpha)
    run = previous.run
    result = replace(result, previous=PreviousResults(run.path, run.study_id, run.generated_at, run.sha256),
                     previous_analyte=previous.name,
                     previous_function=CalibrationFunction.from_entry(previous.entry["calibration"]))
    return Assessment(result, revalidation_criteria(result, rc.slope_change_max_pct, rc.residual_sd_ratio_max))


ENTRY: Characteristic[RevalidationResult | None] = Characteristic(
    "revalidation", "Re-validation", assess, settings=settings.RevalidationSection, load=settings.load,
    result_types=(RevalidationResult,), figures=presentation.figures, fragment="characteristics/revalidation.html.j2", placement="study-before")
