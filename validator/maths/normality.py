"""Normality: the Shapiro-Wilk W test and the normal probability (Q-Q) plot.

Written with numpy so that a run does not import ``scipy.stats`` (about 0.5 s) for them; the
tests compare both with ``scipy.stats.shapiro`` and ``scipy.stats.probplot`` on seeded samples of
3 to 5000 values (``tests/test_normality.py``).

References
----------
.. [Royston-1992] Royston, P. (1992). Approximating the Shapiro-Wilk W-test for non-normality.
   Statistics and Computing 2(3), 117-119.
.. [Royston-1995] Royston, P. (1995). Remark AS R94: A remark on algorithm AS 181: The W-test for
   normality. Applied Statistics 44(4), 547-551.
.. [AS-111] Beasley, J. D. and Springer, S. G. (1977). Algorithm AS 111: The percentage points of
   the normal distribution. Applied Statistics 26(1), 118-121.
.. [AS-66] Hill, I. D. (1973). Algorithm AS 66: The normal integral. Applied Statistics 22(3),
   424-427.
.. [Filliben] Filliben, J. J. (1975). The probability plot correlation coefficient test for
   normality. Technometrics 17(1), 111-117.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .distributions import norm_ppf

__all__ = ["ShapiroWilk", "ProbabilityPlot", "shapiro_wilk", "probability_plot"]


@dataclass(frozen=True)
class ShapiroWilk:
    """The Shapiro-Wilk statistic W and its p-value (small W: evidence against normality)."""

    statistic: float
    pvalue: float


@dataclass(frozen=True)
class ProbabilityPlot:
    """Ordered values against normal quantiles, and the least-squares line through them."""

    theoretical: np.ndarray
    ordered: np.ndarray
    slope: float
    intercept: float


def _horner(coefficients: tuple[float, ...], x: float) -> float:
    """c0 + c1 x + c2 x^2 + ..., evaluated from the highest power down (as in [Royston-1995])."""
    *rest, last = coefficients
    if not rest:
        return last
    p = x * last
    for c in reversed(rest[1:]):
        p = (p + c) * x
    return rest[0] + p


# [Royston-1992] eq. for the two largest coefficients, and the p-value's normalising
# transformation (mean and log sd of log(1 - W), or of -log(gamma - log(1 - W)) for n <= 11),
# as tabulated in [Royston-1995].
_C1 = (0.0, 0.221157, -0.147981, -0.207119e1, 0.4434685e1, -0.2706056e1)
_C2 = (0.0, 0.42981e-1, -0.293762, -0.1752461e1, 0.5682633e1, -0.3582633e1)
_C3 = (0.5440, -0.39978, 0.25054e-1, -0.6714e-3)
_C4 = (0.13822e1, -0.77857, 0.62767e-1, -0.20322e-2)
_C5 = (-0.15861e1, -0.31082, -0.83751e-1, 0.38915e-2)
_C6 = (-0.4803, -0.82676e-1, 0.30302e-2)
_GAMMA = (-0.2273e1, 0.459)
_TINY_RANGE = 1e-19
_SMALLEST_P = 1e-19


def _normal_quantile_as111(p: float) -> float:
    """The normal quantile of [AS-111] (about 7 significant digits), as [Royston-1995] uses it."""
    q = p - 0.5
    if abs(q) <= 0.42:
        r = q * q
        return q * (((-25.44106049637 * r + 41.39119773534) * r - 18.61500062529) * r + 2.50662823884) / \
            ((((3.13082909833 * r - 21.06224101826) * r + 23.08336743743) * r - 8.47351093090) * r + 1.0)
    r = 1 - p if q > 0 else p
    if not r > 0:
        return 0.0
    r = math.sqrt(-math.log(r))
    value = (((2.32121276858 * r + 4.85014127135) * r - 2.29796479134) * r - 2.78718931138) / \
        ((1.63706781897 * r + 3.54388924762) * r + 1.0)
    return -value if q < 0 else value


def _normal_upper_tail_as66(z: float) -> float:
    """P(Z > z) by [AS-66] (the 2001 extended range), as [Royston-1995] uses it."""
    upper = True
    if not z > 0:
        upper, z = False, -z
    if not (z <= 7.0 or (upper and z <= 38.0)):
        return 0.0 if upper else 1.0
    y = 0.5 * z * z
    if z <= 1.28:
        tail = 0.5 - z * (0.398942280444 - 0.399903438504 * y /
                          (y + 5.75885480458 - 29.8213557808 / (y + 2.62433121679 + 48.6959930692 / (y + 5.92885724438))))
    else:
        tail = 0.398942280385 * math.exp(-y) / (
            z - 3.8052e-8 + 1.00000615302 / (z + 3.98064794e-4 + 1.98615381364 / (
                z - 0.151679116635 + 5.29330324926 / (z + 4.8385912808 - 15.1508972451 / (
                    z + 0.742380924027 + 30.789933034 / (z + 3.99019417011))))))
    return tail if upper else 1.0 - tail


def _running_sum(values: np.ndarray) -> float:
    return float(np.cumsum(values)[-1])


def _coefficients(n: int) -> np.ndarray:
    """The n // 2 positive Shapiro-Wilk coefficients a_n, a_(n-1), ... of [Royston-1992]."""
    half = n // 2
    if n == 3:
        return np.array([math.sqrt(2) / 2])
    an = float(n)
    m = np.array([_normal_quantile_as111((i + 1 - 0.375) / (an + 0.25)) for i in range(half)])
    summ2 = 0.0
    for value in m:                       # in order, as the published algorithm sums
        summ2 += value ** 2
    summ2 *= 2.0
    ssumm2 = math.sqrt(summ2)
    u = 1 / math.sqrt(an)
    a = m.copy()
    a1 = _horner(_C1, u) - m[0] / ssumm2
    if n > 5:
        a2 = -m[1] / ssumm2 + _horner(_C2, u)
        fac = math.sqrt((summ2 - 2 * m[0] ** 2 - 2 * m[1] ** 2) / (1 - 2 * a1 ** 2 - 2 * a2 ** 2))
        a[1] = a2
        first = 2
    else:
        fac = math.sqrt((summ2 - 2 * m[0] ** 2) / (1 - 2 * a1 ** 2))
        first = 1
    a[0] = a1
    a[first:] = a[first:] * (-1.0 / fac)
    return a


def shapiro_wilk(x) -> ShapiroWilk:
    """Shapiro-Wilk W of a sample of 3 or more values, with Royston's p-value.

    Notes
    -----
    W is the squared correlation between the ordered sample and the coefficients a_i of
    [Royston-1992] (the two largest from polynomials in 1/sqrt(n), the others proportional to the
    normal scores m_i = Phi^-1((i - 3/8)/(n + 1/4))), computed as 1 - W to keep its precision near
    1. For n = 3 the p-value is exact, 1 - (6/pi) arccos(sqrt(W)); otherwise log(1 - W) (for
    n <= 11, -log(gamma - log(1 - W)) with gamma = -2.273 + 0.459 n) is referred to a normal
    distribution whose mean and standard deviation are polynomials in n or log n
    [Royston-1992], [Royston-1995] (algorithm AS R94, which these steps follow, with the
    normal functions it uses, [AS-111] and [AS-66]). The sample is shifted by one of its own
    values before the arithmetic (W does not change) to keep the sums small. Data with zero
    range give W = 1, p = 1 (AS R94's fault 6; the callers rule this case out first); any NaN
    gives NaN.
    """
    x = np.ravel(np.asarray(x, dtype=float))
    n = x.size
    if n < 3:
        raise ValueError(f"the Shapiro-Wilk test needs at least 3 values, got {n}")
    if np.isnan(x).any():
        return ShapiroWilk(math.nan, math.nan)
    y = np.sort(x) - x[n // 2]
    a = _coefficients(n)
    spread = y[-1] - y[0]
    if spread < _TINY_RANGE:
        return ShapiroWilk(1.0, 1.0)
    half = n // 2
    coefficient = np.zeros(n)              # antisymmetric: -a_i for the lowest values, +a_i for the highest
    coefficient[:half] = -a
    coefficient[n - half:] = a[::-1]
    scaled = y / spread
    # the sums are taken in order (np.cumsum), as the published algorithm takes them
    ca = coefficient - _running_sum(coefficient) / n
    cx = scaled - _running_sum(scaled) / n
    ssa, ssx, sax = _running_sum(ca * ca), _running_sum(cx * cx), _running_sum(ca * cx)
    root = math.sqrt(ssa * ssx)
    w1 = (root - sax) * (root + sax) / (ssa * ssx)        # 1 - W
    w = 1 - w1
    if n == 3:
        if w < 0.75:                       # W >= 3/4 in theory; rounding only
            return ShapiroWilk(0.75, 0.0)
        return ShapiroWilk(w, 1.0 - 6 / math.pi * math.acos(math.sqrt(w)))
    t = math.log(w1)
    log_n = math.log(n)
    if n <= 11:
        gamma = _horner(_GAMMA, float(n))
        if t >= gamma:
            return ShapiroWilk(w, _SMALLEST_P)
        t = -math.log(gamma - t)
        mean, sd = _horner(_C3, float(n)), math.exp(_horner(_C4, float(n)))
    else:
        mean, sd = _horner(_C5, log_n), math.exp(_horner(_C6, log_n))
    return ShapiroWilk(w, _normal_upper_tail_as66((t - mean) / sd))


def probability_plot(x) -> ProbabilityPlot:
    """Normal probability plot of ``x``: ordered values against normal order-statistic medians.

    Notes
    -----
    The medians of the uniform order statistics are approximated as [Filliben]:
    m_n = 0.5^(1/n), m_1 = 1 - m_n, m_i = (i - 0.3175)/(n + 0.365) otherwise; the theoretical
    quantiles are Phi^-1(m_i). The line is the least-squares fit of the ordered values on them
    (slope = cov/var with population moments, intercept = mean(y) - slope mean(x)). With one
    value the slope is NaN (0/0).
    """
    x = np.ravel(np.asarray(x, dtype=float))
    n = x.size
    if n == 0:
        return ProbabilityPlot(x, x, math.nan, math.nan)
    v = np.empty(n)
    v[-1] = 0.5 ** (1.0 / n)
    v[0] = 1 - v[-1]
    v[1:-1] = (np.arange(2, n) - 0.3175) / (n + 0.365)
    theoretical = np.asarray(norm_ppf(v), dtype=float)
    ordered = np.sort(x)
    ssxm, ssxym, _, _ = np.cov(theoretical, ordered, bias=1).flat
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = ssxym / ssxm
    intercept = np.mean(ordered) - slope * np.mean(theoretical)
    return ProbabilityPlot(theoretical, ordered, float(slope), float(intercept))
