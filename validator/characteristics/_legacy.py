"""The registry entry of precision, not yet moved into a package of its own.

Its study-file table is still declared in ``validator/inputs/study.py``, its data still read by
``validator/inputs/loading.py``, its sentences and figure are in ``report/text.py`` and
``report/plots.py``. Moving it out means a package as ``validator/characteristics/recovery/``
(see DEVELOPERS.md, "Adding a characteristic") and deleting this module.
"""

from __future__ import annotations

import numpy as np

from ..criteria import precision_level_criteria
from ._entry import Assessment, Characteristic
from .precision import PrecisionLevel, assess_precision_level

__all__ = ["PRECISION", "precision_level_failed"]


def _precision(ctx) -> Assessment | None:
    p = ctx.data.precision
    if p is None:
        return None
    levels = tuple(assess_precision_level(level, p.found[p.level == level],
                                          [s for s, lv in zip(p.series, p.level) if lv == level],
                                          alpha=ctx.alpha, unit=ctx.unit, offset=p.offset)
                   for level in np.unique(p.level))
    return Assessment(levels, tuple(c for lv in levels for c in _precision_criteria(ctx, lv)))


def _precision_criteria(ctx, lv: PrecisionLevel) -> tuple:
    return precision_level_criteria(lv, ctx.config.precision.limits_for(lv.level))


def precision_level_failed(ctx, lv: PrecisionLevel) -> bool:
    """Whether a precision level fails one of its own criteria (for the working range)."""
    return any(c.passed is False for c in _precision_criteria(ctx, lv))



PRECISION = Characteristic("precision", "Precision", _precision, fragment="characteristics/precision.html.j2")
