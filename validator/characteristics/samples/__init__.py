"""Quantified samples: each unknown's concentration read back from the calibration function
(inverse prediction, in :mod:`validator.characteristics.calibration.analysis`), with its
standard error and confidence interval, flagged when outside the calibrated range.

Parts: :mod:`.settings` (table, loader). Its dossier section (a study-level section of
``dossier.html.j2``) is not moved yet.
"""

from __future__ import annotations

from .. import calibration
from .._entry import Assessment, Characteristic
from ..calibration.analysis import SampleResult, quantify
from . import settings

__all__ = ["ENTRY", "SampleResult"]


def assess(ctx) -> Assessment[tuple[SampleResult, ...]]:
    """Every sample of the analyte (none: an empty tuple, written as ``[]``)."""
    fit = ctx.result_of(calibration.ENTRY).fit
    # a sample from [[runs]] goes through its run's calibration (its ``calibration``)
    return Assessment(tuple(quantify(getattr(s, "calibration", None) or fit, s.id, s.responses)
                            for s in ctx.data_of(ENTRY) or ()))


ENTRY: Characteristic[tuple[SampleResult, ...]] = Characteristic(
    "samples", "Quantified samples", assess, settings=settings.SamplesSection, load=settings.load,
    result_types=(SampleResult,), judges=False, fragment="characteristics/samples.html.j2", placement="study-after")
