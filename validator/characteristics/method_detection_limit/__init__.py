"""Method detection limit (40 CFR Part 136 Appendix B, Revision 2): the ``[method_detection_limit]`` section."""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from .._entry import Assessment, Characteristic
from ..runs.analysis import RunsResult
from . import presentation, settings
from .analysis import MethodDetectionLimit, mdl, mdl_criteria
from .settings import MethodDetectionLimitData, MethodDetectionLimitSection

__all__ = ["ENTRY", "MethodDetectionLimit"]


def assess(ctx) -> Assessment[MethodDetectionLimit] | None:
    """The analyte's MDL and its criterion; ``None`` when it has no spiked results."""
    data: MethodDetectionLimitData | None = ctx.data_of(ENTRY)
    s: MethodDetectionLimitSection | None = ctx.settings_of(ENTRY)
    if data is None or s is None:
        return None
    from_runs = isinstance(data, RunsResult)
    if from_runs:                         # no files of its own: the runs' low_level and blank injections
        data = _from_runs(data)
        if data is None:
            return None
    result = mdl(data, confidence=s.confidence)
    if from_runs:
        result = replace(result, data_from="runs")
    return Assessment(result, mdl_criteria(result, s.mdl_max))


def _from_runs(runs: RunsResult) -> MethodDetectionLimitData | None:
    """Spiked results: the found values of the low_level injections; method blanks: of the blank injections
    (each through its run's calibration); the run as batch; the spike level when the low_level injections
    give one. ``None`` without a low_level injection with a found value."""
    spiked = [i for i in runs.injections if i.type == "low_level" and i.found is not None]
    blanks = [i for i in runs.injections if i.type in ("blank", "zero") and i.found is not None]
    if not spiked:
        return None
    level = spiked[0].level if all(i.level is not None for i in spiked) else None
    return MethodDetectionLimitData(np.array([i.found for i in spiked], float), tuple(i.run for i in spiked),
                                    np.array([i.found for i in blanks], float), tuple(i.run for i in blanks),
                                    None if level is None else float(level))


ENTRY: Characteristic[MethodDetectionLimit] = Characteristic(
    "method_detection_limit", "Method detection limit (40 CFR 136 Appendix B)", assess, settings=settings.MethodDetectionLimitSection, load=settings.load, result_types=(MethodDetectionLimit,),
    sentences=presentation.sentences, figures=presentation.figures, fragment="characteristics/method_detection_limit.html.j2",
    runs_reads="low_level injection with a found value (the MDL needs spiked results)")
