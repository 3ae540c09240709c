"""Comparison of two methods on the same samples: Passing-Bablok, Deming, Bland-Altman.

Pure functions over arrays (x = reference method, y = test method); the
``[comparison]`` section of a study runs :func:`assess_comparison` per analyte.

References
----------
.. [PB1983] Passing, H. and Bablok, W. (1983). A new biometrical procedure
   for testing the equality of measurements from two different analytical
   methods. J. Clin. Chem. Clin. Biochem. 21, 709-720.
.. [Linnet1990] Linnet, K. (1990). Estimation of the linear relationship
   between the measurements of two methods with proportional errors.
   Stat. Med. 9, 1463-1473 (jackknife standard errors for Deming regression).
.. [BA1999] Bland, J. M. and Altman, D. G. (1999). Measuring agreement in
   method comparison studies. Stat. Methods Med. Res. 8, 135-160.
.. [EP09] CLSI EP09c, Measurement procedure comparison and bias estimation
   using patient samples, 3rd ed. (2018).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

from ._common import ConfidenceInterval

__all__ = ["PassingBablok", "Deming", "BlandAltman", "passing_bablok", "deming", "bland_altman"]


@dataclass(frozen=True)
class PassingBablok:
    slope: float
    slope_ci: ConfidenceInterval
    intercept: float
    intercept_ci: ConfidenceInterval
    n_slopes: int
    offset_k: int
    cusum_statistic: float | None
    cusum_pvalue: float | None


def _pairwise_slopes(x, y):
    i, j = np.triu_indices(x.size, k=1)
    dx, dy = x[j] - x[i], y[j] - y[i]
    keep = ~((dx == 0) & (dy == 0))             # identical pairs carry no information
    dx, dy = dx[keep], dy[keep]
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.where(dx == 0, np.sign(dy) * np.inf, dy / np.where(dx == 0, 1.0, dx))
    return np.sort(s[s != -1.0])                 # slopes of exactly -1 are excluded [PB1983]


def passing_bablok(x, y, alpha: float = 0.05) -> PassingBablok:
    """Passing-Bablok regression with its rank-based CIs and cusum linearity test.

    Notes
    -----
    S = sorted pairwise slopes without 0/0 and -1; K = #{S < -1}; N = #S.
    b = S_((N+1)/2 + K) for odd N, else the mean of S_(N/2 + K) and S_(N/2 + 1 + K).
    C = z(1 - alpha/2) sqrt(n (n - 1)(2n + 5)/18), M1 = round((N - C)/2), M2 = N - M1 + 1;
    b CI = [S_(M1 + K), S_(M2 + K)]. a = median(y - b x); a CI from the b limits.
    Cusum: points above/below the line scored sqrt(L/l) / -sqrt(l/L), cumulated in the
    order of their projection on the line; H = max|cusum| / sqrt(L + 1) on the
    Kolmogorov limit distribution. [PB1983]
    # from memory: the cusum scoring and its Kolmogorov-Smirnov reference distribution
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    n = x.size
    s = _pairwise_slopes(x, y)
    N = s.size
    K = int(np.sum(s < -1))
    one = lambda k: float(s[min(max(k, 1), N) - 1])  # noqa: E731  1-based order statistic
    b = one((N + 1) // 2 + K) if N % 2 else 0.5 * (one(N // 2 + K) + one(N // 2 + 1 + K))
    C = stats.norm.ppf(1 - alpha / 2) * np.sqrt(n * (n - 1) * (2 * n + 5) / 18)
    M1 = int(round((N - C) / 2))
    M2 = N - M1 + 1
    b_lo, b_hi = one(M1 + K), one(M2 + K)
    a = float(np.median(y - b * x))
    a_lo, a_hi = float(np.median(y - b_hi * x)), float(np.median(y - b_lo * x))
    H = p = None
    resid = y - (a + b * x)
    above, below = int(np.sum(resid > 0)), int(np.sum(resid < 0))
    if above > 0 and below > 0 and np.isfinite(b) and b != 0:
        score = np.where(resid > 0, np.sqrt(below / above), np.where(resid < 0, -np.sqrt(above / below), 0.0))
        order = np.argsort((y + x / b - a) / np.sqrt(1 + 1 / b**2), kind="stable")
        H = float(np.max(np.abs(np.cumsum(score[order]))) / np.sqrt(below + 1))
        p = float(stats.kstwobign.sf(H))
    level = 1 - alpha
    return PassingBablok(b, ConfidenceInterval(b_lo, b_hi, level), a, ConfidenceInterval(a_lo, a_hi, level),
                         N, K, H, p)


@dataclass(frozen=True)
class Deming:
    slope: float
    slope_se: float
    slope_ci: ConfidenceInterval
    intercept: float
    intercept_se: float
    intercept_ci: ConfidenceInterval
    error_ratio: float


def _deming_fit(x, y, lam):
    xm, ym = x.mean(), y.mean()
    sxx = np.sum((x - xm) ** 2)
    syy = np.sum((y - ym) ** 2)
    sxy = np.sum((x - xm) * (y - ym))
    u = syy - lam * sxx
    root = np.sqrt(u * u + 4 * lam * sxy * sxy)
    # the two algebraically equal forms; each avoids cancellation on its side of u = 0
    b = (u + root) / (2 * sxy) if u >= 0 else 2 * lam * sxy / (root - u)
    return b, ym - b * xm


def deming(x, y, error_ratio: float = 1.0, alpha: float = 0.05) -> Deming:
    """Deming regression with jackknife standard errors.

    Notes
    -----
    With lambda = Var(error of y) / Var(error of x) (``error_ratio``),
    b = [Syy - lambda Sxx + sqrt((Syy - lambda Sxx)^2 + 4 lambda Sxy^2)] / (2 Sxy), a = ybar - b xbar.
    lambda -> infinity gives OLS of y on x; lambda -> 0 gives the inverse of OLS of x on y.
    SE by the jackknife: SE^2 = (n - 1)/n sum (theta_(i) - theta_(.))^2 [Linnet1990];
    CI theta +/- t(1 - alpha/2, n - 2) SE.
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    n = x.size
    b, a = _deming_fit(x, y, error_ratio)
    loo = np.array([_deming_fit(np.delete(x, i), np.delete(y, i), error_ratio) for i in range(n)])
    se = [float(v) for v in np.sqrt((n - 1) / n * np.sum((loo - loo.mean(axis=0)) ** 2, axis=0))]
    t = float(stats.t.ppf(1 - alpha / 2, n - 2))
    level = 1 - alpha
    return Deming(float(b), float(se[0]), ConfidenceInterval(b - t * se[0], b + t * se[0], level),
                  float(a), float(se[1]), ConfidenceInterval(a - t * se[1], a + t * se[1], level),
                  float(error_ratio))


@dataclass(frozen=True)
class BlandAltman:
    n: int
    bias: float
    bias_ci: ConfidenceInterval
    sd: float
    limits: tuple
    lower_limit_ci: ConfidenceInterval
    upper_limit_ci: ConfidenceInterval
    percentage: bool


def bland_altman(x, y, alpha: float = 0.05, percentage: bool = False) -> BlandAltman:
    """Bias and 95 % limits of agreement of y - x, with approximate CIs.

    Notes
    -----
    d_i = y_i - x_i (or 100 (y_i - x_i)/((x_i + y_i)/2) with ``percentage``);
    bias = mean d, CI bias +/- t(1 - alpha/2, n - 1) s/sqrt(n); limits bias +/- 1.96 s,
    each with SE = s sqrt(1/n + 1.96^2 / (2 (n - 1))) and CI +/- t(1 - alpha/2, n - 1) SE [BA1999].
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    d = 100 * (y - x) / ((x + y) / 2) if percentage else y - x
    n = d.size
    bias = float(d.mean())
    sd = float(np.std(d - bias, ddof=1))
    t = float(stats.t.ppf(1 - alpha / 2, n - 1))
    z = 1.96
    se_bias = float(sd / np.sqrt(n))
    se_lim = float(sd * np.sqrt(1 / n + z**2 / (2 * (n - 1))))
    lo, hi = bias - z * sd, bias + z * sd
    level = 1 - alpha
    return BlandAltman(n, bias, ConfidenceInterval(bias - t * se_bias, bias + t * se_bias, level), sd,
                       (lo, hi), ConfidenceInterval(lo - t * se_lim, lo + t * se_lim, level),
                       ConfidenceInterval(hi - t * se_lim, hi + t * se_lim, level), percentage)


def _judge(ci, limits, ideal, name):
    """CI inside the limits where given, else the CI contains the ideal value."""
    if limits is not None:
        return limits[0] <= ci.low and ci.high <= limits[1], f"{name} CI inside [{limits[0]:g}, {limits[1]:g}]"
    return ci.contains(ideal), f"{name} CI contains {ideal:g}"


@dataclass(frozen=True)
class ComparisonResult:
    n: int
    samples: tuple
    reference: tuple
    test: tuple
    passing_bablok: PassingBablok
    deming: Deming
    bland_altman: BlandAltman
    passed: bool
    basis: str


def assess_comparison(samples, reference, test, *, error_ratio=1.0, slope_limits=None,
                      intercept_limits=None, percentage=False, alpha=0.05) -> ComparisonResult:
    """All three comparisons and the verdict on the Passing-Bablok intervals.

    Verdict: the slope CI contains 1 and the intercept CI contains 0; where limits
    are given, the CIs must lie inside them instead [EP09].
    """
    x = np.asarray(reference, float)
    y = np.asarray(test, float)
    pb = passing_bablok(x, y, alpha)
    ok_slope, slope_basis = _judge(pb.slope_ci, slope_limits, 1.0, "slope")
    ok_icpt, icpt_basis = _judge(pb.intercept_ci, intercept_limits, 0.0, "intercept")
    return ComparisonResult(x.size, tuple(samples), tuple(map(float, x)), tuple(map(float, y)), pb,
                            deming(x, y, error_ratio, alpha), bland_altman(x, y, alpha, percentage),
                            bool(ok_slope and ok_icpt), f"Passing-Bablok: {slope_basis} and {icpt_basis}")
