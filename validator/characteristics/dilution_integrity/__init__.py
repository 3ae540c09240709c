"""Dilution integrity (ICH M10): the ``[dilution_integrity]`` section."""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .._entry import Assessment, Characteristic
from ..runs.analysis import RunsResult, study_qc_found
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
    from_runs = isinstance(data, RunsResult)
    if from_runs:                 # no file of its own: the runs' QC injections with a dilution factor
        qc = study_qc_found(data, "dilution_integrity")
        if qc is None:
            return None
        data = DilutionData(np.array(qc.labels, float), qc.nominal, qc.found)
    result = assess_dilution(data, max_bias_pct=s.max_bias_pct, max_cv_pct=s.max_cv_pct, min_replicates=s.min_replicates)
    if from_runs:
        result = replace(result, data_from="runs")
    return Assessment(result, dilution_criteria(result))


ENTRY: Characteristic[DilutionResult] = Characteristic(
    "dilution_integrity", "Dilution integrity", assess, settings=settings.DilutionIntegritySection, load=settings.load, result_types=(DilutionResult,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/dilution_integrity.html.j2")
