"""Selectivity judged (ICH M10): blank-matrix lots' responses against the LLOQ (and IS) response."""

from __future__ import annotations

import dataclasses

import numpy as np

from ...criteria import Criterion
from ...sector.bioanalytical import Selectivity, SelectivityInjection, selectivity

__all__ = ["Selectivity", "SelectivityInjection", "assess_selectivity", "selectivity_from_runs", "selectivity_criteria"]


def assess_selectivity(data, *, analyte_limit_pct: float, internal_standard_limit_pct: float, min_lots: int,
                       min_fraction: float) -> Selectivity:
    """Per lot the largest blank response as % of the mean LLOQ response; see
    :func:`validator.sector.bioanalytical.selectivity`."""
    return selectivity(data.blank, list(data.lots), data.lloq, blank_internal_standard=data.blank_internal_standard,
                       internal_standard_response=data.lloq_internal_standard, analyte_limit_percent=analyte_limit_pct,
                       internal_standard_limit_percent=internal_standard_limit_pct, min_lots=min_lots,
                       min_fraction=min_fraction)


def selectivity_from_runs(injections, *, analyte_limit_pct: float, internal_standard_limit_pct: float,
                          min_lots: int, min_fraction: float) -> Selectivity | None:
    """Selectivity from the matrix-blank injections of the analytical runs, each against its own run's LLOQ.

    Parameters
    ----------
    injections : sequence
        One analyte's injections (calibrators included), objects with the attributes of
        :class:`validator.inputs.runs.Injection` (run, type, level, lot, sample, analyte_response,
        internal_standard_response, file, sheet, row).

    Notes
    -----
    Each injection of type matrix_blank (one blank matrix of one lot) is compared with the run it
    was measured in: 100 x its analyte response (the raw area) / mean analyte response of that
    run's calibrators at their lowest level (the LLOQ), and with an internal standard 100 x its IS
    response / mean IS response of the same LLOQ calibrators (ICH M10 sec. 3.2.1, from memory:
    "20 % of the analyte response at the LLOQ and 5 % of the IS response in the LLOQ sample").
    Per lot the largest percentage counts (:func:`validator.sector.bioanalytical.selectivity`).
    ``None`` when a matrix blank's run has no calibrator to take the LLOQ from.
    """
    blanks = [i for i in injections if i.type == "matrix_blank"]
    lloq = []
    for run in dict.fromkeys(i.run for i in blanks):
        cal = [i for i in injections if i.type == "calibrator" and i.run == run]
        if not cal:
            return None
        lowest = min(i.level for i in cal)
        lloq.extend(i for i in cal if i.level == lowest)
    with_is = all(i.internal_standard_response is not None for i in blanks + lloq)
    result = selectivity([i.analyte_response for i in blanks], [i.lot for i in blanks],
                         [i.analyte_response for i in lloq],
                         blank_internal_standard=[i.internal_standard_response for i in blanks] if with_is else None,
                         internal_standard_response=[i.internal_standard_response for i in lloq] if with_is else None,
                         analyte_limit_percent=analyte_limit_pct,
                         internal_standard_limit_percent=internal_standard_limit_pct, min_lots=min_lots,
                         min_fraction=min_fraction, run=[i.run for i in blanks], lloq_run=[i.run for i in lloq])
    chain = []
    for inj in blanks:
        ref = [i for i in lloq if i.run == inj.run]
        a_ref = float(np.mean([i.analyte_response for i in ref]))
        i_ref = float(np.mean([i.internal_standard_response for i in ref])) if with_is else None
        chain.append(SelectivityInjection(
            run=inj.run, lot=inj.lot, sample=inj.sample, file=inj.file, sheet=inj.sheet, row=inj.row,
            response=float(inj.analyte_response), lloq_response=a_ref,
            analyte_percent=float(100.0 * inj.analyte_response / a_ref),
            internal_standard_response=float(inj.internal_standard_response) if with_is else None,
            internal_standard_reference=i_ref,
            internal_standard_percent=float(100.0 * inj.internal_standard_response / i_ref) if with_is else None))
    return dataclasses.replace(result, data_from="runs", injections=tuple(chain))


def selectivity_criteria(result: Selectivity, *, analyte_limit_pct: float, internal_standard_limit_pct: float,
                         with_internal_standard: bool) -> tuple[Criterion, ...]:
    """``selectivity``: the fraction of blank-matrix lots free of interference at least ``min_fraction``,
    with at least ``min_lots`` lots (exact comparison)."""
    is_part = f" and at most {internal_standard_limit_pct:g} % of the IS response" if with_internal_standard else ""
    return (Criterion("selectivity",
                      f"fraction of blank-matrix lots (at least {result.min_lots}) with a response at most "
                      f"{analyte_limit_pct:g} % of the LLOQ response{is_part}: at least {result.min_fraction:.4g}",
                      result.fraction_passed, result.min_fraction, result.passed,
                      "" if result.passed is not None else f"not applicable: {result.reason}"),)
