"""Precision: repeatability and intermediate precision per level, one-way or for a nested design.

The package is one validation characteristic: its study-file table and loader
(:mod:`.settings`), its pure analysis and criteria (:mod:`.analysis`), its sentences
(:mod:`.presentation`) and its dossier fragment ``report_templates/characteristics/precision.html.j2``,
assembled in :data:`ENTRY`.
"""

from __future__ import annotations

import numpy as np

from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import (ClaimCheck, NestedPrecision, PrecisionConditionEstimate, PrecisionLevel, PrecisionResult,
                       RsdUpperBounds, TruenessCheck, VarianceEstimate, assess_precision_level, design_criteria,
                       horwitz_prsd, levels_criterion, mass_fraction_factor, precision_criteria)

__all__ = ["ENTRY", "PrecisionResult", "PrecisionLevel", "NestedPrecision", "VarianceEstimate",
           "PrecisionConditionEstimate", "ClaimCheck", "TruenessCheck", "RsdUpperBounds", "assess_precision_level",
           "precision_criteria", "level_criteria", "runs_of", "mass_fraction_factor", "horwitz_prsd"]


def level_criteria(ctx, lv: PrecisionLevel) -> tuple:
    """The criteria of one precision level as the study declares them (also read by the working range)."""
    return precision_criteria(lv, ctx.settings_of(ENTRY).limits_for(lv.level),
                              on_intervals=ctx.config.criteria.on_intervals, alpha=ctx.alpha)


def runs_of(data: settings.PrecisionData) -> tuple[str, ...]:
    """The run of each precision result: the innermost unit of the declared design, else the series."""
    return tuple(" / ".join(path) for path in zip(*data.factors)) if data.factors else data.series


def assess(ctx) -> Assessment[PrecisionResult] | None:
    p = ctx.data_of(ENTRY)
    if p is None:
        return None
    pc = ctx.settings_of(ENTRY)
    levels = []
    claimed = [tuple(rsd if sd is None else sd for rsd, sd in zip(pc.claims_for(float(level)),
                                                                    pc.sd_claims_for(float(level))))
               for level in np.unique(p.level)]
    # EP15-A3 divides alpha over the levels (samples) whose claims are verified together
    claim_levels = tuple(sum(c[q] is not None for c in claimed) for q in (0, 1))
    reference_levels = sum(pc.reference_for(float(level)) is not None for level in np.unique(p.level))
    for level in np.unique(p.level):
        mask = p.level == level
        levels.append(assess_precision_level(
            level, p.found[mask], [s for s, lv in zip(p.series, p.level) if lv == level], alpha=ctx.alpha,
            unit=ctx.unit, offset=p.offset, design=pc.design,
            factors=tuple(np.asarray(f)[mask] for f in p.factors), claims=pc.claims_for(float(level)),
            bounds=ctx.config.criteria.on_intervals, claim_levels=claim_levels,
            sd_claims=pc.sd_claims_for(float(level)), reference=pc.reference_for(float(level)),
            reference_levels=reference_levels,
            sources=tuple(src for src, m in zip(p.sources, mask) if m)))
    result = PrecisionResult(tuple(levels))
    criteria = tuple(c for lv in result.levels for c in level_criteria(ctx, lv)
                     + design_criteria(lv, pc.min_series, pc.min_replicates))
    criteria += levels_criterion(result, pc.min_levels)
    return Assessment(result, criteria)


ENTRY: Characteristic[PrecisionResult] = Characteristic(
    "precision", "Precision", assess, settings=settings.PrecisionSection, load=settings.load,
    result_types=(PrecisionResult,), sentences=presentation.sentences, fragment="characteristics/precision.html.j2")
