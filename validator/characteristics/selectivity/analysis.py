"""Selectivity judged (ICH M10): blank-matrix lots' responses against the LLOQ (and IS) response."""

from __future__ import annotations

from ...criteria import Criterion
from ...sector.bioanalytical import Selectivity, selectivity

__all__ = ["Selectivity", "assess_selectivity", "selectivity_criteria"]


def assess_selectivity(data, *, analyte_limit_pct: float, internal_standard_limit_pct: float, min_lots: int,
                       min_fraction: float) -> Selectivity:
    """Per lot the largest blank response as % of the mean LLOQ response; see
    :func:`validator.sector.bioanalytical.selectivity`."""
    return selectivity(data.blank, list(data.lots), data.lloq, blank_internal_standard=data.blank_internal_standard,
                       internal_standard_response=data.lloq_internal_standard, analyte_limit_percent=analyte_limit_pct,
                       internal_standard_limit_percent=internal_standard_limit_pct, min_lots=min_lots,
                       min_fraction=min_fraction)


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
