"""Measurement uncertainty, top-down: u(Rw), u(bias), combined and expanded per level (Nordtest TR 537).

The package is one validation characteristic: its study-file table (:mod:`.settings`), its pure
analysis and criteria (:mod:`.analysis`), its sentences (:mod:`.presentation`) and its dossier
fragment ``report_templates/characteristics/uncertainty.html.j2``, assembled in :data:`ENTRY`.
It reads the results of precision, recovery, reference material, the accuracy profile and the
reported LOQ, so it follows them in the registry.
"""

from __future__ import annotations

import numpy as np

from .._entry import Assessment, Characteristic
from .. import accuracy_profile, detection, precision, recovery, reference_material, samples
from . import presentation, settings
from .analysis import (BiasEvidence, BudgetLevel, PrecisionInput, SampleUncertainty, UncertaintyResult,
                       assess_uncertainty, sample_uncertainty, uncertainty_criteria)

__all__ = ["ENTRY", "UncertaintyResult", "BudgetLevel", "BiasEvidence", "SampleUncertainty", "PrecisionInput",
           "assess_uncertainty", "sample_uncertainty", "uncertainty_criteria"]


def _bias_evidence(ctx, uc) -> tuple[BiasEvidence, ...]:
    out = []
    rm = ctx.result_of(reference_material.ENTRY)
    if "reference_material" in uc.bias_from and rm is not None:
        u_mean = (rm.sd / np.sqrt(rm.n)) if rm.sd is not None else 0.0
        out.append(BiasEvidence(
            "reference material", rm.bias_pct,
            100.0 * float(np.hypot(rm.certified_uncertainty, u_mean)) / rm.certified_value,
            # from memory: Nordtest TR 537 ed. 4 (one CRM) adds the standard error of the mean of its
            # replicates, s/sqrt(n), to u(Cref) in quadrature
            "bias of the mean against the certified value; u(Cref) = certified standard uncertainty combined "
            f"with the standard error of the mean of the {rm.n} result(s)"))
    rec = ctx.result_of(recovery.ENTRY)
    if "recovery" in uc.bias_from and rec is not None:
        for lv in rec.levels:
            out.append(BiasEvidence(
                f"recovery at added {lv.added:g}", lv.mean_pct - 100.0, uc.spike_standard_uncertainty_pct,
                f"mean recovery - 100 %; u(Cref) = the declared standard uncertainty of the spike "
                f"({uc.spike_standard_uncertainty_pct:g} %)"))
    return tuple(out)


def assess(ctx) -> Assessment[UncertaintyResult] | None:
    uc, prec = ctx.settings_of(ENTRY), ctx.result_of(precision.ENTRY)
    if uc is None or prec is None:
        return None
    design = ctx.settings_of(precision.ENTRY).design
    source = ("intermediate precision RSD, all components of the design " + "/".join(design) if design else
              "intermediate precision RSD, one-way ANOVA on series")
    inputs = tuple(PrecisionInput(lv.level, lv.decisive[1][0], source, lv.decisive[1][2]) for lv in prec.levels)
    found = ctx.result_of(detection.ENTRY)
    reported = found.reported if found is not None else None
    loq = None if reported is None else reported.loq
    profile = ctx.result_of(accuracy_profile.ENTRY)
    profile_sd = {} if profile is None else {lv.nominal: lv.prediction_sd_pct for lv in profile.levels
                                             if lv.prediction_sd_pct is not None}
    result = assess_uncertainty(inputs, _bias_evidence(ctx, uc), coverage_factor=uc.coverage_factor, loq=loq,
                                loq_reason="" if loq is not None else
                                (getattr(reported, "reason", "") or "no LOQ is reported"),
                                profile_sd_pct=profile_sd,
                                samples=tuple((s.id, s.concentration) for s in ctx.result_of(samples.ENTRY) or ()))
    return Assessment(result, uncertainty_criteria(result, uc.expanded_max_pct))


ENTRY: Characteristic[UncertaintyResult] = Characteristic(
    "uncertainty", "Measurement uncertainty", assess, settings=settings.UncertaintySection, load=settings.load,
    result_types=(UncertaintyResult,), sentences=presentation.sentences,
    fragment="characteristics/uncertainty.html.j2")
