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

from dataclasses import replace

from .. import calibration
from .._entry import Assessment, Characteristic
from . import presentation
from .analysis import (QuantifiedInjection, RunCalibration, RunsResult, qc_found, quantify_runs, reference_found,
                       run_samples, spiked_found, study_qc_found)

__all__ = ["ENTRY", "SECTOR_READS", "RunsResult", "RunCalibration", "QuantifiedInjection", "quantify_runs"]


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
    # the sector tables that name no file of their own read the run sequences: they get this result
    for name, (key, reads) in SECTOR_READS.items():
        settings = getattr(ctx.config, name, None)
        if (settings is not None and getattr(settings, key) is None and ctx.data.of(name) is None
                and (reads is None or any(reads(i) for i in result.injections))):
            provides.append((name, result))
    feeds = [name for name, _ in provides]
    # the matrix effect's lots, matrix factor and solvent calibration: its other parts may come from its own
    # files, so it reads this result itself
    me = ctx.config.matrix_effect
    if me is not None and ((me.lots_data is None and study_qc_found(result, "matrix_effect") is not None)
                           or (me.factor_data is None and result.of_type("post_extraction"))
                           or (me.solvent_data is None and result.of_type("solvent_calibrator"))):
        feeds.append("matrix_effect")
    result = replace(result, feeds=tuple(sorted(feeds, key=_ORDER.index)))
    return Assessment(result, (), provides=tuple((name, result if isinstance(data, RunsResult) else data)
                                                 for name, data in provides))


def _of_type(*kinds):
    return lambda inj: inj.type in kinds


# sector table -> (its file key: None means "read the runs"; which injections it needs, None: the sequence)
# (the study-file side of the same rule: validator.inputs.study.RUN_FED_SECTOR; the matrix effect's lots
# are read by the matrix effect itself, see assess)
SECTOR_READS = {"limit_of_blank": ("blanks", _of_type("blank", "zero")),
                "method_detection_limit": ("spiked", _of_type("low_level")),
                "carry_over": ("data", None), "selectivity": ("data", _of_type("matrix_blank")),
                "stability": ("data", lambda inj: inj.role == "stability"),
                "dilution_integrity": ("data", lambda inj: inj.role == "dilution_integrity")}
# the order feeds are listed in (the registry's)
_ORDER = ("samples", "recovery", "precision", "reference_material", "limit_of_blank", "method_detection_limit",
          "matrix_effect", "carry_over", "selectivity", "stability", "dilution_integrity")


ENTRY: Characteristic[RunsResult] = Characteristic(
    "runs", "Analytical runs", assess, result_types=(RunsResult, RunCalibration, QuantifiedInjection),
    sentences=presentation.sentences, fragment="characteristics/runs.html.j2")
