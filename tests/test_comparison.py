"""Method comparison statistics (validator.maths.method_comparison) against direct implementations and limits."""

import math

import numpy as np
import pytest
from scipy import stats

from validator.maths.method_comparison import bland_altman, deming, passing_bablok


def pb_direct(x, y, alpha=0.05):
    """Passing & Bablok (1983), written out from the paper's definitions with plain loops."""
    n = len(x)
    slopes = []
    for i in range(n):
        for j in range(i + 1, n):
            dx, dy = x[j] - x[i], y[j] - y[i]
            if dx == 0 and dy == 0:
                continue
            s = math.copysign(math.inf, dy) if dx == 0 else dy / dx
            if s != -1:
                slopes.append(s)
    slopes.sort()
    N = len(slopes)
    K = sum(1 for s in slopes if s < -1)
    if N % 2:
        b = slopes[(N + 1) // 2 + K - 1]
    else:
        b = (slopes[N // 2 + K - 1] + slopes[N // 2 + K]) / 2
    C = stats.norm.ppf(1 - alpha / 2) * math.sqrt(n * (n - 1) * (2 * n + 5) / 18)
    M1 = round((N - C) / 2)
    M2 = N - M1 + 1
    return b, slopes[M1 + K - 1], slopes[M2 + K - 1], K


RNG = np.random.default_rng(9)
DATASETS = {
    "proportional": (lambda x: (x, 1.03 * x + 0.4 + RNG.normal(0, 1, x.size)))(RNG.uniform(1, 50, 30)),
    "ties": (np.repeat([1.0, 2, 3, 4, 5, 6, 7, 8], 3), np.repeat([1.1, 2.0, 3.2, 3.9, 5.1, 6.0, 7.2, 7.9], 3)
             + np.tile([0, 0.1, -0.1], 8)),
    "negative-slope-pair": (np.array([1.0, 2, 3, 4, 5, 6, 7, 8, 9, 10]),
                            np.array([1.2, 0.9, 3.1, 4.2, 4.8, 6.1, 7.3, 5.6, 9.1, 10.2])),
    "integers-with-repeats": (np.array([5, 5, 7, 9, 9, 12, 15, 15, 20, 22.0]),
                              np.array([5, 6, 7, 8, 10, 12, 14, 16, 21, 22.0])),
}


@pytest.mark.parametrize("name", sorted(DATASETS))
def test_passing_bablok_matches_direct_implementation(name):
    # reference: direct implementation of Passing & Bablok (1983) in this test
    x, y = DATASETS[name]
    res = passing_bablok(x, y)
    b, lo, hi, K = pb_direct(list(x), list(y))
    assert res.slope == pytest.approx(b, rel=1e-12)
    assert (res.slope_ci.low, res.slope_ci.high) == pytest.approx((lo, hi), rel=1e-12)
    assert res.offset_k == K
    assert res.intercept == pytest.approx(float(np.median(y - b * x)), rel=1e-12, abs=1e-12)


def test_negative_slopes_shift_the_median():
    x, y = DATASETS["negative-slope-pair"]          # (7, 7.3) -> (8, 5.6): slope -1.7 < -1
    assert passing_bablok(x, y).offset_k >= 1


def test_identical_methods_and_swapping():
    x = RNG.uniform(1, 100, 25)
    same = passing_bablok(x, x)
    assert (same.slope, same.intercept) == (1.0, 0.0)
    x, y = DATASETS["proportional"]
    # the procedure is symmetric: the slope of x on y is 1/b (exactly for an odd number of
    # slopes; for even N the mid-point of two order statistics makes it approximate)
    assert passing_bablok(y, x).slope == pytest.approx(1 / passing_bablok(x, y).slope, rel=1e-4)
    assert 0 <= passing_bablok(x, y).cusum_pvalue <= 1


def test_deming_closed_form_and_limits():
    x, y = DATASETS["proportional"]
    lam = 2.5
    xm, ym = x.mean(), y.mean()
    sxx, syy, sxy = np.sum((x - xm) ** 2), np.sum((y - ym) ** 2), np.sum((x - xm) * (y - ym))
    # closed form (Deming 1943; CLSI EP09 appendix), hand-evaluated
    b = (syy - lam * sxx + np.sqrt((syy - lam * sxx) ** 2 + 4 * lam * sxy**2)) / (2 * sxy)
    res = deming(x, y, lam)
    assert res.slope == pytest.approx(b, rel=1e-12)
    assert res.intercept == pytest.approx(ym - b * xm, rel=1e-10)
    # error ratio -> infinity: OLS of y on x; -> 0: inverse of OLS of x on y (numpy.polyfit)
    assert deming(x, y, 1e12).slope == pytest.approx(np.polyfit(x, y, 1)[0], rel=1e-8)
    assert deming(x, y, 1e-12).slope == pytest.approx(1 / np.polyfit(y, x, 1)[0], rel=1e-8)
    assert res.slope_ci.low < res.slope < res.slope_ci.high


def test_deming_jackknife_se():
    # jackknife definition (Linnet 1990), recomputed here with numpy
    x, y = DATASETS["proportional"]
    res = deming(x, y, 1.0)
    loo = [deming(np.delete(x, i), np.delete(y, i), 1.0).slope for i in range(x.size)]
    n = x.size
    assert res.slope_se == pytest.approx(np.sqrt((n - 1) / n * np.sum((np.array(loo) - np.mean(loo)) ** 2)))


def test_bland_altman():
    # Bland & Altman (1999): bias, SD, limits bias +/- 1.96 SD; CI of bias from scipy.stats.ttest_1samp
    x, y = DATASETS["proportional"]
    res = bland_altman(x, y)
    d = y - x
    assert res.bias == pytest.approx(d.mean())
    assert res.sd == pytest.approx(np.std(d, ddof=1))
    assert res.limits == pytest.approx((d.mean() - 1.96 * d.std(ddof=1), d.mean() + 1.96 * d.std(ddof=1)))
    ci = stats.ttest_1samp(d, 0).confidence_interval(0.95)
    assert (res.bias_ci.low, res.bias_ci.high) == pytest.approx((ci.low, ci.high))
    pct = bland_altman(x, y, percentage=True)
    assert pct.bias == pytest.approx(np.mean(100 * (y - x) / ((x + y) / 2)))


def test_two_slope_t_equals_statsmodels_interaction():
    # cross-check: statsmodels OLS y ~ x * run; the interaction t is the pooled two-slope t
    import statsmodels.api as sm
    from validator.maths.regression import fit_polynomial
    from validator.characteristics.revalidation import compare_slopes, residual_sd_ratio
    rng = np.random.default_rng(12)
    x1 = np.repeat([1.0, 2, 5, 10, 20], 3)
    x2 = np.repeat([1.0, 2, 4, 8, 16, 20], 2)
    y1 = 0.1 + 2.00 * x1 + rng.normal(0, 0.1, x1.size)
    y2 = 0.12 + 2.06 * x2 + rng.normal(0, 0.12, x2.size)
    f1, f2 = fit_polynomial(x1, y1), fit_polynomial(x2, y2)
    summary = lambda f: (f.coefficients["slope"].estimate, f.coefficients["slope"].std_error,  # noqa: E731
                         f.residual_sd, f.n)
    res = compare_slopes(summary(f1), summary(f2), margin_pct=5)
    x = np.concatenate([x1, x2])
    g = np.concatenate([np.zeros_like(x1), np.ones_like(x2)])
    X = np.column_stack([np.ones_like(x), x, g, x * g])
    ols = sm.OLS(np.concatenate([y1, y2]), X).fit()
    assert res.t_statistic == pytest.approx(ols.tvalues[3], rel=1e-9)
    assert res.pvalue == pytest.approx(ols.pvalues[3], rel=1e-8)
    assert res.df == int(ols.df_resid)
    # equivalence bounds: 90 % CI arithmetic of the difference, relative to the previous slope
    se = ols.bse[3]
    tq = stats.t.ppf(0.95, ols.df_resid)
    b1 = f1.coefficients["slope"].estimate
    assert res.change_ci_pct.low == pytest.approx(100 * (ols.params[3] - tq * se) / b1, rel=1e-9)
    assert res.change_ci_pct.high == pytest.approx(100 * (ols.params[3] + tq * se) / b1, rel=1e-9)
    assert res.verdict in {"equivalent", "not shown equivalent", "different"}
    ratio, F, p = residual_sd_ratio(f1.residual_sd, f1.df_resid, f2.residual_sd, f2.df_resid)
    assert F == pytest.approx(ratio**2) and 0 <= p <= 1
