"""Limit of blank, limit of detection, limit of quantitation (CLSI EP17-A2): the ``[limit_of_blank]`` section."""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .._entry import Assessment, Characteristic
from ..runs.analysis import RunsResult
from . import presentation, settings
from .analysis import DetectionCapability, detection_capability, detection_capability_criteria
from .settings import LimitOfBlankData, LimitOfBlankSection

__all__ = ["ENTRY", "DetectionCapability"]


def assess(ctx) -> Assessment[DetectionCapability] | None:
    """The analyte's LoB/LoD/LoQ and their criteria; ``None`` when it has no blank results."""
    data: LimitOfBlankData | None = ctx.data_of(ENTRY)
    s: LimitOfBlankSection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    if isinstance(data, RunsResult):      # no files of its own: the runs' blank and low_level injections
        data = _from_runs(data)
        if data is None:
            return None
    result = detection_capability(data.blanks, data.blank_samples, data.blank_lots, data.low, data.low_samples,
                                  data.low_lots, data.low_nominal, method=s.method, purpose=s.purpose,
                                  percentile=s.percentile, loq_max_cv_pct=s.loq_max_cv_pct,
                                  loq_max_total_error=s.loq_max_total_error)
    if isinstance(ctx.data_of(ENTRY), RunsResult):
        result = replace(result, data_from="runs")
    return Assessment(result, detection_capability_criteria(result, lob_max=s.lob_max, lod_max=s.lod_max,
                                                            loq_max=s.loq_max))


def _from_runs(runs: RunsResult) -> LimitOfBlankData | None:
    """The found values of the blank and low_level injections (through their run's calibration); lot "1"
    where no lot is given, as for a file without a lot column; the nominal values when every low_level
    injection has a level. ``None`` without a blank with a found value."""
    blanks = [i for i in runs.injections if i.type in ("blank", "zero") and i.found is not None]
    low = [i for i in runs.injections if i.type == "low_level" and i.found is not None]
    if not blanks:
        return None
    nominal = (np.array([i.level for i in low], float) if low and all(i.level is not None for i in low) else None)
    return LimitOfBlankData(np.array([i.found for i in blanks], float), tuple(i.sample for i in blanks),
                            tuple(i.lot or "1" for i in blanks),
                            np.array([i.found for i in low], float) if low else None, tuple(i.sample for i in low),
                            tuple(i.lot or "1" for i in low), nominal)


ENTRY: Characteristic[DetectionCapability] = Characteristic(
    "limit_of_blank", "Limit of blank, detection and quantitation (CLSI EP17-A2)", assess, settings=settings.LimitOfBlankSection, load=settings.load, result_types=(DetectionCapability,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/limit_of_blank.html.j2",
    runs_reads="blank or zero injection with a found value (the limit of blank needs blank results)")
