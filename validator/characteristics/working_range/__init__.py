"""The validated working range and the verification of the reported LOQ with data near it.

Two registry entries, after detection, recovery and precision, whose results they read:
:data:`LOQ_CHECK` (written inside results.json's detection section as ``loq_verification``;
its limit ``loq_rsd_max_pct`` is a key of the ``[detection]`` table) and :data:`ENTRY`. Parts:
:mod:`.analysis` (pure, criteria), :mod:`.presentation` (sentences), fragment
``report_templates/characteristics/working_range.html.j2``.
"""

from __future__ import annotations

from .. import calibration, detection, precision, recovery
from .._entry import Assessment, Characteristic
from . import presentation
from .analysis import (CALIBRATION_CRITERIA, LoqCheck, LoqLevel, WorkingRange, loq_criterion, verify_loq, working_range,
                       working_range_criterion)

__all__ = ["ENTRY", "LOQ_CHECK", "WorkingRange", "LoqCheck", "LoqLevel", "working_range", "verify_loq",
           "working_range_criterion", "loq_criterion"]


def _recovery_levels(ctx) -> tuple:
    found = ctx.result_of(recovery.ENTRY)
    return found.levels if found is not None else ()


def _precision_levels(ctx) -> tuple:
    found = ctx.result_of(precision.ENTRY)
    return found.levels if found is not None else ()


def assess_loq(ctx) -> Assessment[LoqCheck]:
    check = verify_loq(ctx.result_of(detection.ENTRY).reported.loq, _precision_levels(ctx), _recovery_levels(ctx),
                       ctx.settings_of(detection.ENTRY).loq_rsd_max_pct)
    return Assessment(check, (loq_criterion(check),) if check.levels else ())


def assess(ctx) -> Assessment[WorkingRange]:
    """The range narrowed by every recovery or precision level that fails its own criteria."""
    reported = ctx.result_of(detection.ENTRY).reported
    levels, precise = _recovery_levels(ctx), _precision_levels(ctx)
    assessed = [lv.added for lv in levels] + [lv.level for lv in precise]
    failing = ([(lv.added, "recovery") for lv in levels if not lv.passed]
               + [(lv.level, "precision") for lv in precise
                  if any(c.passed is False for c in precision.level_criteria(ctx, lv))])
    wr = working_range(ctx.result_of(calibration.ENTRY).back_calculated, reported.loq, reported.method, failing,
                       assessed, ctx.unit)
    unmet = tuple(f"{c.id} {'not met' if c.passed is False else 'not applicable'}" for c in ctx.criteria
                  if c.id in CALIBRATION_CRITERIA and c.passed is not True)
    return Assessment(wr, (working_range_criterion(wr, "" if reported.loq is not None else
                                                   (reported.reason or "it does not exist for these data"),
                                                   unmet),))


LOQ_CHECK: Characteristic[LoqCheck] = Characteristic(
    "loq_check", "LOQ verification", assess_loq, result_types=(LoqCheck,), sentences=presentation.loq_sentences,
    json_path="detection.loq_verification")

ENTRY: Characteristic[WorkingRange] = Characteristic(
    "working_range", "Working range", assess, result_types=(WorkingRange,), sentences=presentation.sentences,
    fragment="characteristics/working_range.html.j2")
