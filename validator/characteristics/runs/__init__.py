"""Analytical runs: each run's calibration, and every other injection quantified through it.

The run exports ([[runs]], read by :mod:`validator.inputs.runs`) give the analyte's calibration
(every run's calibrators, the run as series) and its injections. This step, right after the
calibration, fits each run's calibration with the model and weighting the calibration chose (or
one pooled calibration, ``[calibration] quantify_with = "pooled"``), reads every other injection
back through it, and gives the entries below it their data: the samples (each through its run's
function), recovery (spiked injections, native level from the run's unspiked matrix), precision
(QC injections, the run as series) and the reference material. Its results.json entry keeps the
chain response -> calibration -> found for every injection.
"""

from __future__ import annotations

from .. import calibration
from .._entry import Assessment, Characteristic
from . import presentation
from .analysis import (QuantifiedInjection, RunCalibration, RunsResult, qc_found, quantify_runs, reference_found,
                       run_samples, spiked_found)

__all__ = ["ENTRY", "RunsResult", "RunCalibration", "QuantifiedInjection", "quantify_runs"]


def assess(ctx) -> Assessment[RunsResult] | None:
    injections = ctx.data_of(ENTRY)
    if injections is None:
        return None
    fit = ctx.result_of(calibration.ENTRY).fit
    result = quantify_runs(injections, model=fit.model, weighting=fit.weighting, alpha=ctx.alpha,
                           pooled=ctx.config.calibration.quantify_with == "pooled")
    provides = [("samples", run_samples(result))]
    rm = ctx.config.reference_material
    certified = rm is not None and (rm.analyte is None or rm.analyte == ctx.data.name)
    design = tuple(getattr(ctx.config.precision, "design", None) or ()) if ctx.config.precision else ()
    for name, data in (("recovery", spiked_found(result)), ("precision", qc_found(result, design)),
                       ("reference_material", reference_found(result) if certified else None)):
        if data is not None:
            provides.append((name, data))
    return Assessment(result, (), provides=tuple(provides))


ENTRY: Characteristic[RunsResult] = Characteristic(
    "runs", "Analytical runs", assess, result_types=(RunsResult, RunCalibration, QuantifiedInjection),
    sentences=presentation.sentences, fragment="characteristics/runs.html.j2")
