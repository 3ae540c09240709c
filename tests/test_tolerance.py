"""Tolerance intervals and the accuracy profile (validator/tolerance.py).

Every expected value names its source beside it.
"""

from __future__ import annotations

import math
import warnings
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from validator.maths.tolerance import (accuracy_profile, beta_expectation_interval, normal_tolerance_factor,
                                 normal_tolerance_interval)

from conftest import reference_file



def _resistors():
    """100OHM.DAT: the column y (resistance) of the 25 readings, data from line 26."""
    return np.loadtxt(reference_file("tolerance", "100OHM.DAT"), skiprows=25, usecols=10)


# ---------------------------------------------------------------- beta-content factors, published values

def test_nist_handbook_howe_two_sided_factor():
    # NIST/SEMATECH e-Handbook 7.2.6.3: N = 43, coverage 0.90, confidence 0.99, Howe k2 = 2.2173159
    k = normal_tolerance_factor(43, 0.90, 0.99, method="howe")
    assert k == pytest.approx(2.2173159, abs=5e-8)


def test_nist_handbook_natrella_one_sided_factor():
    # NIST/SEMATECH e-Handbook 7.2.6.3: same case, Natrella one-sided k1 = 1.8751896
    k = normal_tolerance_factor(43, 0.90, 0.99, sides="upper", method="natrella")
    assert k == pytest.approx(1.8751896, abs=5e-8)
    # the exact (noncentral t) factor is close to the approximation but not equal
    exact = normal_tolerance_factor(43, 0.90, 0.99, sides="lower")
    assert abs(exact - k) < 0.005 and exact != k


@pytest.mark.parametrize("n, content, confidence, printed", [
    (10, 0.90, 0.95, 2.856),   # Meeker, Hahn and Escobar (2017), table J.5b
    (20, 0.95, 0.95, 2.760),   # Meeker, Hahn and Escobar (2017), table J.5b
])
def test_exact_two_sided_factor_meeker_hahn_escobar(n, content, confidence, printed):
    k = normal_tolerance_factor(n, content, confidence)
    assert round(k, 3) == printed


@pytest.mark.parametrize("n, printed", [
    (10, 3.3935),              # ISO 16269-6:2014 annex F, p = 0.95, 95 %, rounded up at 4 dp
    (26, 2.6188),              # ISO 16269-6:2014 annex F, p = 0.95, 95 %, rounded up at 4 dp
])
def test_exact_two_sided_factor_iso_16269_6(n, printed):
    k = normal_tolerance_factor(n, 0.95, 0.95)
    assert math.ceil(k * 1e4) / 1e4 == pytest.approx(printed, abs=1e-12)


@pytest.mark.parametrize("n, content, confidence", [
    (2, 0.90, 0.95), (5, 0.99, 0.90), (12, 0.75, 0.99), (30, 0.95, 0.95), (100, 0.90, 0.90)])
def test_two_sided_factors_against_toleranceinterval_package(n, content, confidence):
    from toleranceinterval.twoside import normal_factor
    # cross-check: toleranceinterval (PyPI) 'exact' (Gauss-Kronrod) and 'howe' factors
    assert normal_tolerance_factor(n, content, confidence) == pytest.approx(
        normal_factor(n, content, confidence, method="exact"), rel=1e-7)
    assert normal_tolerance_factor(n, content, confidence, method="howe") == pytest.approx(
        normal_factor(n, content, confidence, method="howe"), rel=1e-10)


def test_pooled_df_factor_against_toleranceinterval_package():
    from toleranceinterval.twoside import normal_factor
    # cross-check: toleranceinterval with nu (the df of a pooled SD) different from n - 1
    for method in ("exact", "howe"):
        assert normal_tolerance_factor(5, 0.90, 0.95, df=20, method=method) == pytest.approx(
            normal_factor(5, 0.90, 0.95, method=method, nu=20), rel=1e-9)


def test_one_sided_bound_against_toleranceinterval_package():
    import toleranceinterval as ti
    x = _resistors()
    for content, confidence in ((0.90, 0.99), (0.95, 0.95)):
        upper = normal_tolerance_interval(x, content, confidence, sides="upper")
        lower = normal_tolerance_interval(x, content, confidence, sides="lower")
        # cross-check: toleranceinterval.oneside.normal (noncentral t)
        assert upper.high == pytest.approx(ti.oneside.normal(x, content, confidence)[0], rel=1e-12)
        assert lower.low == pytest.approx(ti.oneside.normal(x, 1 - content, confidence)[0], rel=1e-12)
        assert upper.low is None and lower.high is None


def test_interval_on_nist_resistor_data():
    x = _resistors()
    ti = normal_tolerance_interval(x, 0.90, 0.99)
    assert ti.n == 25
    assert ti.mean == pytest.approx(97.06984, abs=5e-6)   # validator/reference_data/README.md, 100OHM.DAT
    assert ti.sd == pytest.approx(0.026798, abs=5e-7)     # same
    from toleranceinterval.twoside import normal
    # cross-check: toleranceinterval.twoside.normal, exact method
    low, high = normal(x, 0.90, 0.99, method="exact")[0]
    assert (ti.low, ti.high) == (pytest.approx(low, rel=1e-9), pytest.approx(high, rel=1e-9))


def test_mean_plus_t_sd_is_not_a_tolerance_interval():
    # the exact factor is far above the t quantile a "calculator" would use
    n = 10
    assert normal_tolerance_factor(n, 0.95, 0.95) > 1.5 * stats.t.ppf(0.975, n - 1)


def test_degenerate_samples_have_reasons():
    one = normal_tolerance_interval([1.0], 0.9, 0.95)
    assert one.low is None and "at least 2" in one.reason
    flat = normal_tolerance_interval([2.0, 2.0, 2.0], 0.9, 0.95)
    assert flat.low is None and flat.sd == 0.0 and "equal" in flat.reason


@pytest.mark.parametrize("kwargs, message", [
    (dict(n=1, content=0.9, confidence=0.95), "n must be an integer >= 2, got 1"),
    (dict(n=10, content=1.0, confidence=0.95), "content must be in the open interval (0, 1), got 1.0"),
    (dict(n=10, content=0.9, confidence=0.95, method="guess"), "method must be one of 'exact', 'howe'"),
    (dict(n=10, content=0.9, confidence=0.95, sides="both"), "sides must be one of"),
    (dict(n=10, content=0.9, confidence=0.95, df=-1), "df must be a finite number > 0, got -1"),
])
def test_invalid_parameters_raise(kwargs, message):
    with pytest.raises(ValueError, match=message.replace("(", r"\(").replace(")", r"\)")):
        normal_tolerance_factor(**kwargs)


# ---------------------------------------------------------------- beta-expectation (Mee, Hubert)

def test_beta_expectation_hand_computation_balanced():
    # hand computation, see the docstring: p = 3 runs of n = 2, exact mean squares with fractions,
    # then the formula as printed in Hubert et al. (2007) part III in terms of R and B
    runs = [[10, 12], [15, 13], [11, 11]]
    p, n = 3, 2
    means = [Fraction(sum(r), n) for r in runs]
    grand = sum(means) / p
    ms_w = sum((Fraction(v) - m) ** 2 for r, m in zip(runs, means) for v in r) / (p * (n - 1))
    ms_b = n * sum((m - grand) ** 2 for m in means) / (p - 1)
    s2_b = (ms_b - ms_w) / n
    assert (ms_w, ms_b, s2_b) == (Fraction(4, 3), Fraction(6), Fraction(7, 3))
    R = s2_b / ms_w
    B2 = (R + 1) / (n * R + 1)
    nu = (R + 1) ** 2 / ((R + Fraction(1, n)) ** 2 / (p - 1) + (1 - Fraction(1, n)) / (p * n))
    s_ip = math.sqrt(ms_w + s2_b)
    k = stats.t.ppf(0.95, float(nu)) * math.sqrt(1 + 1 / float(p * n * B2))
    got = beta_expectation_interval(runs, 0.90)
    assert got.balanced and not got.between_runs_set_to_zero
    assert got.df == pytest.approx(float(nu), rel=1e-13)
    assert got.k == pytest.approx(k, rel=1e-12)
    assert got.sd_intermediate == pytest.approx(s_ip, rel=1e-14)
    assert (got.low, got.high) == (pytest.approx(float(grand) - k * s_ip, rel=1e-13),
                                   pytest.approx(float(grand) + k * s_ip, rel=1e-13))


def test_beta_expectation_negative_between_run_estimate():
    # hand computation: runs with equal means, MS_B = 0 < MS_W, so R = 0 and B = 1
    runs = [[1.0, 3.0], [3.0, 1.0], [2.0, 2.0]]
    got = beta_expectation_interval(runs, 0.80)
    p, n = 3, 2
    nu = 1 / (1 / (n * n * (p - 1)) + (1 - 1 / n) / (p * n))      # Hubert et al. (2007) with R = 0
    assert got.between_runs_set_to_zero and got.sd_between_runs == 0.0
    assert got.df == pytest.approx(nu, rel=1e-13)
    assert got.k == pytest.approx(stats.t.ppf(0.9, nu) * math.sqrt(1 + 1 / (p * n)), rel=1e-13)


def _mean_coverage(design, sigma_b, sigma_w, beta, draws, seed):
    rng = np.random.default_rng(seed)
    total_sd = math.hypot(sigma_b, sigma_w)
    run_effects = rng.normal(0.0, sigma_b, size=(draws, len(design)))
    noise = rng.normal(0.0, sigma_w, size=(draws, sum(design)))
    bounds = np.empty((draws, 2))
    edges = np.cumsum((0,) + tuple(design))
    for i in range(draws):
        runs = [run_effects[i, j] + noise[i, edges[j]:edges[j + 1]] for j in range(len(design))]
        iv = beta_expectation_interval(runs, beta)
        bounds[i] = iv.low, iv.high
    # the true proportion of the population N(0, sigma_b^2 + sigma_w^2) inside each interval
    cover = stats.norm.cdf(bounds[:, 1] / total_sd) - stats.norm.cdf(bounds[:, 0] / total_sd)
    return cover.mean(), cover.std(ddof=1) / math.sqrt(draws)


@pytest.mark.parametrize("design, sigma_b, beta, seed", [
    ((2, 2, 2, 2, 2), 1.0, 0.95, 12),    # 5 runs x 2, between-run SD equal to repeatability
    ((4, 4, 4, 4), 2.0, 0.80, 13),       # dominant between-run variance
    ((3, 2, 3, 3), 1.0, 0.90, 14),       # unbalanced (one result lost)
])
def test_beta_expectation_mean_coverage_by_simulation(design, sigma_b, beta, seed):
    # seeded simulation, 20 000 draws: the mean coverage must be within 0.01 of beta (Mee 1984: the
    # Satterthwaite t interval is approximate); the simulation SE is at most 0.0015, so 0.01 is
    # the approximation's allowance plus well over 3 SE
    mean, se = _mean_coverage(design, sigma_b, 1.0, beta, 20_000, seed)
    assert se < 0.0015
    assert abs(mean - beta) < 0.01, (mean, se)


def test_beta_expectation_is_conservative_without_between_run_variance():
    # seeded simulation, 3 000 draws (SE about 0.0009): with no true between-run variance the
    # truncated estimate makes the interval conservative; measured 0.965 for beta = 0.95
    # (5 runs x 2, 5 000 draws, SE 0.0007) when this test was written
    mean, se = _mean_coverage((2, 2, 2, 2, 2), 0.0, 1.0, 0.95, 3_000, 15)
    assert mean > 0.95 + 3 * se, (mean, se)


def test_beta_expectation_degenerate_cases():
    assert "at least 2 runs" in beta_expectation_interval([[1.0, 2.0, 3.0]], 0.9).reason
    assert "one run with 2" in beta_expectation_interval([[1.0], [2.0]], 0.9).reason
    flat = beta_expectation_interval([[5.0, 5.0], [5.0, 5.0]], 0.9)
    assert flat.low is None and flat.sd_intermediate == 0.0 and "equal" in flat.reason
    with warnings.catch_warnings():
        warnings.simplefilter("error")   # no numpy warning on degenerate data
        beta_expectation_interval([[5.0, 5.0], [6.0, 6.0]], 0.9)   # MS_W = 0 but MS_B > 0
    with pytest.raises(ValueError, match="beta must be in the open interval"):
        beta_expectation_interval([[1.0, 2.0], [3.0, 4.0]], 1.5)


# ---------------------------------------------------------------- accuracy profile

def test_accuracy_profile_hand_interpolation():
    levels = [
        (1.0, [[0.93, 1.05], [1.08, 0.96], [1.02, 0.99]]),      # wide at the low end
        (10.0, [[10.1, 10.0], [9.9, 10.05], [10.0, 10.1]]),
        (100.0, [[101.0, 100.5], [99.5, 100.0], [100.8, 100.2]]),
    ]
    prof = accuracy_profile(levels, beta=0.90, acceptance_percent=10.0)
    rel = []
    for c, runs in levels:
        iv = beta_expectation_interval(runs, 0.90)
        rel.append(((iv.low - c) / c * 100, (iv.high - c) / c * 100))
    for lv, (lo, hi), (c, runs) in zip(prof.levels, rel, levels):
        assert (lv.low_percent, lv.high_percent) == (pytest.approx(lo, rel=1e-12), pytest.approx(hi, rel=1e-12))
        m = np.mean([np.mean(r) for r in runs])
        assert lv.relative_bias_percent == pytest.approx((m - c) / c * 100, rel=1e-12, abs=1e-12)
    assert not prof.levels[0].inside and prof.levels[1].inside and prof.levels[2].inside
    # hand computation: the first level is outside on the upper and the lower side; on [1, 10] each
    # limit is a straight line in c, and the range starts where the later of the two crossings is
    (l0, u0), (l1, u1) = rel[0], rel[1]
    cross_upper = 1.0 + (10.0 - u0) / (u1 - u0) * 9.0 if u0 > 10 else 1.0
    cross_lower = 1.0 + (-10.0 - l0) / (l1 - l0) * 9.0 if l0 < -10 else 1.0
    start = max(cross_upper, cross_lower)
    assert prof.validated_ranges == (pytest.approx((start, 100.0), rel=1e-12),)


def test_accuracy_profile_two_pieces_when_a_middle_level_fails():
    tight = [[1.0, 1.002], [0.998, 1.0], [1.001, 0.999]]
    wide = [[0.80, 1.25], [1.20, 0.85], [1.0, 1.02]]
    levels = [(c, [[c * v for v in run] for run in (wide if c == 10.0 else tight)]) for c in (1.0, 10.0, 100.0)]
    prof = accuracy_profile(levels, beta=0.95, acceptance_percent=5.0)
    (lo1, hi1), (lo2, hi2) = [(lv.low_percent, lv.high_percent) for lv in prof.levels[:2]]
    assert prof.levels[0].inside and not prof.levels[1].inside and prof.levels[2].inside
    # hand computation: on [1, 10] the upper limit reaches +5 at c = 1 + (5 - hi1)/(hi2 - hi1) * 9 and the
    # lower limit -5 at c = 1 + (-5 - lo1)/(lo2 - lo1) * 9; the first piece ends at the earlier one
    end = min(1 + (5 - hi1) / (hi2 - hi1) * 9, 1 + (-5 - lo1) / (lo2 - lo1) * 9)
    hi3, lo3 = prof.levels[2].high_percent, prof.levels[2].low_percent
    start = max(10 + (5 - hi2) / (hi3 - hi2) * 90, 10 + (-5 - lo2) / (lo3 - lo2) * 90)
    assert prof.validated_ranges == (pytest.approx((1.0, end), rel=1e-12), pytest.approx((start, 100.0), rel=1e-12))


def test_beta_expectation_invariances():
    # the interval moves with a shift and scales with a positive factor; run order does not matter
    runs = [[10.1, 10.4, 9.9], [10.8, 10.6, 11.0], [9.7, 10.0, 9.8], [10.2, 10.3, 10.1]]
    base = beta_expectation_interval(runs, 0.9)
    moved = beta_expectation_interval([[3 * v - 7 for v in r] for r in runs[::-1]], 0.9)
    assert (moved.low, moved.high) == (pytest.approx(3 * base.low - 7, rel=1e-12),
                                       pytest.approx(3 * base.high - 7, rel=1e-12))
    assert moved.k == pytest.approx(base.k, rel=1e-12) and moved.df == pytest.approx(base.df, rel=1e-12)


def test_accuracy_profile_inside_everywhere_and_missing_level():
    levels = [(5.0, [[5.0, 5.01], [4.99, 5.0]]), (50.0, [[50.1, 49.9], [50.0, 50.05]])]
    prof = accuracy_profile(levels, beta=0.8, acceptance_percent=15)
    assert prof.validated_ranges == ((5.0, 50.0),)
    bad = accuracy_profile(levels + [(500.0, [[500.0, 501.0]])], beta=0.8, acceptance_percent=15)
    assert bad.validated_ranges is None and "500.0" in bad.reason
    with pytest.raises(ValueError, match="acceptance_percent must be a finite number > 0, got -1"):
        accuracy_profile(levels, beta=0.8, acceptance_percent=-1)
    with pytest.raises(ValueError, match="nominal values must be distinct"):
        accuracy_profile(levels + levels, beta=0.8, acceptance_percent=15)
