"""The registry: every validation characteristic, in the order it is assessed.

A plain ordered tuple (no plug-in entry points). A step may read the results of the entries
above it (``ctx.result_of(ENTRY)``); its criteria appear in results.json in this order. The
study file's tables, the loaders, results.json and the dossier's sections all loop over it:
adding a characteristic is its package, its template fragment and one line here
(DEVELOPERS.md, "Adding a characteristic").
"""

from __future__ import annotations

from .characteristics import _legacy, recovery, reference_material, reporting, runs
from .characteristics._entry import Assessment, Characteristic, Reading

__all__ = ["REGISTRY", "Characteristic", "Assessment", "Reading"]

REGISTRY: tuple[Characteristic, ...] = (
    _legacy.CALIBRATION,             # first: its data name the analytes
    runs.ENTRY,                      # run exports: each run's calibration gives the found values below
    _legacy.SAMPLES,
    reporting.ENTRY,                 # the samples in the reporting unit (preparation factors)
    _legacy.DETECTION,
    recovery.ENTRY,
    _legacy.PRECISION,
    reference_material.ENTRY,
    _legacy.LOQ_CHECK,
    _legacy.WORKING_RANGE,
    _legacy.COMPARISON,
    _legacy.REVALIDATION,
)
