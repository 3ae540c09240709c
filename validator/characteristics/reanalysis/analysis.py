"""Incurred-sample reanalysis judged: the fraction of repeats within the limit (ICH M10)."""

from __future__ import annotations

from ...criteria import Criterion
from ...sector.bioanalytical import IncurredSampleReanalysis, incurred_sample_reanalysis

__all__ = ["IncurredSampleReanalysis", "reanalysis", "reanalysis_criteria"]


def reanalysis(samples, original, repeat, *, limit_pct: float, min_fraction: float, study_samples: int | None = None,
               size_rule: str = "none") -> IncurredSampleReanalysis:
    """% difference = 100 (repeat − original) / mean of the two, per sample; see
    :func:`validator.sector.bioanalytical.incurred_sample_reanalysis`."""
    return incurred_sample_reanalysis(original, repeat, limit_percent=limit_pct, min_fraction=min_fraction,
                                      sample=list(samples), study_samples=study_samples, size_rule=size_rule)


def reanalysis_criteria(result: IncurredSampleReanalysis) -> tuple[Criterion, ...]:
    """``incurred-sample-reanalysis``: the fraction within ±limit at least ``min_fraction`` (compared exactly),
    among the judged samples; the result's notes (samples left out, few samples) stand beside the verdict."""
    remark = "; ".join(result.notes)
    return (Criterion("incurred-sample-reanalysis",
                      f"fraction of reanalysed samples whose repeat lies within ±{result.limit_percent:g} % of the "
                      f"mean of the two results at least {result.min_fraction:.4g}",
                      result.fraction_within, result.min_fraction, result.passed,
                      (f"note: {remark}" if remark else "") if result.passed is not None
                      else f"not applicable: {result.reason}"),)
