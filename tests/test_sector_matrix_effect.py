"""Matrix effect (validator/sector/matrix_effect.py).

Expected values: a joint statsmodels OLS fit with a matrix indicator and its interaction with
concentration (slopes, their covariance, the delta-method SE and the t test of b_m - R b_s at
Fieller's limits), separate statsmodels fits for the unpooled variant, exact arithmetic, and a
seeded coverage simulation with its standard error stated.
"""

import math
import warnings
from fractions import Fraction

import numpy as np
import pytest
import statsmodels.api as sm
from scipy import stats

from validator.sector.matrix_effect import lot_accuracy, normalised_matrix_factor, slope_ratio_matrix_effect

X = np.array([1.0, 2.0, 5.0, 10.0, 20.0, 50.0])
Y_SOLVENT = np.array([10.3, 19.6, 50.9, 99.2, 201.5, 498.7])
Y_MATRIX = np.array([8.1, 16.4, 41.0, 81.9, 160.8, 401.7])


@pytest.fixture(autouse=True)
def _no_warnings():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        yield


def _joint_fit(xs, ys, xm, ym):
    x = np.concatenate([xs, xm])
    m = np.concatenate([np.zeros(len(xs)), np.ones(len(xm))])
    design = np.column_stack([np.ones_like(x), x, m, m * x])
    return sm.OLS(np.concatenate([ys, ym]), design).fit()


def test_slopes_and_delta_se_match_joint_statsmodels_fit():
    res = slope_ratio_matrix_effect(X, Y_SOLVENT, X, Y_MATRIX, variance="pooled")
    fit = _joint_fit(X, Y_SOLVENT, X, Y_MATRIX)
    b_s, b_m = fit.params[1], fit.params[1] + fit.params[3]
    cov = fit.cov_params()
    # slopes and their covariance matrix from the joint model: b_s = beta_x, b_m = beta_x + beta_Mx
    g = np.array([[0, 1, 0, 0], [0, 1, 0, 1]], dtype=float)
    c = g @ cov @ g.T
    grad = np.array([-b_m / b_s ** 2, 1 / b_s])
    se_delta = math.sqrt(grad @ c @ grad)
    # cross-check: statsmodels OLS (joint fit with interaction term)
    assert res.slope_solvent == pytest.approx(b_s, rel=1e-12)
    assert res.slope_matrix == pytest.approx(b_m, rel=1e-12)
    assert res.se_slope_solvent == pytest.approx(math.sqrt(c[0, 0]), rel=1e-9)
    assert res.se_slope_matrix == pytest.approx(math.sqrt(c[1, 1]), rel=1e-9)
    assert res.se_ratio_delta == pytest.approx(se_delta, rel=1e-9)
    assert res.df == fit.df_resid == 8
    assert res.statistic == pytest.approx(100 * (b_m / b_s - 1), rel=1e-12)
    t = stats.t.isf(0.025, 8)
    assert res.delta_interval.low == pytest.approx(100 * (b_m / b_s - t * se_delta - 1), rel=1e-9)
    assert res.delta_interval.high == pytest.approx(100 * (b_m / b_s + t * se_delta - 1), rel=1e-9)
    assert res.interval == res.fieller_interval and res.interval.level == 0.95
    # hand: ME about -19.6 %, inside the default +/-20 % but beyond a 15 % limit
    assert res.beyond_limit is False
    assert slope_ratio_matrix_effect(X, Y_SOLVENT, X, Y_MATRIX, limit_percent=15.0,
                                     variance="pooled").beyond_limit is True


def test_fieller_limits_are_where_the_joint_t_test_reaches_the_critical_value():
    res = slope_ratio_matrix_effect(X, Y_SOLVENT, X, Y_MATRIX, level=0.90, variance="pooled")
    fit = _joint_fit(X, Y_SOLVENT, X, Y_MATRIX)
    t_crit = stats.t.isf(0.05, fit.df_resid)
    for me in (res.fieller_interval.low, res.fieller_interval.high):
        r = 1 + me / 100
        # cross-check: statsmodels t test of b_m - R b_s = 0, i.e. (1 - R) beta_x + beta_Mx = 0
        t_value = float(np.squeeze(fit.t_test(np.array([[0, 1 - r, 0, 1]])).tvalue))
        assert abs(t_value) == pytest.approx(t_crit, rel=1e-8)
    assert res.fieller_interval.low < res.statistic < res.fieller_interval.high


def test_separate_variances_delta_se_by_hand_from_two_statsmodels_fits():
    xm = np.array([1.0, 2.0, 4.0, 8.0, 16.0, 32.0, 64.0])
    ym = np.array([9.0, 17.5, 33.0, 70.2, 131.0, 270.5, 530.0])
    res = slope_ratio_matrix_effect(X, Y_SOLVENT, xm, ym, variance="separate")
    fs = sm.OLS(Y_SOLVENT, sm.add_constant(X)).fit()
    fm = sm.OLS(ym, sm.add_constant(xm)).fit()
    b_s, b_m, v_s, v_m = fs.params[1], fm.params[1], fs.bse[1] ** 2, fm.bse[1] ** 2
    r = b_m / b_s
    # hand delta-method computation on statsmodels' separate slope variances
    assert res.se_ratio_delta == pytest.approx(abs(r) * math.sqrt(v_m / b_m ** 2 + v_s / b_s ** 2), rel=1e-9)
    # hand computation: Welch-Satterthwaite df of b_m - R b_s
    df = (v_m + r * r * v_s) ** 2 / (v_m ** 2 / 5 + r ** 4 * v_s ** 2 / 4)
    assert res.df == pytest.approx(df, rel=1e-9)


def test_fieller_coverage_by_simulation():
    # seeded simulation: 2000 data sets, true ratio 0.8 (ME -20 %), common sigma
    rng = np.random.default_rng(2021)
    n_sim, hits, hits_delta = 2000, 0, 0
    for _ in range(n_sim):
        ys = 2.0 + 10.0 * X + rng.normal(0, 8.0, X.size)
        ym = 1.0 + 8.0 * X + rng.normal(0, 8.0, X.size)
        res = slope_ratio_matrix_effect(X, ys, X, ym, variance="pooled")
        hits += res.fieller_interval.contains(-20.0)
        hits_delta += res.delta_interval.contains(-20.0)
    se = math.sqrt(0.95 * 0.05 / n_sim)          # binomial SE of the coverage estimate, about 0.0049
    assert abs(hits / n_sim - 0.95) < 3 * se
    assert abs(hits_delta / n_sim - 0.95) < 3 * se   # well-determined slopes: delta is close too


def test_degenerate_calibrations_give_reasons():
    assert "single concentration" in slope_ratio_matrix_effect([2, 2, 2], [1, 2, 3], X, Y_MATRIX).reason
    assert "3 are needed" in slope_ratio_matrix_effect([1, 2], [1, 2], X, Y_MATRIX).reason
    noisy = slope_ratio_matrix_effect(X, [5.0, -3.0, 4.0, -2.0, 6.0, 1.0], X, Y_MATRIX)
    assert noisy.fieller_interval is None and "unbounded" in noisy.reason
    assert noisy.delta_interval is not None                  # shown, but not the reported interval
    assert slope_ratio_matrix_effect(X, np.full(6, 3.0), X, Y_MATRIX).statistic is None


def test_exact_lines_give_a_point_interval():
    res = slope_ratio_matrix_effect(X, 2 * X, X, 3 * X)
    assert res.statistic == pytest.approx(50.0, rel=1e-12)     # hand: (3/2 - 1) x 100
    assert res.fieller_interval.low == pytest.approx(50.0, abs=1e-9)


@pytest.mark.parametrize("kwargs, match", [({"level": 0.4}, r"level must lie in \(0.5, 1.0\)"),
                                           ({"variance": "welch"}, "variance must be one of")])
def test_slope_ratio_invalid_parameters(kwargs, match):
    with pytest.raises(ValueError, match=match):
        slope_ratio_matrix_effect(X, Y_SOLVENT, X, Y_MATRIX, **kwargs)


LOT_DATA = {"A": [9.8, 10.1, 10.4], "B": [10.9, 11.2, 10.6], "C": [9.1, 9.4, 9.0],
            "D": [10.0, 10.2, 9.9], "E": [8.9, 9.3, 9.2], "F": [10.5, 10.4, 10.8]}


def _flatten(data):
    return [v for vals in data.values() for v in vals], [k for k, vals in data.items() for _ in vals]


def test_lot_accuracy_by_exact_arithmetic():
    values, lots = _flatten(LOT_DATA)
    res = lot_accuracy(values, lots, 10.0)
    for row in res.lots:
        q = [Fraction(repr(v)) for v in LOT_DATA[row.lot]]
        mean = sum(q) / 3
        sd = math.sqrt(sum((v - mean) ** 2 for v in q) / 2)
        # hand computation (exact mean): accuracy = 100 mean / nominal, CV = 100 SD / mean
        assert row.accuracy_percent == pytest.approx(float(mean * 10), rel=1e-14)
        assert row.cv_percent == pytest.approx(100 * sd / float(mean), rel=1e-12)
    assert res.passed is True and res.n_lots_passed == 6


def test_lot_accuracy_failing_lot_and_too_few_lots():
    data = dict(LOT_DATA, B=[11.6, 11.7, 11.8])         # hand: accuracy 117 %
    values, lots = _flatten(data)
    res = lot_accuracy(values, lots, 10.0)
    assert res.passed is False and [r.lot for r in res.lots if not r.passed] == ["B"]
    values, lots = _flatten({k: LOT_DATA[k] for k in "ABCDE"})
    few = lot_accuracy(values, lots, 10.0)
    assert few.passed is None and "5 matrix lots, at least 6" in few.reason
    wider = lot_accuracy(*_flatten(data), 10.0, max_bias_percent=20.0)
    assert wider.passed is True                          # the limit is a parameter


def test_lot_accuracy_too_few_replicates_is_not_judged():
    data = dict(LOT_DATA, C=[9.1, 9.4])
    res = lot_accuracy(*_flatten(data), 10.0)
    assert res.passed is None and "lot C" in res.reason
    with pytest.raises(ValueError, match="nominal must be a finite number > 0, got 0"):
        lot_accuracy(*_flatten(LOT_DATA), 0)


def test_normalised_matrix_factor_by_hand():
    lots = ["L1", "L1", "L2", "L2", "L3", "L3", "L4", "L4", "L5", "L5", "L6", "L6"]
    analyte = [900, 940, 1010, 990, 850, 870, 960, 980, 1100, 1080, 920, 900]
    internal = [4500, 4700, 5000, 5100, 4300, 4350, 4800, 4900, 5400, 5300, 4650, 4600]
    res = normalised_matrix_factor(analyte, internal, lots, [1000, 1020], [5000, 5100])
    expected = []
    for k in range(6):
        a = Fraction(analyte[2 * k] + analyte[2 * k + 1], 2) / Fraction(1010)
        i = Fraction(internal[2 * k] + internal[2 * k + 1], 2) / Fraction(5050)
        expected.append(a / i)
    mean = sum(expected) / 6
    sd = math.sqrt(sum((e - mean) ** 2 for e in expected) / 5)
    # hand computation (exact factors): MF_analyte / MF_IS per lot, CV across the six lots
    assert [r.normalised_factor for r in res.lots] == pytest.approx([float(e) for e in expected], rel=1e-14)
    assert res.cv_percent == pytest.approx(100 * sd / float(mean), rel=1e-12)
    assert res.passed is (res.cv_percent <= 15)


def test_judged_slope_ratio_without_a_bounded_interval_is_not_applicable():
    from validator.characteristics.matrix_effect.analysis import MatrixEffect, matrix_effect_criteria
    flat = np.array([5.0, -3.0, 4.0, -2.0, 6.0, 1.0])            # a solvent "calibration" with no slope
    for variance in ("pooled", "separate"):
        sr = slope_ratio_matrix_effect(X, flat, X, Y_MATRIX, variance=variance)
        # cross-check: statsmodels OLS of the solvent line; Fieller's set is unbounded exactly when
        # |b_s / SE(b_s)| <= t (g = t^2 var(b_s) / b_s^2 >= 1), SE from the variance model used
        fit = sm.OLS(flat, sm.add_constant(X)).fit()
        t_slope = abs(fit.params[1]) / sr.se_slope_solvent
        assert t_slope <= stats.t.isf(0.025, sr.df)
        if variance == "separate":
            assert sr.se_slope_solvent == pytest.approx(fit.bse[1], rel=1e-9)
        assert sr.statistic is not None and abs(sr.statistic) > 20 and sr.interval is None
        (crit,) = matrix_effect_criteria(MatrixEffect(sr, (), None), judge_slope_ratio=True, limit_pct=20.0)
        # not shown is not passed: an estimate without a bounded interval is not judged (it was FAIL)
        assert crit.passed is None and crit.value is None
        assert "no bounded interval" in crit.note and "unbounded" in crit.note
    exact = slope_ratio_matrix_effect(X, 2 * X, X, 3 * X)
    (crit,) = matrix_effect_criteria(MatrixEffect(exact, (), None), judge_slope_ratio=True, limit_pct=60.0)
    assert crit.passed is True and crit.value == pytest.approx(50.0)   # hand: (3/2 - 1) x 100 within +/-60


def test_weighted_lines_separate_variances_match_statsmodels_wls():
    xm = np.array([1.0, 2.0, 4.0, 8.0, 16.0, 32.0, 64.0])
    ym = np.array([9.0, 17.5, 33.0, 70.2, 131.0, 270.5, 530.0])
    ws, wm = 1 / X ** 2, 1 / xm ** 2
    res = slope_ratio_matrix_effect(X, Y_SOLVENT, xm, ym, weighting="1/x^2", weights_solvent=ws,
                                    weights_matrix=wm)
    assert res.variance == "separate" and res.weighting == "1/x^2"       # the default variance model
    # cross-check: statsmodels WLS with weights 1/x^2, one fit per calibration
    fs = sm.WLS(Y_SOLVENT, sm.add_constant(X), weights=ws).fit()
    fm = sm.WLS(ym, sm.add_constant(xm), weights=wm).fit()
    b_s, b_m, v_s, v_m = fs.params[1], fm.params[1], fs.bse[1] ** 2, fm.bse[1] ** 2
    r = b_m / b_s
    assert res.slope_solvent == pytest.approx(b_s, rel=1e-12) and res.slope_matrix == pytest.approx(b_m, rel=1e-12)
    assert res.se_slope_solvent == pytest.approx(fs.bse[1], rel=1e-9)
    assert res.se_slope_matrix == pytest.approx(fm.bse[1], rel=1e-9)
    # hand computation: Welch-Satterthwaite df of b_m - R b_s on the WLS slope variances
    df = (v_m + r * r * v_s) ** 2 / (v_m ** 2 / 5 + r ** 4 * v_s ** 2 / 4)
    assert res.df == pytest.approx(df, rel=1e-9)
    # Fieller limits: |b_m - R b_s| / sqrt(v_m + R^2 v_s) = t(df) at each limit (hand, on statsmodels' values)
    t = stats.t.isf(0.025, df)
    for me in (res.interval.low, res.interval.high):
        rr = 1 + me / 100
        assert abs(b_m - rr * b_s) / math.sqrt(v_m + rr * rr * v_s) == pytest.approx(t, rel=1e-7)


def test_weighted_lines_pooled_variance_match_joint_statsmodels_wls():
    ws, wm = 1 / X, 1 / X
    res = slope_ratio_matrix_effect(X, Y_SOLVENT, X, Y_MATRIX, variance="pooled", weighting="1/x",
                                    weights_solvent=ws, weights_matrix=wm)
    x = np.concatenate([X, X])
    m = np.r_[np.zeros(X.size), np.ones(X.size)]
    # cross-check: statsmodels WLS of the joint model y = a + b x + c M + d M x, weights 1/x (one sigma)
    fit = sm.WLS(np.concatenate([Y_SOLVENT, Y_MATRIX]), np.column_stack([np.ones_like(x), x, m, m * x]),
                 weights=np.concatenate([ws, wm])).fit()
    b_s, b_m = fit.params[1], fit.params[1] + fit.params[3]
    assert res.slope_ratio == pytest.approx(b_m / b_s, rel=1e-12) and res.df == fit.df_resid
    assert res.se_slope_solvent == pytest.approx(math.sqrt(fit.cov_params()[1, 1]), rel=1e-9)
    t = stats.t.isf(0.025, fit.df_resid)
    for me in (res.interval.low, res.interval.high):
        r = 1 + me / 100
        tv = float(np.squeeze(fit.t_test(np.array([[0, 1 - r, 0, 1]])).tvalue))
        assert abs(tv) == pytest.approx(t, rel=1e-8)


def test_weights_must_be_positive_and_one_per_point():
    with pytest.raises(ValueError, match="weights_solvent: expected 6 positive weights"):
        slope_ratio_matrix_effect(X, Y_SOLVENT, X, Y_MATRIX, weights_solvent=np.r_[1 / X[:5], 0.0])
