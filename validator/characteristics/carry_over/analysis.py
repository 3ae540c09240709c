"""Carry-over judged (ICH M10): blanks after the highest calibrator against the LLOQ (and IS) response."""

from __future__ import annotations

from ...criteria import Criterion, at_most
from ...sector.bioanalytical import CarryOver, carry_over

__all__ = ["CarryOver", "assess_carry_over", "carry_over_criteria"]


def assess_carry_over(data, *, analyte_limit_pct: float, internal_standard_limit_pct: float) -> CarryOver:
    """% = 100 × blank response / mean LLOQ response per blank; see
    :func:`validator.sector.bioanalytical.carry_over`."""
    return carry_over(data.blank, data.lloq, blank_internal_standard=data.blank_internal_standard,
                      internal_standard_response=data.lloq_internal_standard,
                      analyte_limit_percent=analyte_limit_pct, internal_standard_limit_percent=internal_standard_limit_pct)


def carry_over_criteria(result: CarryOver) -> tuple[Criterion, ...]:
    """``carry-over`` (largest blank, % of the LLOQ response) and, with IS responses,
    ``carry-over-internal-standard``."""
    out = [Criterion("carry-over", f"largest blank after the highest calibrator at most {result.analyte_limit_percent:g} % "
                     "of the mean LLOQ analyte response", result.max_analyte_percent, result.analyte_limit_percent,
                     at_most(result.max_analyte_percent, result.analyte_limit_percent))]
    if result.max_internal_standard_percent is not None:
        out.append(Criterion("carry-over-internal-standard",
                             f"largest IS response in those blanks at most {result.internal_standard_limit_percent:g} % "
                             "of the mean IS response", result.max_internal_standard_percent,
                             result.internal_standard_limit_percent,
                             at_most(result.max_internal_standard_percent, result.internal_standard_limit_percent)))
    return tuple(out)
