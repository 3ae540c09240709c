"""Sample preparation and reporting units: each sample's result in the reporting unit.

The study's ``[sample_preparation]`` table (:mod:`.settings`) gives the reporting unit and each sample's
dilution factor, aliquot and final volume; :mod:`.analysis` multiplies the sample's x0, s(x0) and
interval by the factor; the chain is kept for the audit trail; ``report_templates/
characteristics/sample_preparation.html.j2`` shows it.
"""

from __future__ import annotations

from .. import samples as samples_entry
from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import ReportedSample, ReportingResult, report_samples

__all__ = ["ENTRY", "ReportingResult", "ReportedSample", "report_samples"]


def assess(ctx) -> Assessment[ReportingResult] | None:
    cfg = ctx.settings_of(ENTRY)
    samples = ctx.result_of(samples_entry.ENTRY)
    if cfg is None or not samples:
        return None
    return Assessment(report_samples(samples, unit=cfg.unit, measured_unit=ctx.unit,
                                     preparation_of=cfg.preparation_of))


ENTRY: Characteristic[ReportingResult] = Characteristic(
    "sample_preparation", "Results in the reporting unit", assess, settings=settings.ReportingSection,
    result_types=(ReportingResult, ReportedSample), sentences=presentation.sentences,
    fragment="characteristics/sample_preparation.html.j2")
