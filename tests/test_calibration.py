"""Calibration diagnostics and inverse prediction against scipy, statsmodels and hand computation."""

import numpy as np
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from numpy.testing import assert_allclose
from scipy import stats
from statsmodels.stats.anova import anova_lm
from statsmodels.stats.diagnostic import het_breuschpagan
from statsmodels.stats.outliers_influence import OLSInfluence

from validator.characteristics.calibration import (analyse_calibration, back_calculate, choose_weighting,
                                   lack_of_fit, mandel_test, quantify)
from validator.maths.regression import fit_polynomial

# invented demo-style data (not reference values): the references are the libraries
RNG = np.random.default_rng(11)
X = np.repeat([1.0, 2, 5, 10, 20, 50], 3)
Y = 0.05 + 0.8 * X + 0.002 * X**2 + RNG.normal(0, 0.01 * X + 0.02)


def test_lack_of_fit_equals_anova_against_cell_means():
    # cross-check: statsmodels anova_lm comparing the line with the one-way (cell means) model
    fit = fit_polynomial(X, Y)
    lof = lack_of_fit(fit)
    import pandas as pd
    df = pd.DataFrame({"x": X, "y": Y})
    reduced = smf.ols("y ~ x", df).fit()
    full = smf.ols("y ~ C(x)", df).fit()
    table = anova_lm(reduced, full)
    assert_allclose(lof.statistic, table["F"].iloc[1], rtol=1e-10)
    assert_allclose(lof.pvalue, table["Pr(>F)"].iloc[1], rtol=1e-8)
    assert lof.df == (4, 12)


def test_lack_of_fit_not_applicable_without_replicates():
    fit = fit_polynomial([1, 2, 3, 4, 5], [1.1, 2.0, 2.9, 4.2, 5.0])
    res = lack_of_fit(fit)
    assert not res.applicable and "replicated" in res.reason


def test_mandel_is_partial_f_of_quadratic_term():
    # cross-check: Mandel's F = t^2 of the quadratic coefficient in statsmodels OLS
    # (DS^2 = SSR_lin - SSR_quad, so F is the extra-sum-of-squares F on (1, n-3))
    res = mandel_test(X, Y)
    ols = sm.OLS(Y, np.column_stack([np.ones_like(X), X, X**2])).fit()
    assert_allclose(res.statistic, ols.tvalues[2] ** 2, rtol=1e-9)
    assert_allclose(res.pvalue, ols.pvalues[2], rtol=1e-7)
    assert res.df == (1, X.size - 3)


def test_normality_matches_scipy_shapiro():
    # cross-check: scipy.stats.shapiro on the (weight-scaled) residuals
    res = analyse_calibration(X, Y, weighting="1/x")
    expected = stats.shapiro(res.fit.weighted_residuals)
    assert_allclose(res.normality.statistic, expected.statistic, rtol=1e-12)
    assert_allclose(res.normality.pvalue, expected.pvalue, rtol=1e-12)


def test_breusch_pagan_matches_statsmodels():
    # cross-check: statsmodels het_breuschpagan (Koenker, robust=True default) on the unweighted OLS
    res = analyse_calibration(X, Y, weighting="1/x^2")
    exog = sm.add_constant(X)
    ols = sm.OLS(Y, exog).fit()
    lm, p, _, _ = het_breuschpagan(ols.resid, exog)
    assert_allclose(res.heteroscedasticity.statistic, lm, rtol=1e-9)
    assert_allclose(res.heteroscedasticity.pvalue, p, rtol=1e-8)


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("powers", [(1,), (1, 2)])
def test_breusch_pagan_arithmetic_is_statsmodels(seed, powers):
    # cross-check: statsmodels het_breuschpagan(robust=True), the computation validator's own
    # maths.heteroscedasticity.breusch_pagan replaces in the run path (seeded simulated residuals,
    # variance rising with x or constant)
    from validator.maths.heteroscedasticity import breusch_pagan

    rng = np.random.default_rng(seed)
    x = np.repeat(np.linspace(0.5, 20.0, 8), 3)
    u = (x - x.mean()) / x.std()
    exog = np.column_stack([np.ones_like(u)] + [u**k for k in powers])
    resid = rng.normal(0.0, 1.0 + (seed % 2) * x, x.size)
    result = breusch_pagan(resid, exog)
    expected_lm, expected_p, _, _ = het_breuschpagan(resid, exog)
    assert_allclose(result.statistic, expected_lm, rtol=1e-12)
    assert_allclose(result.pvalue, expected_p, rtol=1e-12)
    assert result.df == (len(powers),)


def test_breusch_pagan_without_information_is_not_applicable_where_statsmodels_is_not_finite():
    # cross-check: statsmodels het_breuschpagan gives a non-finite LM when e^2 is constant
    from validator.maths.heteroscedasticity import breusch_pagan

    exog = np.column_stack([np.ones(6), np.arange(6.0)])
    resid = np.array([1.0, -1.0, 1.0, -1.0, 1.0, -1.0])
    with np.errstate(all="ignore"):
        expected_lm = het_breuschpagan(resid, exog)[0]
    result = breusch_pagan(resid, exog)
    assert not np.isfinite(expected_lm)
    assert result.statistic is None and "no information" in result.reason


def test_levene_matches_scipy():
    # cross-check: scipy.stats.levene(center="median") across levels
    res = analyse_calibration(X, Y)
    expected = stats.levene(*[Y[X == v] for v in np.unique(X)], center="median")
    assert_allclose(res.levene.statistic, expected.statistic, rtol=1e-12)
    assert_allclose(res.levene.pvalue, expected.pvalue, rtol=1e-12)


def test_outlier_measures_match_statsmodels():
    # cross-check: statsmodels OLSInfluence externally studentised residuals and Cook's distance
    y = 0.05 + 0.8 * X + RNG.normal(0, 0.02, X.size)
    y[7] += 1.0
    res = analyse_calibration(X, y)
    infl = OLSInfluence(sm.OLS(y, sm.add_constant(X)).fit())
    flagged = {o.index: o for o in res.outliers}
    assert 7 in flagged
    assert_allclose(flagged[7].studentised_residual, infl.resid_studentized_external[7], rtol=1e-9)
    assert_allclose(flagged[7].cooks_distance, infl.cooks_distance[0][7], rtol=1e-9)
    # Bonferroni limit t(1 - alpha/(2n), n - p - 1), scipy.stats.t
    assert_allclose(res.studentised_limit, stats.t.ppf(1 - 0.05 / (2 * X.size), X.size - 3))


def test_intercept_t_test_matches_statsmodels():
    # cross-check: statsmodels OLS t test of the constant
    res = analyse_calibration(X, Y)
    ols = sm.OLS(Y, sm.add_constant(X)).fit()
    assert_allclose(res.intercept_test.statistic, ols.tvalues[0], rtol=1e-9)
    assert_allclose(res.intercept_test.pvalue, ols.pvalues[0], rtol=1e-8)


def test_closed_form_sx0_hand_computation():
    # hand computation of s(x0) = (s/b) sqrt(1/m + 1/n + (y0 - ybar)^2 / (b^2 Sxx))
    # for the unweighted line (ISO 8466-1 sec. 6), on a small made-up data set:
    x = np.array([1.0, 2.0, 3.0, 4.0, 5.0])
    y = np.array([2.1, 3.9, 6.2, 7.8, 10.1])
    # xbar = 3, Sxx = 10, ybar = 6.02, Sxy = sum (x - 3)(y - 6.02) = 19.9 -> b = 1.99,
    # a = 6.02 - 1.99*3 = 0.05; residuals: 0.06, -0.13, 0.18, -0.21, 0.10 -> SSR = 0.0036 +
    # 0.0169 + 0.0324 + 0.0441 + 0.0100 = 0.107, s^2 = 0.107/3
    fit = fit_polynomial(x, y)
    assert_allclose(fit.coefficients["slope"].estimate, 1.99, rtol=1e-12)
    assert_allclose(fit.coefficients["intercept"].estimate, 0.05, rtol=1e-10)
    assert_allclose(fit.residual_variance, 0.107 / 3, rtol=1e-10)
    readings = [7.0, 7.2]                    # m = 2, y0 = 7.1
    s = np.sqrt(0.107 / 3)
    x0 = (7.1 - 0.05) / 1.99
    sx0 = s / 1.99 * np.sqrt(1 / 2 + 1 / 5 + (7.1 - 6.02) ** 2 / (1.99**2 * 10))
    res = quantify(fit, "S1", readings)
    assert_allclose(res.concentration, x0, rtol=1e-12)
    assert_allclose(res.std_error, sx0, rtol=1e-12)
    t = stats.t.ppf(0.975, 3)                # scipy.stats.t, n - 2 = 3 df
    assert_allclose([res.ci.low, res.ci.high], [x0 - t * sx0, x0 + t * sx0], rtol=1e-12)
    assert res.within_range


def test_weighted_inverse_prediction_propagation():
    # first-order propagation Var(x0) = [s^2/(w0 m) + Var(yhat(x0))]/b^2 for 1/x^2 weights,
    # cross-check: statsmodels WLS get_prediction for Var(yhat(x0)) with the same weights
    fit = fit_polynomial(X, Y, weighting="1/x^2")
    readings = [8.3, 8.5, 8.4]
    res = quantify(fit, "S", readings)
    ols = sm.WLS(Y, sm.add_constant(X), weights=fit.weights).fit()
    x0 = (np.mean(readings) - ols.params[0]) / ols.params[1]
    assert_allclose(res.concentration, x0, rtol=1e-10)
    pred = ols.get_prediction(np.array([[1.0, x0]]))
    var_mean = pred.se_mean[0] ** 2
    w0 = fit.weight_factor / x0**2
    expected = np.sqrt((ols.scale / (w0 * 3) + var_mean) / ols.params[1] ** 2)
    assert_allclose(res.std_error, expected, rtol=1e-9)


def test_quadratic_root_inside_range_and_extrapolation_flag():
    # NIST e-Handbook 4.6.1 (pmd61a.htm): deflection 1.239722 gives load 1705106 with the
    # page's rounded coefficients; the certified coefficients give 1705105.6 (SOURCES.md).
    from conftest import load_strd
    d = load_strd("Pontius.dat")
    fit = fit_polynomial(d[:, 1], d[:, 0], model="quadratic")
    res = quantify(fit, "L", [1.239722])
    assert_allclose(res.concentration, 1705105.6, atol=0.5)
    assert res.within_range
    far = quantify(fit, "far", [d[:, 0].max() * 1.1])
    assert not far.within_range


def test_back_calculation_tolerances():
    fit = fit_polynomial([0, 1, 2, 4], [0.0, 1.3, 2.0, 4.0])
    back = back_calculate(fit, 15, 20)
    assert back[0].passed is None and back[0].deviation_pct is None      # nominal 0 not judged
    assert back[1].tolerance_pct == 20 and back[2].tolerance_pct == 15   # lowest non-zero level


def test_weighting_choice_minimises_sum_relative_error():
    best, table = choose_weighting(X, Y, "linear")
    usable = {c.weighting: c.sum_abs_relative_error_pct for c in table}
    assert best == min(usable, key=usable.get)
    assert set(usable) == {"none", "1/x", "1/x^2", "1/y", "1/y^2"}


def test_weighting_candidates_with_zero_concentration_are_skipped():
    x = np.array([0, 0, 1, 1, 2, 2, 4, 4.0])
    y = 0.1 + 2 * x + np.array([0.01, -0.01, 0.02, -0.02, 0.01, 0.0, -0.03, 0.02])
    best, table = choose_weighting(x, y, "linear")
    skipped = [c for c in table if c.sum_abs_relative_error_pct is None]
    assert {c.weighting for c in skipped} == {"1/x", "1/x^2"}
    assert all("concentration > 0" in c.reason for c in skipped)


def test_perfect_fit_is_not_a_crash():
    x = np.array([1.0, 2, 3, 4, 1, 2, 3, 4])
    res = analyse_calibration(x, 2 * x + 1)
    assert res.fit.residual_sd == pytest.approx(0, abs=1e-12)
    assert not res.normality.applicable and not res.heteroscedasticity.applicable
    assert not res.lack_of_fit.applicable
    assert any("exact" in d for d in res.diagnostics)
    s = quantify(res.fit, "x", [5.0])
    assert s.concentration == pytest.approx(2.0)


def test_sample_with_non_positive_response_under_1_over_y_weighting():
    # found by fuzzing: a reading <= 0 has no 1/y weight; the result says so instead of crashing
    fit = fit_polynomial(X, Y, weighting="1/y")
    res = quantify(fit, "neg", [-0.5])
    assert not np.isfinite(res.std_error) and "weight" in res.reason
