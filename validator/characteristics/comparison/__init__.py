"""Method comparison on shared samples: Passing-Bablok, Deming and Bland-Altman, judged on the
Passing-Bablok intervals.

Parts: :mod:`.settings` (table, loader), :mod:`.analysis` (pure, criteria). Its dossier
section (a study-level section of ``dossier.html.j2``) and its figure (``report/plots.py``,
drawn from the result's differences, which results.json does not hold) are not moved yet.
"""

from __future__ import annotations

from .._entry import Assessment, Characteristic
from . import presentation, settings
from .analysis import ComparisonPoint, ComparisonResult, assess_comparison, comparison_criteria

__all__ = ["ENTRY", "ComparisonPoint", "ComparisonResult", "assess_comparison", "comparison_criteria"]


def assess(ctx) -> Assessment[ComparisonResult] | None:
    data = ctx.data_of(ENTRY)
    if data is None:
        return None
    cc = ctx.settings_of(ENTRY)
    result = assess_comparison(data.samples, data.reference, data.test, error_ratio=cc.error_ratio,
                               slope_limits=cc.slope_limits, intercept_limits=cc.intercept_limits,
                               percentage=cc.percentage_differences, alpha=ctx.alpha)
    return Assessment(result, comparison_criteria(result, cc.slope_limits, cc.intercept_limits))


ENTRY: Characteristic[ComparisonResult] = Characteristic(
    "comparison", "Method comparison", assess, settings=settings.ComparisonSection, load=settings.load,
    result_types=(ComparisonResult,), figures=presentation.figures, fragment="characteristics/comparison.html.j2", placement="study-before")
