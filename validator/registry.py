"""The registry: every validation characteristic, in the order it is assessed.

A plain ordered tuple (no plug-in entry points). A step may read the results of the entries
above it (``ctx.result_of(ENTRY)``); its criteria appear in results.json in this order. The
study file's tables, the loaders, results.json and the dossier's sections all loop over it:
adding a characteristic is its package, its template fragment and one line here
(DEVELOPERS.md, "Adding a characteristic").
"""

from __future__ import annotations

from .characteristics import (accuracy_profile, calibration, carry_over, comparison, detection,
                              dilution_integrity, limit_of_blank, matrix_effect, method_detection_limit, precision,
                              reanalysis, recovery, reference_material, revalidation, runs, sample_preparation, samples,
                              selectivity, stability, uncertainty, working_range)
from .characteristics._entry import Assessment, Characteristic, Reading

__all__ = ["REGISTRY", "Characteristic", "Assessment", "Reading"]

REGISTRY: tuple[Characteristic, ...] = (
    calibration.ENTRY,               # first: its data name the analytes
    runs.ENTRY,                      # run exports: each run's calibration gives the found values below
    samples.ENTRY,
    sample_preparation.ENTRY,        # the samples in the reporting unit (preparation factors)
    detection.BLANKS,
    detection.ENTRY,
    recovery.ENTRY,
    precision.ENTRY,
    accuracy_profile.ENTRY,          # reads the precision data
    reference_material.ENTRY,
    uncertainty.ENTRY,               # reads precision, accuracy profile, recovery, reference material, LOQ
    working_range.LOQ_CHECK,
    working_range.ENTRY,
    # the sector characteristics (issue #15)
    limit_of_blank.ENTRY,
    method_detection_limit.ENTRY,
    matrix_effect.ENTRY,
    carry_over.ENTRY,
    selectivity.ENTRY,
    stability.ENTRY,
    dilution_integrity.ENTRY,
    reanalysis.ENTRY,
    comparison.ENTRY,
    revalidation.ENTRY,
)
