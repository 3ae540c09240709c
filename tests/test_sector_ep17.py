"""CLSI EP17-A2 limit of blank, limit of detection and limit of quantitation (validator/sector/ep17.py).

Input data are arbitrary numbers; every expected value is computed independently of the
module: exact arithmetic with ``fractions``, numpy's Hazen quantile, statsmodels OLS.
"""

import math
import warnings
from fractions import Fraction

import numpy as np
import pytest
import statsmodels.api as sm

from validator.sector import ep17
from validator.sector.ep17 import (coverage_factor, limit_of_blank, limit_of_detection, limit_of_quantitation,
                                   nonparametric_percentile)


@pytest.fixture(autouse=True)
def _no_warnings():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        yield


def _exact_mean_var(values):
    """Mean and n-1 variance in exact arithmetic (the inputs read as decimal numbers)."""
    q = [Fraction(repr(float(v))) for v in values]
    mean = sum(q) / len(q)
    var = sum((v - mean) ** 2 for v in q) / (len(q) - 1)
    return mean, var


def test_coverage_factor_240_results_4_samples():
    # hand computation from the EP17-A2 formula: 1.645 / (1 - 1/(4 (240 - 4))) = 1.645 x 944/943
    expected = Fraction(1645, 1000) / (1 - Fraction(1, 4 * 236))
    assert coverage_factor(240, 4) == pytest.approx(float(expected), rel=1e-15)
    assert round(coverage_factor(240, 4), 4) == 1.6467      # value stated in the task, hand computation


@pytest.mark.parametrize("bad", [(4, 4), (3, 4), (10, 0), (10.0, 2)])
def test_coverage_factor_refuses_impossible_designs(bad):
    with pytest.raises(ValueError, match="coverage_factor"):
        coverage_factor(*bad)


def test_nonparametric_lob_60_blanks_is_mean_of_57th_and_58th():
    rng = np.random.default_rng(17)
    blanks = rng.normal(0.1, 0.05, 60)
    ordered = np.sort(blanks)
    res = limit_of_blank(blanks)
    # rank 0.5 + 0.95 x 60 = 57.5: hand computation, mean of the 57th and 58th order statistics
    assert res.lots[0].rank == pytest.approx(57.5)
    assert res.value == pytest.approx((ordered[56] + ordered[57]) / 2, rel=1e-15)
    # 60 results meet the per-lot minimum; one lot does not meet the two lots of an establishment
    assert res.notes == ("1 reagent lot(s), fewer than the 2 CLSI EP17-A2 asks for establishment",)


@pytest.mark.parametrize("n", [10, 20, 37, 60, 121])
def test_nonparametric_rank_matches_numpy_hazen_quantile(n):
    rng = np.random.default_rng(n)
    x = rng.lognormal(size=n)
    value, rank, reason = nonparametric_percentile(x, 0.95)
    # cross-check: numpy quantile, method "hazen" (plotting position (k - 0.5)/n, i.e. rank 0.5 + p n)
    assert value == pytest.approx(float(np.quantile(x, 0.95, method="hazen")), rel=1e-13)
    assert rank == pytest.approx(0.5 + 0.95 * n) and reason == ""


def test_nonparametric_needs_ten_results_at_95_percent():
    value, rank, reason = nonparametric_percentile(np.arange(9.0), 0.95)
    # hand computation: rank 0.5 + 0.95 x 9 = 9.05 > 9
    assert value is None and rank == pytest.approx(9.05) and "at least 10 results" in reason
    res = limit_of_blank(np.arange(9.0))
    assert res.value is None and "lot 1" in res.reason


def test_parametric_lob_by_hand():
    blanks = [0.12, 0.05, 0.09, 0.15, 0.02, 0.11, 0.07, 0.10, 0.04, 0.13, 0.08, 0.06]
    samples = ["a"] * 6 + ["b"] * 6
    res = limit_of_blank(blanks, method="parametric", sample=samples, purpose="verification")
    mean, var = _exact_mean_var(blanks)
    cp = Fraction(1645, 1000) / (1 - Fraction(1, 4 * (12 - 2)))
    # hand computation: LoB = M_B + c_p SD_B, c_p with B = 12, K = 2 (exact except the square root)
    assert res.value == pytest.approx(float(mean) + float(cp) * math.sqrt(var), rel=1e-14)
    lot = res.lots[0]
    assert lot.coverage_factor == pytest.approx(float(cp), rel=1e-15)
    assert (lot.n_results, lot.n_samples) == (12, 2)
    assert any("fewer than the 20" in n for n in res.notes)


def test_lob_per_lot_and_reported_maximum():
    rng = np.random.default_rng(3)
    a, b = rng.normal(0, 1, 60), rng.normal(0.5, 1, 60)
    res = limit_of_blank(np.concatenate([a, b]), lot=["A"] * 60 + ["B"] * 60)
    # cross-check: numpy Hazen quantile per lot; the reported LoB is the larger (EP17 practice)
    qa, qb = (float(np.quantile(v, 0.95, method="hazen")) for v in (a, b))
    assert [lot.value for lot in res.lots] == pytest.approx([qa, qb], rel=1e-13)
    assert res.value == pytest.approx(max(qa, qb), rel=1e-15)
    assert res.notes == ()                       # 2 lots x 60 results: the establishment minimums are met


def test_design_minimums_are_notes():
    res = limit_of_blank(np.linspace(0, 1, 30))
    assert res.value is not None
    assert any("30 blank results, fewer than the 60" in n for n in res.notes)
    assert any("1 reagent lot(s), fewer than the 2" in n for n in res.notes)
    ver = limit_of_blank(np.linspace(0, 1, 30), purpose="verification")
    assert ver.notes == ()


def test_lod_pooled_sd_matches_one_way_anova_residual_sd():
    rng = np.random.default_rng(11)
    samples = np.repeat(["s1", "s2", "s3", "s4"], [60, 60, 59, 61])
    means = {"s1": 0.4, "s2": 0.5, "s3": 0.45, "s4": 0.6}
    results = np.array([rng.normal(means[s], 0.08) for s in samples])
    lob = 0.2
    res = limit_of_detection(results, samples, lob)
    # cross-check: statsmodels OLS on sample indicators; its residual SD is the pooled within-sample SD
    dummies = np.column_stack([(samples == s).astype(float) for s in ("s1", "s2", "s3", "s4")])
    ols = sm.OLS(results, dummies).fit()
    sd_l = math.sqrt(ols.scale)
    assert res.lots[0].sd == pytest.approx(sd_l, rel=1e-12)
    # hand computation: c_p = 1.645 / (1 - 1/(4 (240 - 4)))
    assert res.value == pytest.approx(lob + 1.645 * 944 / 943 * sd_l, rel=1e-12)
    assert res.notes[0].startswith("1 reagent lot")


def test_lod_per_lot_maximum_and_degenerate_lot():
    x = [1.0, 1.2, 0.9, 1.1, 1.3, 0.8]
    res = limit_of_detection(x + x[:3], ["p", "p", "p", "q", "q", "q", "r", "s", "t"], 0.5,
                             lot=["A"] * 6 + ["B"] * 3, purpose="verification")
    assert res.value is None and "lot B" in res.reason           # lot B has no sample with two results
    good = limit_of_detection(x + [v * 2 for v in x], ["p", "p", "p", "q", "q", "q"] * 2, 0.5,
                              lot=["A"] * 6 + ["B"] * 6, purpose="verification")
    assert good.value == pytest.approx(max(r.value for r in good.lots))
    assert good.lots[1].sd == pytest.approx(2 * good.lots[0].sd, rel=1e-13)   # hand: SD scales with the data


def test_loq_lowest_level_meeting_precision_goal():
    # three levels, four results each; CV by exact arithmetic
    data = {1.0: [0.7, 1.3, 1.0, 1.2], 2.0: [1.9, 2.1, 2.0, 2.2], 4.0: [4.1, 3.9, 4.0, 4.2]}
    results = [v for vals in data.values() for v in vals]
    nominal = [k for k, vals in data.items() for _ in vals]
    samples = [f"L{k:g}" for k in nominal]
    cvs = {}
    for k, vals in data.items():
        mean, var = _exact_mean_var(vals)
        cvs[k] = 100 * math.sqrt(var) / float(mean)
    # hand computation (exact mean and variance): CVs about 26.3, 6.3, 3.2 %
    res = limit_of_quantitation(results, samples, nominal, max_cv_percent=20.0)
    assert [lv.cv_percent for lv in res.levels] == pytest.approx([cvs[1.0], cvs[2.0], cvs[4.0]], rel=1e-13)
    assert res.value == 2.0
    floored = limit_of_quantitation(results, samples, nominal, max_cv_percent=20.0, limit_of_detection=2.5)
    assert floored.value == 2.5 and "below the LoD" in floored.notes[-1]


def test_loq_total_error_goal_and_a_failing_higher_level():
    data = {1.0: [1.0, 1.1, 0.9], 2.0: [2.6, 2.7, 2.5], 3.0: [3.0, 3.1, 2.9]}
    results = [v for vals in data.values() for v in vals]
    nominal = [k for k, vals in data.items() for _ in vals]
    res = limit_of_quantitation(results, [str(k) for k in nominal], nominal, max_total_error=0.5)
    # hand computation: TE = |bias| + 2 SD = 0 + 0.2, 0.6 + 0.2, 0 + 0.2
    assert [lv.total_error for lv in res.levels] == pytest.approx([0.2, 0.8, 0.2], rel=1e-12)
    assert res.value == 3.0                                  # level 2 fails, so level 1 cannot set the LoQ
    assert any("nominal 1" in n for n in res.notes)


def test_loq_no_level_passes_and_bad_arguments():
    res = limit_of_quantitation([1.0, 2.0, 1.0, 3.0], ["a", "a", "b", "b"], [1, 1, 2, 2], max_cv_percent=1.0)
    assert res.value is None and "does not meet" in res.reason
    with pytest.raises(ValueError, match="neither"):
        limit_of_quantitation([1.0], ["a"], [1.0])
    with pytest.raises(ValueError, match="several nominal"):
        limit_of_quantitation([1.0, 1.0], ["a", "a"], [1.0, 2.0], max_cv_percent=10)
    with pytest.raises(ValueError, match="max_cv_percent must be a finite number > 0, got -1"):
        limit_of_quantitation([1.0], ["a"], [1.0], max_cv_percent=-1)


@pytest.mark.parametrize("kwargs, match", [
    ({"method": "robust"}, "method must be one of"),
    ({"percentile": 1.0}, r"percentile must lie in \(0.0, 1.0\), got 1.0"),
    ({"purpose": "audit"}, "purpose must be one of"),
])
def test_lob_invalid_parameters(kwargs, match):
    with pytest.raises(ValueError, match=match):
        limit_of_blank([0.0] * 20, **kwargs)


def test_lob_refuses_non_finite_results():
    with pytest.raises(ValueError, match="blank_results: value nan at position 1"):
        limit_of_blank([0.0, float("nan"), 1.0])


def test_constant_blanks_give_no_parametric_lob_and_do_not_warn():
    res = limit_of_blank([0.0] * 20, method="parametric", purpose="verification")
    # hand: mean 0, SD 0: identical (censored) blanks estimate no percentile by mean + c_p SD; not applicable
    assert res.value is None and "SD 0" in res.reason and "non-parametric" in res.reason
    assert res.lots[0].sd == 0.0
    # the non-parametric LoB of the same data exists: the 95th percentile of twenty zeros is 0 (hand)
    assert limit_of_blank([0.0] * 20, purpose="verification").value == 0.0
    assert ep17.MINIMUM_RESULTS_PER_LOT == {"establishment": 60, "verification": 20}


@pytest.mark.parametrize("samples, lots, expected", [
    (["a"] * 2, ["1"] * 2, "lot 1: 2 blank results from 1 sample(s)"),        # hand count: 2 < 20
    (["a"] * 20, ["1"] * 20, "lot 1: 20 blank results from 1 sample(s)"),     # hand count: 1 < 2 samples
    (["a", "b"] * 10, ["1"] * 20, ""),                                         # 20 results, 2 samples: met
    (["a", "b"] * 15, ["1"] * 20 + ["2"] * 10, "lot 2: 10 blank results"),     # 2 lots: each lot counts
    (["a", "b"] * 20, ["1", "2", "3", "4"] * 10, ""),                          # 4 lots: all 40 together
])
def test_verification_shortfall(samples, lots, expected):
    # from memory: CLSI EP17-A2 sec. 6, at least 20 results from 2 samples; counts by hand
    got = ep17.verification_shortfall(samples, lots, "blank")
    assert (got == "") if expected == "" else got.startswith(expected)
    assert (ep17.VERIFICATION_MINIMUM_RESULTS, ep17.VERIFICATION_MINIMUM_SAMPLES) == (20, 2)


def test_four_or_more_lots_combine_all_results_for_lob_and_lod():
    # from memory: EP17-A2 5.3.3.1: 2 or 3 reagent lots -> largest lot value; 4 or more -> all lots combined
    rng = np.random.default_rng(415)
    lots = np.repeat(["A", "B", "C", "D"], 15)
    blanks = rng.normal(0.02, 0.03, 60) + np.repeat([0.0, 0.01, 0.02, 0.005], 15)
    blank_samples = np.tile(["b1", "b2", "b3"], 20)
    res = limit_of_blank(blanks, lot=lots, sample=blank_samples)
    # cross-check: numpy Hazen quantile (rank 0.5 + p N) of all 60 results together
    pooled = float(np.quantile(blanks, 0.95, method="hazen"))
    assert res.lot_rule == "lots combined"
    assert res.value == pytest.approx(pooled, rel=1e-13)
    assert res.combined.n_results == 60 and res.combined.rank == pytest.approx(57.5)
    # the per-lot values are still shown: Hazen quantile of each lot's 15 results
    assert [lot.value for lot in res.lots] == pytest.approx(
        [float(np.quantile(blanks[lots == k], 0.95, method="hazen")) for k in "ABCD"], rel=1e-13)
    par = limit_of_blank(blanks, lot=lots, sample=blank_samples, method="parametric")
    mean, var = _exact_mean_var(blanks)
    # hand computation: M_B + c_p SD_B over all 60 results, c_p = 1.645 / (1 - 1/(4 (60 - 3)))
    cp = Fraction(1645, 1000) / (1 - Fraction(1, 4 * 57))
    assert par.value == pytest.approx(float(mean) + float(cp) * math.sqrt(var), rel=1e-12)

    low = rng.normal(0.3, 0.05, 60) + np.repeat([0.0, 0.02, -0.01, 0.01], 15)
    low_samples = np.tile(["s1", "s2", "s3"], 20)
    lod = limit_of_detection(low, low_samples, res.value, lot=lots)
    # cross-check: statsmodels OLS on the 3 sample indicators over all 60 results (residual SD = pooled SD_L)
    dummies = np.column_stack([(low_samples == s).astype(float) for s in ("s1", "s2", "s3")])
    sd_l = math.sqrt(sm.OLS(low, dummies).fit().scale)
    assert lod.lot_rule == "lots combined" and lod.combined.sd == pytest.approx(sd_l, rel=1e-12)
    # hand computation: c_p = 1.645 / (1 - 1/(4 (60 - 3)))
    assert lod.value == pytest.approx(res.value + float(cp) * sd_l, rel=1e-12)


def test_two_or_three_lots_report_the_largest_and_one_lot_its_own():
    rng = np.random.default_rng(416)
    x = rng.normal(0, 1, 90)
    three = limit_of_blank(x, lot=np.repeat(["A", "B", "C"], 30))
    # cross-check: numpy Hazen quantile per lot; from memory EP17-A2 5.3.3.1: 2-3 lots -> the largest
    assert three.lot_rule == "largest lot" and three.combined is None
    assert three.value == pytest.approx(max(float(np.quantile(x[i:i + 30], 0.95, method="hazen"))
                                            for i in (0, 30, 60)), rel=1e-13)
    assert "combined only from 4 lots" in three.combined_reason
    assert limit_of_blank(x).lot_rule == "one lot"
