"""Comparison of two methods on the same samples: Passing-Bablok, Deming, Bland-Altman.

Pure functions over arrays (x = reference method, y = test method); the
characteristic :mod:`validator.characteristics.comparison` judges them.

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

from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np

from .._common import ConfidenceInterval, quiet_numpy
from .distributions import kstwobign_sf, norm_ppf, t_ppf

__all__ = ["PassingBablok", "Deming", "BlandAltman", "passing_bablok", "passing_bablok_min_n",
           "deming", "bland_altman", "percentage_differences"]


@dataclass(frozen=True)
class PassingBablok:
    """Passing-Bablok estimates; a value that does not exist is ``None`` with its reason.

    ``reason`` explains a missing slope/intercept, ``ci_reason`` missing intervals and
    ``cusum_reason`` a missing cusum test. ``level`` is the intended interval level
    1 - alpha (recorded even when the interval does not exist) and ``min_n_for_ci`` the
    smallest n for which the rank interval exists at that level on data without ties.
    """

    slope: float | None
    slope_ci: ConfidenceInterval | None = field(metadata={"interval": "null"})
    intercept: float | None
    intercept_ci: ConfidenceInterval | None = field(metadata={"interval": "null"})
    cusum_pvalue: float | None = field(metadata={"json": "cusum_p_value"})
    cusum_statistic: float | None
    offset_k: int
    n_slopes: int
    reason: str = ""
    ci_reason: str = ""
    min_n_for_ci: int = 0
    cusum_reason: str = ""
    cusum_pvalue_method: str = field(default="", metadata={"json": "cusum_p_value_method"})
    level: float = field(default=0.95, metadata={"json": None})    # written as the comparison's level


def _rank_half_width(n: int, alpha: float) -> float:
    """C = z(1 - alpha/2) sqrt(n (n - 1)(2n + 5)/18) [PB1983]."""
    return float(norm_ppf(1 - alpha / 2) * np.sqrt(n * (n - 1) * (2 * n + 5) / 18))


def _rank_limits(n: int, n_slopes: int, alpha: float) -> tuple:
    """M1 = round((N - C)/2) (Python's round, as the tests' direct implementation), M2 = N - M1 + 1."""
    m1 = int(round((n_slopes - _rank_half_width(n, alpha)) / 2))
    return m1, n_slopes - m1 + 1


def passing_bablok_min_n(alpha: float = 0.05) -> int:
    """Smallest n for which the Passing-Bablok slope interval exists at level 1 - alpha.

    Notes
    -----
    The interval [S_(M1+K), S_(M2+K)] exists when M1 + K >= 1 and M2 + K <= N; as
    M2 = N - M1 + 1 both hold exactly when M1 >= K + 1. On data without ties and
    without slopes below -1 (K = 0, N = n (n - 1)/2) that is round((N - C)/2) >= 1,
    which first holds at n = 5 for alpha = 0.05 ((10 - 8.0015)/2 = 0.999) and at
    n = 6 for alpha = 0.01 ((15 - 13.711)/2 = 0.645). Tied reference values (fewer
    slopes) or slopes below -1 (K > 0) can raise the minimum for a given data set.
    """
    n = 2
    while True:
        n_slopes = n * (n - 1) // 2
        m1, _ = _rank_limits(n, n_slopes, alpha)
        if m1 >= 1:
            return n
        n += 1


def _exact_slope(x, y, i, j):
    """(y_j - y_i)/(x_j - x_i) in exact rational arithmetic from the float inputs; +-inf when x_j = x_i."""
    dx = Fraction(float(x[j])) - Fraction(float(x[i]))
    dy = Fraction(float(y[j])) - Fraction(float(y[i]))
    if dx == 0:
        return float(np.sign(float(dy)) * np.inf)
    return dy / dx


def _two_diff(a, b):
    """a - b as an unevaluated sum hi + lo of two floats, exactly (Knuth's TwoSum).

    hi = fl(a - b) and |lo| <= ulp(hi)/2, so equal differences have equal (hi, lo) and
    differences compare lexicographically on (hi, lo).
    """
    hi = a - b
    bb = hi - a
    lo = (a - (hi - bb)) + (-b - bb)
    return hi, lo


def _dd_less(a_hi, a_lo, b_hi, b_lo):
    return (a_hi < b_hi) | ((a_hi == b_hi) & (a_lo < b_lo))


class _Slopes:
    """The pairwise slopes, sorted in floating point, with exact order statistics on request.

    A float slope fl(fl(dy)/fl(dx)) is within 2 units of the last place of the exact slope of
    the float inputs, so the float order differs from the exact one only among slopes within
    that distance of each other. An order statistic is taken from the float sort and then
    decided exactly (``fractions.Fraction``) among the slopes within a relative band of 1e-9
    around it; pairs with the same exact differences dy and dx share one computation. When
    more than ``EXACT_MAX`` distinct slopes fall in that band, the float order is kept among
    them (they differ by less than 1e-9 relative) and the chosen slope is the exact slope of
    the pair at that float rank. Slopes equal to or below -1 are always decided exactly.
    """

    BAND = 1e-9
    EXACT_MAX = 20000

    def __init__(self, x, y):
        self.x, self.y = x, y
        i, j = np.triu_indices(x.size, k=1)
        keep = ~((x[j] == x[i]) & (y[j] == y[i]))       # identical pairs carry no information
        i, j = i[keep], j[keep]
        dx_hi, dx_lo = _two_diff(x[j], x[i])
        dy_hi, dy_lo = _two_diff(y[j], y[i])
        with quiet_numpy():
            s = np.where(dx_hi == 0, np.sign(dy_hi) * np.inf, dy_hi / np.where(dx_hi == 0, 1.0, dx_hi))
        # slopes of exactly -1 are excluded and K counts slopes below -1 [PB1983]: with the
        # exact differences, dy/dx = -1 iff dy = -dx, and dy/dx < -1 iff dy < -dx (dx > 0)
        # or dy > -dx (dx < 0); for dx = 0 the slope is +-inf
        finite = dx_hi != 0
        minus_one = finite & (dy_hi == -dx_hi) & (dy_lo == -dx_lo)
        lt = _dd_less(dy_hi, dy_lo, -dx_hi, -dx_lo)
        gt = _dd_less(-dx_hi, -dx_lo, dy_hi, dy_lo)
        below = np.where(finite, np.where(dx_hi > 0, lt, gt), s < 0)
        keep = ~minus_one
        self.offset_k = int(np.sum(below & keep))
        keep_idx = np.flatnonzero(keep)
        order = keep_idx[np.argsort(s[keep], kind="stable")]
        self.s, self.i, self.j = s[order], i[order], j[order]
        self.key = np.column_stack([dy_hi[order], dy_lo[order], dx_hi[order], dx_lo[order]])
        self.n = int(self.s.size)
        self._bands = {}

    def order_statistic(self, k: int):
        """The k-th smallest slope (1-based), exact as a Fraction, or +-inf."""
        v = float(self.s[k - 1])
        if not np.isfinite(v):
            return v
        tol = self.BAND * abs(v)
        lo = int(np.searchsorted(self.s, v - tol, side="left"))
        hi = int(np.searchsorted(self.s, v + tol, side="right"))
        if (lo, hi) not in self._bands:                  # the median and the limits often share a band
            uniq, inverse = np.unique(self.key[lo:hi], axis=0, return_inverse=True)
            if len(uniq) > self.EXACT_MAX:
                self._bands[lo, hi] = None
            else:
                values = [(Fraction(float(a)) + Fraction(float(b))) / (Fraction(float(c)) + Fraction(float(d)))
                          for a, b, c, d in uniq]
                counts = np.bincount(inverse.ravel(), minlength=len(values))
                order = sorted(range(len(values)), key=lambda m: values[m])
                self._bands[lo, hi] = ([values[m] for m in order], np.cumsum(counts[order]))
        band = self._bands[lo, hi]
        if band is None:
            return _exact_slope(self.x, self.y, self.i[k - 1], self.j[k - 1])
        values, upto = band
        return values[int(np.searchsorted(upto, k - lo, side="left"))]   # rank k - lo inside the band


def _median_exact(values):
    v = sorted(values)
    m = len(v)
    return v[m // 2] if m % 2 else (v[m // 2 - 1] + v[m // 2]) / 2


CUSUM_PVALUE_METHOD = "approximate (Kolmogorov limit)"


def cusum_signs(xf, yf, a, b) -> list:
    """Residual signs (+1 above, -1 below, 0 on the line) in the order of the points along the line.

    Decided exactly on Fractions. The order is by y + x/b, the position of each point
    projected on the line (the shift by a and the positive factor 1/sqrt(1 + 1/b^2) do not
    change it); ``b`` must be non-zero.
    """
    signs = []
    for xi, yi in zip(xf, yf):
        r = yi - a - b * xi
        signs.append((r > 0) - (r < 0))
    key = [yi + xi / b for xi, yi in zip(xf, yf)]
    return [signs[m] for m in sorted(range(len(signs)), key=lambda m: key[m])]


def _cusum(xf, yf, a, b):
    """Cusum linearity test on exact residual signs; returns (H, p, reason)."""
    if b == 0:
        return None, None, "the slope is 0, so the points cannot be ordered along the line"
    seq = cusum_signs(xf, yf, a, b)
    above, below = seq.count(1), seq.count(-1)
    if above == 0 or below == 0:
        return None, None, ("every point lies on one side of the line or on it" if above + below
                            else "every point lies on the line")
    walk = peak = 0
    for v in seq:                   # cusum * sqrt(above * below), in integers
        walk += below if v > 0 else -above if v < 0 else 0
        peak = max(peak, abs(walk))
    H = peak / np.sqrt(above * below) / np.sqrt(below + 1)
    return float(H), float(kstwobign_sf(H)), ""


def passing_bablok(x, y, alpha: float = 0.05) -> PassingBablok:
    """Passing-Bablok regression with its rank-based CIs and cusum linearity test.

    Notes
    -----
    S = sorted pairwise slopes without 0/0 and -1; K = #{S < -1}; N = #S.
    b = S_((N+1)/2 + K) for odd N, else the mean of S_(N/2 + K) and S_(N/2 + 1 + K).
    C = z(1 - alpha/2) sqrt(n (n - 1)(2n + 5)/18), M1 = round((N - C)/2), M2 = N - M1 + 1;
    b CI = [S_(M1 + K), S_(M2 + K)]. a = median(y - b x); a CI from the b limits. [PB1983]

    The order statistics, b, a and the residual signs are decided in exact rational
    arithmetic from the float inputs (``fractions.Fraction``; slopes of -1 and below by exact
    float differences), so a point on the line is scored 0, never +-1 by a rounding error of
    1e-15. The float sort of the slopes is refined exactly within a relative band of 1e-9
    around each order statistic; only when more than 20000 distinct slopes fall in that band
    is their float order kept (the statistic is then still the exact slope of one pair).

    Values that do not exist are ``None`` with a reason, never clamped or guessed:

    - fewer than 3 distinct reference values: no slope, intercept or test;
    - the shifted median index (N+1)/2 + K beyond N (most slopes below -1), or an infinite
      median slope: no slope or intercept;
    - M1 + K < 1 or M2 + K > N: the rank interval does not exist at level 1 - alpha. Without
      ties (K = 0, N = n (n - 1)/2) this needs n >= 5 at alpha = 0.05 and n >= 6 at
      alpha = 0.01 (:func:`passing_bablok_min_n`); ties and slopes below -1 can need more:

      =====  ===========
      alpha  minimum n
      =====  ===========
      0.05   5
      0.01   6
      =====  ===========

    Cusum test for linearity: with l points above and L below the line (exact signs),
    scores sqrt(L/l) above, -sqrt(l/L) below and 0 on the line, cumulated in the order of
    the points' projections on the line; H = max|cusum| / sqrt(L + 1) [PB1983].
    # from memory: the cusum scoring and the normalisation by sqrt(L + 1)
    The p-value is P(D > H) for D on the Kolmogorov limit distribution (``scipy.stats.kstwobign``)
    and is approximate: ``cusum_pvalue_method`` says so, and the dossier repeats it.

    Size at nominal 5 %, measured by seeded simulation (benchmarks/cusum_size.py, seed
    20261202: true values uniform on [1, 100], both methods with normal error SD 2, rounded
    to 3 decimals; 2000 data sets per n; binomial standard error in brackets):

    =====  ========================  ===============================
    n      Kolmogorov limit (used)   permutation distribution of D
    =====  ========================  ===============================
    10     0.05 % (0.05 %)           0.00 %
    30     2.55 % (0.35 %)           0.00 %
    100    8.20 % (0.61 %)           0.25 % (0.11 %)
    200    8.15 % (0.61 %)           0.10 % (0.07 %)
    =====  ========================  ===============================

    So the approximate p-value is conservative for small n and rejects a straight line too
    often (about 8 % instead of 5 %) from n of about 100. The right-hand column is the exact
    permutation distribution of the two-sample Kolmogorov-Smirnov D of the positions above
    against those below (max|cusum| = D sqrt(l L)); it assumes the signs are exchangeable,
    which the fitted line violates (it pins the walk), and is far too conservative, so it is
    not used.
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    n = x.size
    level = 1 - alpha
    min_n = passing_bablok_min_n(alpha)
    distinct = int(np.unique(x).size)

    def none(reason, n_slopes=0, k=0):
        return PassingBablok(slope=None, slope_ci=None, intercept=None, intercept_ci=None, cusum_pvalue=None,
                             cusum_statistic=None, offset_k=k, n_slopes=n_slopes, reason=reason, ci_reason=reason,
                             min_n_for_ci=min_n, cusum_reason=reason, cusum_pvalue_method="", level=level)

    if distinct < 3:
        what = "the reference values have no spread" if distinct <= 1 else "only 2 distinct reference values"
        return none(f"{what}: Passing-Bablok regression needs at least 3 distinct reference values")
    slopes = _Slopes(x, y)
    N, K = slopes.n, slopes.offset_k
    if N == 0:
        return none("no pairwise slope can be formed")
    mid = (N + 1) // 2 + K if N % 2 else N // 2 + 1 + K
    if mid > N:
        return none(f"the shifted median rank {mid} of the pairwise slopes exceeds N = {N}: more than half "
                    f"of the slopes (K = {K}) lie below -1, so the methods are not positively related", N, K)
    if N % 2:
        b = slopes.order_statistic(mid)
    else:
        lo_s, hi_s = slopes.order_statistic(mid - 1), slopes.order_statistic(mid)
        b = (lo_s + hi_s) / 2 if isinstance(lo_s, Fraction) and isinstance(hi_s, Fraction) else lo_s + hi_s
    if not isinstance(b, Fraction):
        return none("the median pairwise slope is infinite (tied reference values dominate)", N, K)
    xf = [Fraction(float(v)) for v in x]
    yf = [Fraction(float(v)) for v in y]
    a = _median_exact([yi - b * xi for xi, yi in zip(xf, yf)])

    slope_ci = intercept_ci = None
    ci_reason = ""
    M1, M2 = _rank_limits(n, N, alpha)
    if M1 + K < 1 or M2 + K > N:
        ci_reason = (f"the rank interval does not exist at level {level:g}: its ranks M1 + K = {M1 + K} and "
                     f"M2 + K = {M2 + K} fall outside 1..N = {N} (n = {n}; data without ties need at least "
                     f"n = {min_n} at alpha = {alpha:g})")
    else:
        b_lo, b_hi = slopes.order_statistic(M1 + K), slopes.order_statistic(M2 + K)
        if not (isinstance(b_lo, Fraction) and isinstance(b_hi, Fraction)):
            ci_reason = ("the slope interval is unbounded: an infinite pairwise slope (tied reference "
                         "values) lies at a rank limit")
        else:
            a_lo = _median_exact([yi - b_hi * xi for xi, yi in zip(xf, yf)])
            a_hi = _median_exact([yi - b_lo * xi for xi, yi in zip(xf, yf)])
            slope_ci = ConfidenceInterval(float(b_lo), float(b_hi), level)
            intercept_ci = ConfidenceInterval(float(a_lo), float(a_hi), level)
    H, p, cusum_reason = _cusum(xf, yf, a, b)
    return PassingBablok(slope=float(b), slope_ci=slope_ci, intercept=float(a), intercept_ci=intercept_ci,
                         cusum_pvalue=p, cusum_statistic=H, offset_k=K, n_slopes=N, reason="", ci_reason=ci_reason,
                         min_n_for_ci=min_n, cusum_reason=cusum_reason,
                         cusum_pvalue_method=CUSUM_PVALUE_METHOD if p is not None else "", level=level)


@dataclass(frozen=True)
class Deming:
    """Deming regression; every estimate is ``None`` with ``reason`` when it does not exist."""

    slope: float | None
    slope_ci: ConfidenceInterval | None = field(metadata={"interval": "null"})
    intercept: float | None
    intercept_ci: ConfidenceInterval | None = field(metadata={"interval": "null"})
    error_ratio: float
    slope_se: float | None
    intercept_se: float | None
    reason: str = ""


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

    Not applicable (every field ``None``, with ``reason``) with fewer than 3 distinct
    reference values, or when the slope or a jackknife fit is not finite (Sxy = 0 with
    Syy >= lambda Sxx: no linear relation to estimate).
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    n = x.size
    lam = float(error_ratio)

    def none(reason):
        return Deming(slope=None, slope_ci=None, intercept=None, intercept_ci=None, error_ratio=lam, slope_se=None,
                      intercept_se=None, reason=reason)

    distinct = int(np.unique(x).size)
    if distinct < 3:
        what = "the reference values have no spread" if distinct <= 1 else "only 2 distinct reference values"
        return none(f"{what}: Deming regression needs at least 3 distinct reference values")
    with quiet_numpy():
        b, a = _deming_fit(x, y, lam)
        loo = np.array([_deming_fit(np.delete(x, i), np.delete(y, i), lam) for i in range(n)])
        se = np.sqrt((n - 1) / n * np.sum((loo - loo.mean(axis=0)) ** 2, axis=0))
    if not (np.isfinite(b) and np.isfinite(a) and np.all(np.isfinite(se))):
        return none("the Deming slope is not defined on these data (reference and test values are "
                    "uncorrelated, Sxy = 0, in the full data or a jackknife subset)")
    se = [float(v) for v in se]
    t = float(t_ppf(1 - alpha / 2, n - 2))
    level = 1 - alpha
    return Deming(slope=float(b), slope_ci=ConfidenceInterval(b - t * se[0], b + t * se[0], level),
                  intercept=float(a), intercept_ci=ConfidenceInterval(a - t * se[1], a + t * se[1], level),
                  error_ratio=lam, slope_se=se[0], intercept_se=se[1])


LIMITS_Z = 1.96          # limits of agreement: bias +/- 1.96 SD [BA1999]


@dataclass(frozen=True)
class BlandAltman:
    """Bland-Altman agreement; fields are ``None`` with ``reason`` when they do not exist.

    With ``percentage``, a pair whose mean (x + y)/2 is 0 has no percentage difference: it
    is left out, listed in ``excluded`` (0-based indices) and explained in ``note``.
    ``differences`` holds every pair's difference (NaN where it does not exist).
    """

    bias: float | None
    bias_ci: ConfidenceInterval | None = field(metadata={"interval": "null"})
    sd: float | None
    limits: tuple[float, float] | None
    lower_limit_ci: ConfidenceInterval | None = field(metadata={"interval": "null"})
    upper_limit_ci: ConfidenceInterval | None = field(metadata={"interval": "null"})
    percentage: bool
    n: int
    reason: str = ""
    excluded: tuple[int, ...] = field(default=(), metadata={"json": None})
    excluded_samples: tuple[str, ...] = field(init=False)    # the excluded pairs' sample names
    note: str = ""
    # every pair's difference in the order given (NaN, written null, for an excluded pair): the plot's points
    differences: tuple[float, ...] = ()
    samples: tuple[str, ...] = field(default=(), metadata={"json": None})    # the pairs' names, if given

    def __post_init__(self):
        object.__setattr__(self, "excluded_samples", tuple(self.samples[i] for i in self.excluded)
                           if self.samples else ())

    @property
    def null_reason(self) -> str:
        """Why a value is missing (results.json ``not_applicable``): the reason and the note."""
        return "; ".join(text for text in (self.reason, self.note) if text)


def percentage_differences(x, y):
    """100 (y - x) / ((x + y)/2) per pair; NaN where the pair mean is 0 (no such value)."""
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    mean = (x + y) / 2
    with quiet_numpy():
        return np.where(mean != 0, 100 * (y - x) / np.where(mean != 0, mean, 1.0), np.nan)


def bland_altman(x, y, alpha: float = 0.05, percentage: bool = False, *, samples=()) -> BlandAltman:
    """Bias and limits of agreement (bias +/- 1.96 SD) of y - x, with approximate CIs.

    Notes
    -----
    d_i = y_i - x_i (or 100 (y_i - x_i)/((x_i + y_i)/2) with ``percentage``);
    bias = mean d, CI bias +/- t(1 - alpha/2, n - 1) s/sqrt(n); limits bias +/- 1.96 s,
    each with SE = s sqrt(1/n + 1.96^2 / (2 (n - 1))) and CI +/- t(1 - alpha/2, n - 1) SE [BA1999].
    With ``percentage`` a pair with mean 0 is excluded (its percentage difference does not
    exist). Fewer than 2 differences: not applicable. ``samples``, the pairs' names if
    given, name the excluded pairs in ``excluded_samples``.
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    excluded, note = (), ""
    if percentage:
        d = percentage_differences(x, y)
        excluded = tuple(int(i) for i in np.flatnonzero(np.isnan(d)))
        if excluded:
            note = (f"{len(excluded)} pair(s) with mean (reference + test)/2 = 0 have no percentage "
                    "difference and are left out of the percentage analysis")
        every = tuple(map(float, d))
        d = d[~np.isnan(d)]
    else:
        d = y - x
        every = tuple(map(float, d))
    n = int(d.size)
    if n < 2:
        return BlandAltman(bias=None, bias_ci=None, sd=None, limits=None, lower_limit_ci=None, upper_limit_ci=None,
                           percentage=percentage, n=n, reason=f"needs at least 2 differences, got {n}",
                           excluded=excluded, note=note, differences=every, samples=samples)
    bias = float(d.mean())
    sd = float(np.std(d - bias, ddof=1))
    t = float(t_ppf(1 - alpha / 2, n - 1))
    z = LIMITS_Z
    se_bias = float(sd / np.sqrt(n))
    se_lim = float(sd * np.sqrt(1 / n + z**2 / (2 * (n - 1))))
    lo, hi = bias - z * sd, bias + z * sd
    level = 1 - alpha
    return BlandAltman(bias=bias, bias_ci=ConfidenceInterval(bias - t * se_bias, bias + t * se_bias, level), sd=sd,
                       limits=(lo, hi), lower_limit_ci=ConfidenceInterval(lo - t * se_lim, lo + t * se_lim, level),
                       upper_limit_ci=ConfidenceInterval(hi - t * se_lim, hi + t * se_lim, level),
                       percentage=percentage, n=n, reason="", excluded=excluded, note=note, differences=every,
                       samples=samples)
