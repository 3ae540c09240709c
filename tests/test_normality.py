"""Shapiro-Wilk, the normal probability plot, median-centred Levene and Welch's t, written in numpy
for the run path, against scipy.stats (the cross-check) on seeded samples.

Shapiro-Wilk follows algorithm AS R94 step by step (with its normal functions, AS 111 and AS 66),
as scipy.stats.shapiro does, so the agreement is expected to the last bit or nearly; the checks
allow 1e-12 on W and 1e-10 on p.
"""

import warnings

import numpy as np
import pytest
from scipy import stats

from validator.maths.heteroscedasticity import levene_median
from validator.maths.normality import probability_plot, shapiro_wilk
from validator.maths.welch import welch_t_test

SIZES = list(range(3, 41)) + [50, 64, 99, 100, 101, 250, 500, 1000, 2500, 4999, 5000]


def _samples(rng, n):
    """Normal, skewed, tied (rounded) and offset samples of size n (seeded simulations)."""
    yield rng.normal(size=n)
    yield rng.exponential(size=n)
    yield np.round(rng.normal(size=n), 1)                 # many ties
    yield 5e4 + 1e3 * rng.uniform(size=n)                 # large offset, small spread
    yield rng.integers(0, 3, size=n).astype(float)        # three values only
    yield np.concatenate([rng.normal(size=n - 1), [25.0]])   # one far outlier


@pytest.mark.parametrize("n", SIZES)
def test_shapiro_wilk_matches_scipy(n):
    # cross-check: scipy.stats.shapiro (AS R94)
    rng = np.random.default_rng(1000 + n)
    for x in _samples(rng, n):
        if np.ptp(x) == 0:
            continue
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")                 # scipy warns above n = 5000 and on ties
            expected = stats.shapiro(x)
        got = shapiro_wilk(x)
        assert got.statistic == pytest.approx(float(expected.statistic), rel=0, abs=1e-12)
        assert got.pvalue == pytest.approx(float(expected.pvalue), rel=0, abs=1e-10)


def test_shapiro_wilk_three_values_exact_case():
    # cross-check: scipy.stats.shapiro; for n = 3 the p-value is exact, 1 - (6/pi) arccos(sqrt(W))
    # (hand computation from the formula in Royston 1995, AS R94)
    rng = np.random.default_rng(3)
    for _ in range(200):
        x = rng.normal(size=3)
        got, expected = shapiro_wilk(x), stats.shapiro(x)
        assert got.statistic == pytest.approx(float(expected.statistic), rel=0, abs=1e-12)
        assert got.pvalue == pytest.approx(float(expected.pvalue), rel=0, abs=1e-10)
        assert got.pvalue == pytest.approx(1 - 6 / np.pi * np.arccos(np.sqrt(got.statistic)), abs=1e-12)
    equally_spaced = shapiro_wilk([1.0, 2.0, 3.0])          # W = 1 for three equally spaced values
    assert equally_spaced.statistic == pytest.approx(1.0, abs=1e-15)
    assert equally_spaced.pvalue == pytest.approx(1.0, abs=1e-7)
    two_equal = shapiro_wilk([1.0, 1.0, 2.0])               # W = 3/4, its minimum: p = 0
    assert two_equal.statistic == pytest.approx(0.75, abs=1e-12) and two_equal.pvalue == pytest.approx(0.0, abs=1e-7)


def test_shapiro_wilk_degenerate_input():
    # cross-check: scipy.stats.shapiro gives W = 1, p = 1 for zero range (AS R94 fault 6) and NaN with a NaN
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        expected = stats.shapiro([2.0, 2.0, 2.0, 2.0])
    got = shapiro_wilk([2.0, 2.0, 2.0, 2.0])
    assert (got.statistic, got.pvalue) == (float(expected.statistic), float(expected.pvalue))
    assert np.isnan(shapiro_wilk([1.0, np.nan, 2.0, 3.0]).pvalue)
    with pytest.raises(ValueError, match="at least 3"):
        shapiro_wilk([1.0, 2.0])


def test_probability_plot_matches_scipy():
    # cross-check: scipy.stats.probplot(dist="norm") (Filliben's medians, least-squares line)
    rng = np.random.default_rng(7)
    for n in list(range(1, 30)) + [100, 1000]:
        for x in (rng.normal(size=n), np.round(rng.exponential(size=n), 1)):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                (osm, osr), (slope, intercept, _) = stats.probplot(x, dist="norm")
                got = probability_plot(x)
            np.testing.assert_allclose(got.theoretical, osm, rtol=0, atol=1e-14)
            np.testing.assert_array_equal(got.ordered, osr)
            if n > 1:
                assert got.slope == pytest.approx(slope, rel=1e-13, abs=1e-15)
                assert got.intercept == pytest.approx(intercept, rel=1e-13, abs=1e-15)
            else:
                assert np.isnan(got.slope) and np.isnan(slope)


def test_levene_median_matches_scipy():
    # cross-check: scipy.stats.levene(center="median") (Brown-Forsythe)
    rng = np.random.default_rng(11)
    for _ in range(500):
        k = int(rng.integers(2, 8))
        groups = [np.round(rng.normal(10, rng.uniform(0.1, 3), size=int(rng.integers(2, 12))), int(rng.integers(0, 4)))
                  for _ in range(k)]
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            expected = stats.levene(*groups, center="median")
            got = levene_median(*groups)
        np.testing.assert_allclose([got.statistic, got.pvalue], [expected.statistic, expected.pvalue],
                                   rtol=1e-13, atol=1e-15, equal_nan=True)
    with pytest.raises(ValueError, match="two groups"):
        levene_median([1.0, 2.0, 3.0])


def test_welch_matches_scipy():
    # cross-check: scipy.stats.ttest_ind(equal_var=False)
    rng = np.random.default_rng(13)
    for _ in range(500):
        a = np.round(rng.normal(100, rng.uniform(0.1, 5), size=int(rng.integers(2, 15))), int(rng.integers(0, 3)))
        b = np.round(rng.normal(101, rng.uniform(0.1, 5), size=int(rng.integers(2, 15))), int(rng.integers(0, 3)))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            expected = stats.ttest_ind(a, b, equal_var=False)
            got = welch_t_test(a, b)
        np.testing.assert_allclose([got.statistic, got.pvalue, got.df], [expected.statistic, expected.pvalue,
                                                                         expected.df], rtol=1e-13, equal_nan=True)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        same = stats.ttest_ind([1.0, 1.0], [1.0, 1.0], equal_var=False)
    got = welch_t_test([1.0, 1.0], [1.0, 1.0])               # no spread at all: 0/0, df taken as 1
    assert np.isnan(got.statistic) and np.isnan(same.statistic) and got.df == same.df == 1.0
    with pytest.raises(ValueError, match="at least 2"):
        welch_t_test([1.0], [1.0, 2.0])
