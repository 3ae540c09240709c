"""Helpers shared by the sector modules: argument checks and small summaries.

Nothing here reads files or prints; invalid parameters raise ``ValueError``
quoting the bad value and the allowed range.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from .._common import ConfidenceInterval, quiet_numpy

__all__ = ["as_float_array", "check_fraction", "check_positive", "check_level", "mean_sd_cv",
           "MeanSummary", "fieller_ratio_interval", "t_quantile_two_sided"]


def as_float_array(values, name: str, *, allow_nan: bool = False) -> np.ndarray:
    """A 1-D float array; ``ValueError`` naming ``name`` for anything else."""
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{name}: expected numbers, got {values!r:.80}") from exc
    if arr.ndim != 1:
        raise ValueError(f"{name}: expected a one-dimensional sequence, got shape {arr.shape}")
    bad = np.isinf(arr) if allow_nan else ~np.isfinite(arr)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        allowed = "finite numbers or NaN (no numerical result)" if allow_nan else "finite numbers"
        raise ValueError(f"{name}: value {float(arr[i])!r} at position {i} is not allowed; "
                         f"allowed: {allowed}")
    return arr


def _is_number(value) -> bool:
    return isinstance(value, (int, float, np.integer, np.floating)) and not isinstance(value, bool)


def check_fraction(value, name: str, *, low: float = 0.0, high: float = 1.0,
                   low_open: bool = True, high_open: bool = True) -> float:
    """``value`` as float if it lies in the stated interval, else ``ValueError``."""
    if not _is_number(value) or not math.isfinite(value):
        raise ValueError(f"{name} must be a finite number, got {value!r}")
    ok_low = value > low if low_open else value >= low
    ok_high = value < high if high_open else value <= high
    if not (ok_low and ok_high):
        lo = "(" if low_open else "["
        hi = ")" if high_open else "]"
        raise ValueError(f"{name} must lie in {lo}{low}, {high}{hi}, got {value!r}")
    return float(value)


def check_positive(value, name: str, *, allow_zero: bool = False) -> float:
    """``value`` as float if it is finite and > 0 (or >= 0), else ``ValueError``."""
    if not _is_number(value) or not math.isfinite(value) or value < 0 or (value == 0 and not allow_zero):
        rng = "a finite number >= 0" if allow_zero else "a finite number > 0"
        raise ValueError(f"{name} must be {rng}, got {value!r}")
    return float(value)


def check_level(level) -> float:
    """A two-sided confidence level in (0.5, 1)."""
    return check_fraction(level, "level", low=0.5, high=1.0)


@dataclass(frozen=True)
class MeanSummary:
    """Mean, sample SD (n - 1) and CV of a set of results.

    ``sd`` is ``None`` for fewer than two results; ``cv_percent`` is ``None``
    when ``sd`` is or the mean is zero.
    """

    n: int
    mean: float | None
    sd: float | None
    cv_percent: float | None


def mean_sd_cv(values: np.ndarray) -> MeanSummary:
    """Summary of already-checked finite values (SD exactly 0 when all values are equal)."""
    n = int(values.size)
    if n == 0:
        return MeanSummary(0, None, None, None)
    with quiet_numpy():
        mean = float(np.mean(values))
        # identical values have SD 0 exactly (np.std would return rounding noise about the mean)
        sd = (0.0 if np.ptp(values) == 0 else float(np.std(values, ddof=1))) if n >= 2 else None
    cv = None if sd is None or mean == 0 else 100.0 * sd / abs(mean)
    return MeanSummary(n, mean, sd, cv)


def fieller_ratio_interval(numerator: float, denominator: float, var_numerator: float,
                           var_denominator: float, covariance: float, t_quantile: float,
                           level: float) -> tuple[ConfidenceInterval | None, str]:
    """Fieller's confidence interval for ``numerator / denominator``.

    Returns ``(interval, reason)``; ``interval`` is ``None`` with a reason when
    the denominator is not significantly different from zero at this level
    (the Fieller set is then unbounded).

    Notes
    -----
    With a = numerator, b = denominator, v11, v22, v12 their (co)variances
    and t the quantile, the interval is the set of R with
    (a - R b)^2 <= t^2 (v11 - 2 R v12 + R^2 v22), i.e. the roots of
    (b^2 - t^2 v22) R^2 - 2 (a b - t^2 v12) R + (a^2 - t^2 v11) = 0,
    bounded exactly when g = t^2 v22 / b^2 < 1.

    References
    ----------
    Fieller, E. C. (1954). Some problems in interval estimation. J. R. Stat.
    Soc. B 16, 175-185.
    """
    a, b, t2 = numerator, denominator, t_quantile ** 2
    if b == 0 or t2 * var_denominator >= b * b:
        return None, ("Fieller interval unbounded: the denominator is not significantly different "
                      "from zero at this level")
    qa = b * b - t2 * var_denominator
    qb = a * b - t2 * covariance
    qc = a * a - t2 * var_numerator
    disc = qb * qb - qa * qc
    if not all(math.isfinite(v) for v in (qa, qb, qc, disc)):
        return None, "Fieller interval: the numbers lie outside the floating-point range"
    if disc < 0:          # cannot happen when qa > 0 (the estimate itself satisfies the inequality)
        return None, "Fieller interval: negative discriminant"
    root = math.sqrt(disc)
    low, high = (qb - root) / qa, (qb + root) / qa
    if not (math.isfinite(low) and math.isfinite(high)):
        return None, "Fieller interval: the numbers lie outside the floating-point range"
    return ConfidenceInterval(low=low, high=high, level=level), ""


def t_quantile_two_sided(level: float, df: float) -> float:
    return float(stats.t.isf((1.0 - level) / 2.0, df))
