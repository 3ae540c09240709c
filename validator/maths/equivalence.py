"""Equivalence: two one-sided t tests (TOST) for a mean, and an upper confidence bound on an RSD.

Nothing here reads files or formats text. Degenerate but legal data give a
result whose values are ``None`` with a ``reason``; invalid parameters raise
:class:`ValueError` quoting the value and the allowed range.

References
----------
.. [Schuirmann] Schuirmann, D. J. (1987). A comparison of the two one-sided
   tests procedure and the power approach for assessing the equivalence of
   average bioavailability. J. Pharmacokin. Biopharm. 15, 657-680.
.. [USP1210] USP general chapter <1210>, Statistical tools for procedure
   validation (equivalence of mean bias or recovery by TOST; the
   (1 - 2 alpha) confidence interval inside the acceptance range).
.. [ICHQ2] ICH Q2(R2) (2023), Validation of analytical procedures, section on
   combined accuracy and precision.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .._common import ConfidenceInterval, no_relative_sd, open_unit, positive, quiet_numpy
from .distributions import chi2_ppf, t_cdf, t_ppf, t_sf

__all__ = ["EquivalenceTest", "RsdBound", "tost_mean", "tost_two_samples", "rsd_upper_bound"]


@dataclass(frozen=True)
class EquivalenceTest:
    """TOST result: equivalence is concluded when ``pvalue`` <= ``alpha``.

    ``statistic_lower`` tests H0: mean <= low, ``statistic_upper`` H0: mean >= high;
    ``pvalue`` is the larger of the two one-sided p-values; ``ci`` is the
    (1 - 2 alpha) interval, which lies inside [low, high] exactly when
    equivalence is concluded.
    """

    method: str
    estimate: float | None
    standard_error: float | None
    df: float | None
    low: float
    high: float
    statistic_lower: float | None
    statistic_upper: float | None
    pvalue_lower: float | None
    pvalue_upper: float | None
    pvalue: float | None
    ci: ConfidenceInterval | None
    alpha: float
    equivalent: bool | None
    reason: str = ""


@dataclass(frozen=True)
class RsdBound:
    """One-sided upper confidence bound on the RSD (in %), and its comparison to a limit."""

    rsd_percent: float | None
    upper_bound_percent: float | None
    df: int
    confidence: float
    limit_percent: float | None
    within_limit: bool | None
    reason: str = ""


def _margins(low, high):
    try:
        lo, hi = float(low), float(high)
    except (TypeError, ValueError):
        raise ValueError(f"low and high must be numbers, got {low!r} and {high!r}") from None
    if not (math.isfinite(lo) and math.isfinite(hi) and lo < hi):
        raise ValueError(f"low and high must be finite with low < high, got {low!r} and {high!r}")
    return lo, hi


def _sample(name, values) -> np.ndarray:
    try:
        x = np.asarray(values, dtype=float).ravel()
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a sequence of numbers, got {values!r}") from None
    if not np.all(np.isfinite(x)):
        raise ValueError(f"{name} must hold finite numbers only, got {x[~np.isfinite(x)][0]!r}")
    return x


def _tost(method, estimate, se, df, lo, hi, alpha) -> EquivalenceTest:
    t_lower = (estimate - lo) / se
    t_upper = (estimate - hi) / se
    p_lower = float(t_sf(t_lower, df))
    p_upper = float(t_cdf(t_upper, df))
    q = float(t_ppf(1.0 - alpha, df))
    ci = ConfidenceInterval(estimate - q * se, estimate + q * se, 1.0 - 2.0 * alpha)
    p = max(p_lower, p_upper)
    return EquivalenceTest(method, estimate, se, float(df), lo, hi, float(t_lower), float(t_upper),
                           p_lower, p_upper, p, ci, alpha, bool(p <= alpha))


def _na(method, lo, hi, alpha, reason, estimate=None):
    return EquivalenceTest(method, estimate, None, None, lo, hi, None, None, None, None, None, None, alpha, None,
                           reason)


def tost_mean(values, low: float, high: float, *, alpha: float = 0.05) -> EquivalenceTest:
    """TOST that the mean of ``values`` (a recovery in %, a bias) lies in [low, high].

    Notes
    -----
    With mean m, s and n results, SE = s / sqrt(n), df = n - 1:
    t_L = (m - low) / SE, p_L = P(T_df >= t_L); t_U = (m - high) / SE,
    p_U = P(T_df <= t_U); p = max(p_L, p_U) [Schuirmann]. The (1 - 2 alpha)
    interval m +/- t_{1-alpha; df} SE lies inside [low, high] exactly when
    p <= alpha [USP1210].
    """
    alpha = open_unit("alpha", alpha, 0.5)
    lo, hi = _margins(low, high)
    x = _sample("values", values)
    method = "TOST, one sample"
    if x.size < 2:
        return _na(method, lo, hi, alpha, f"the test needs at least 2 results, got {x.size}")
    mean = float(x.mean())
    sd = float(np.std(x - mean, ddof=1))
    if sd == 0.0:
        return _na(method, lo, hi, alpha, "all results are equal: the standard error is 0", mean)
    with quiet_numpy():
        return _tost(method, mean, sd / math.sqrt(x.size), x.size - 1, lo, hi, alpha)


def tost_two_samples(x, y, low: float, high: float, *, alpha: float = 0.05,
                     equal_variances: bool = True) -> EquivalenceTest:
    """TOST that mean(x) - mean(y) lies in [low, high] (independent samples).

    Notes
    -----
    Pooled: SE = s_p sqrt(1/n_x + 1/n_y), df = n_x + n_y - 2. Welch:
    SE = sqrt(s_x^2/n_x + s_y^2/n_y), df by Welch-Satterthwaite. Then as
    :func:`tost_mean`.
    """
    alpha = open_unit("alpha", alpha, 0.5)
    lo, hi = _margins(low, high)
    a, b = _sample("x", x), _sample("y", y)
    method = "TOST, two samples, " + ("pooled variance" if equal_variances else "Welch")
    if a.size < 2 or b.size < 2:
        return _na(method, lo, hi, alpha, f"each sample needs at least 2 results, got {a.size} and {b.size}")
    va, vb = float(np.var(a - a.mean(), ddof=1)), float(np.var(b - b.mean(), ddof=1))
    diff = float(a.mean() - b.mean())
    if equal_variances:
        df = a.size + b.size - 2
        pooled = ((a.size - 1) * va + (b.size - 1) * vb) / df
        se2 = pooled * (1.0 / a.size + 1.0 / b.size)
    else:
        wa, wb = va / a.size, vb / b.size
        se2 = wa + wb
        df = se2 ** 2 / (wa ** 2 / (a.size - 1) + wb ** 2 / (b.size - 1)) if se2 > 0 else None
    if se2 == 0.0:
        return _na(method, lo, hi, alpha, "both samples are constant: the standard error is 0", diff)
    with quiet_numpy():
        return _tost(method, diff, math.sqrt(se2), df, lo, hi, alpha)


def rsd_upper_bound(values, *, confidence: float = 0.95, limit_percent: float | None = None) -> RsdBound:
    """One-sided upper confidence bound on the relative SD, in % of the mean.

    Notes
    -----
    RSD = 100 s / m; the bound is 100 s sqrt((n - 1) / chi2_{1-confidence; n-1}) / m,
    the chi-square upper bound on sigma divided by the observed mean (the
    uncertainty of the mean is neglected, which is adequate when the RSD is
    small). ``within_limit`` is True when the bound is at most ``limit_percent``. A mean that is
    not positive gives no RSD (``_common.no_relative_sd``).
    """
    conf = open_unit("confidence", confidence)
    limit = None if limit_percent is None else positive("limit_percent", limit_percent)
    x = _sample("values", values)
    df = max(x.size - 1, 0)
    if x.size < 2:
        return RsdBound(None, None, df, conf, limit, None, f"an RSD needs at least 2 results, got {x.size}")
    mean = float(x.mean())
    if no_relative_sd(mean):
        return RsdBound(None, None, df, conf, limit, None, no_relative_sd(mean))
    sd = float(np.std(x - mean, ddof=1))
    rsd = 100.0 * sd / mean
    bound = rsd * math.sqrt(df / chi2_ppf(1.0 - conf, df))
    return RsdBound(rsd, bound, df, conf, limit, None if limit is None else bool(bound <= limit))
