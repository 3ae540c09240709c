"""Helpers shared by the sector modules: argument checks and small summaries.

Nothing here reads files or prints; invalid parameters raise ``ValueError``
quoting the bad value and the allowed range.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._common import ConfidenceInterval, no_relative_sd, quiet_numpy
from ..maths.distributions import t_isf

__all__ = ["MAX_MAGNITUDE", "OUT_OF_RANGE", "NO_SPREAD_CV", "as_float_array", "labels", "check_count", "check_fraction", "check_positive", "check_level", "mean_sd_cv",
           "MeanSummary", "fieller_ratio_interval", "t_quantile_two_sided", "number_id"]


# results beyond this magnitude are refused: their squares and sums stay far inside the float range
MAX_MAGNITUDE = 1e100
OUT_OF_RANGE = "the numbers lie outside the floating-point range this computation can handle"
# why a CV of identical results (SD exactly 0) is not judged: not shown is not passed (as precision)
NO_SPREAD_CV = ("the results show no spread at all (SD exactly 0): the spread is below the resolution of the "
                "reported values, so the CV is not shown")


def as_float_array(values, name: str, *, allow_nan: bool = False) -> np.ndarray:
    """A 1-D float array of finite numbers within +/-MAX_MAGNITUDE; ``ValueError`` naming ``name``
    and the value otherwise."""
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError) as exc:
        raise ValueError(f"{name}: expected numbers, got {values!r:.80}") from exc
    if arr.ndim != 1:
        raise ValueError(f"{name}: expected a one-dimensional sequence, got shape {arr.shape}")
    with np.errstate(invalid="ignore"):
        too_large = np.abs(arr) > MAX_MAGNITUDE
    bad = (np.isinf(arr) | too_large) if allow_nan else (~np.isfinite(arr) | too_large)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        allowed = (f"finite numbers within +/-{MAX_MAGNITUDE:g}"
                   + (" or NaN (no numerical result)" if allow_nan else ""))
        raise ValueError(f"{name}: value {float(arr[i])!r} at position {i} is not allowed; "
                         f"allowed: {allowed}")
    return arr


def _is_number(value) -> bool:
    return isinstance(value, (int, float, np.integer, np.floating)) and not isinstance(value, bool)


def labels(values, n: int, name: str) -> np.ndarray:
    """One text label per result (lot, sample, ...), as an object array of ``n`` strings."""
    arr = np.asarray([str(v) for v in values], dtype=object)
    if arr.size != n:
        raise ValueError(f"{name}: expected {n} labels (one per result), got {arr.size}")
    return arr


def check_count(value, name: str, minimum: int = 1) -> int:
    """A whole number of at least ``minimum`` (a count of lots, replicates, ...)."""
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < minimum:
        raise ValueError(f"{name} must be an integer >= {minimum}, got {value!r}")
    return int(value)


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

    ``sd`` is ``None`` for fewer than two results; ``cv_percent`` (100 sd / mean) is ``None``
    when ``sd`` is or the mean is not positive (``_common.no_relative_sd`` says why). A statistic that overflows the
    floating-point range is ``None`` too (callers state the reason).
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
    if not math.isfinite(mean):
        return MeanSummary(n, None, None, None)
    if sd is not None and not math.isfinite(sd):
        sd = None
    cv = None if sd is None or no_relative_sd(mean) else 100.0 * sd / mean
    if cv is not None and not math.isfinite(cv):
        cv = None
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
    (a - R b)^2 <= t^2 (v11 - 2 R v12 + R^2 v22). With r = a/b and the scaled
    (co)variances A = v11/b^2, C = v22/b^2, D = v12/b^2, g = t^2 C, it is
    [r - t^2 D -/+ t sqrt(A - 2 r D + r^2 C - t^2 (A C - D^2))] / (1 - g),
    bounded exactly when g < 1. (This scaled form avoids the cancellation of
    the quadratic's coefficients a^2, b^2 at extreme magnitudes.)

    References
    ----------
    Fieller, E. C. (1954). Some problems in interval estimation. J. R. Stat.
    Soc. B 16, 175-185.
    """
    a, b = float(numerator), float(denominator)
    v11, v22, v12, t = float(var_numerator), float(var_denominator), float(covariance), float(t_quantile)
    out = "Fieller interval: the numbers lie outside the floating-point range"
    if b == 0:
        return None, ("Fieller interval unbounded: the denominator is not significantly different "
                      "from zero at this level")
    r = a / b
    scaled_a, scaled_c, scaled_d = v11 / b / b, v22 / b / b, v12 / b / b
    g = t * t * scaled_c
    if not all(math.isfinite(v) for v in (r, scaled_a, scaled_c, scaled_d, g)):
        return None, out
    if g >= 1:
        return None, ("Fieller interval unbounded: the denominator is not significantly different "
                      "from zero at this level")
    inner = (scaled_a - 2 * r * scaled_d + r * r * scaled_c
             - t * t * (scaled_a * scaled_c - scaled_d * scaled_d))
    if not math.isfinite(inner):
        return None, out
    if inner < 0:         # only by rounding when g < 1 (the quadratic form is then positive)
        inner = 0.0
    centre = r - t * t * scaled_d
    half = t * math.sqrt(inner)
    low, high = (centre - half) / (1 - g), (centre + half) / (1 - g)
    if not (math.isfinite(low) and math.isfinite(high)):
        return None, out
    return ConfidenceInterval(low=low, high=high, level=level), ""


def number_id(value: float) -> str:
    """A number as written in a criterion id: ``f"{value:g}"`` when that reads back as the same number,
    else the shortest text that does (``repr``), so that two different nominals never share an id."""
    short = f"{float(value):g}"
    return short if float(short) == float(value) else repr(float(value))


def t_quantile_two_sided(level: float, df: float) -> float:
    return float(t_isf((1.0 - level) / 2.0, df))
