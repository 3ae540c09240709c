"""Matrix effect (SANTE/11312/2021 slope ratio; ICH M10 matrix lots and IS-normalised matrix factor):
the ``[matrix_effect]`` section."""

from __future__ import annotations

# the study schema before the settings that extend it (it imports them in turn)
from ...inputs import study as _study  # noqa: F401
from .analysis import MatrixEffect, matrix_effect, matrix_effect_criteria
from .settings import MatrixEffectData, MatrixEffectSection, load

__all__ = ["NAME", "TITLE", "SETTINGS", "RESULT_TYPES", "FRAGMENT", "PRESENTATION", "load", "assess"]

NAME = "matrix_effect"
TITLE = "Matrix effect"
SETTINGS = MatrixEffectSection
RESULT_TYPES = (MatrixEffect,)
FRAGMENT = f"characteristics/{NAME}.html.j2"
PRESENTATION = f"{__name__}.presentation"      # sentences and figures (imported by the report only)


def assess(ctx):
    """The analyte's matrix effect and its criteria; ``None`` when it has no matrix-effect data.
    The matrix-matched calibration is the analyte's ``[calibration]`` data."""
    from ...engine import Assessment

    data: MatrixEffectData | None = ctx.data.characteristic_data.get(NAME)
    s: MatrixEffectSection | None = getattr(ctx.config, NAME)
    if data is None or s is None:
        return None
    cal = ctx.data.calibration
    result = matrix_effect(data, cal.concentration, cal.response, level=1 - ctx.alpha, variance=s.variance,
                           limit_pct=s.limit_pct, lot_max_bias_pct=s.lot_max_bias_pct, lot_max_cv_pct=s.lot_max_cv_pct,
                           min_lots=s.min_lots, min_replicates=s.min_replicates, factor_max_cv_pct=s.factor_max_cv_pct)
    return Assessment(result, matrix_effect_criteria(result, judge_slope_ratio=s.judge_slope_ratio, limit_pct=s.limit_pct))
