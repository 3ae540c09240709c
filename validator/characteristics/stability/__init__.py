"""Stability (ICH M10): the ``[stability]`` section."""

from __future__ import annotations

from dataclasses import replace

from .._entry import Assessment, Characteristic
from ..runs.analysis import RunsResult, study_qc_found
from . import presentation, settings
from .analysis import StabilityResult, assess_stability, stability_criteria
from .settings import StabilityData, StabilitySection

__all__ = ["ENTRY", "StabilityResult"]


def assess(ctx) -> Assessment[StabilityResult] | None:
    """The analyte's stability conditions and their criteria; ``None`` when it has no stability results."""
    data: StabilityData | None = ctx.data_of(ENTRY)
    s: StabilitySection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    from_runs = isinstance(data, RunsResult)
    if from_runs:                 # no file of its own: the runs' QC injections with a condition
        qc = study_qc_found(data, "stability")
        if qc is None:
            return None
        data = StabilityData(tuple(qc.labels), qc.nominal, qc.found)
    result = assess_stability(data, reference=s.reference, limit_pct=s.limit_pct, judged_on=s.judged_on,
                              min_replicates=s.min_replicates, level=1 - ctx.alpha)
    if from_runs:
        result = replace(result, data_from="runs")
    return Assessment(result, stability_criteria(result))


ENTRY: Characteristic[StabilityResult] = Characteristic(
    "stability", "Stability", assess, settings=settings.StabilitySection, load=settings.load, result_types=(StabilityResult,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/stability.html.j2")
