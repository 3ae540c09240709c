"""validator.maths.distributions against scipy.stats, the reference it replaces on the run path.

Every function calls the scipy.special function scipy.stats calls for the same quantity, with the
same handling of the support's ends and of invalid parameters, so the numbers are expected to be
identical (cross-check: scipy.stats, equality to the last bit).
"""

import numpy as np
import pytest
from numpy.testing import assert_array_equal
from scipy import stats

from validator.maths import distributions as d

PROBABILITIES = np.array([0.0, 1e-300, 1e-17, 1e-10, 0.001, 0.025, 0.05, 0.1, 0.3, 0.5, 0.7, 0.9, 0.95, 0.975,
                          0.999, 1 - 1e-10, 1 - 1e-16, 1.0, -0.1, 1.5, np.nan])
POINTS = np.array([-np.inf, -40.0, -5.0, -1.96, -0.5, -1e-300, 0.0, 1e-300, 1e-8, 0.3, 1.0, 1.96, 3.5, 10.0, 40.0,
                   1e6, np.inf, np.nan])
DFS = [1e-3, 0.5, 1, 2, 2.5, 3, 7, 30, 1000, 1e7, 0.0, -1.0, np.nan]


def _same(mine, reference):
    assert_array_equal(np.asarray(mine), np.asarray(reference))


@pytest.mark.parametrize("df", DFS)
def test_student_t(df):
    # cross-check: scipy.stats.t
    _same(d.t_cdf(POINTS, df), stats.t.cdf(POINTS, df))
    _same(d.t_sf(POINTS, df), stats.t.sf(POINTS, df))
    _same(d.t_ppf(PROBABILITIES, df), stats.t.ppf(PROBABILITIES, df))
    _same(d.t_isf(PROBABILITIES, df), stats.t.isf(PROBABILITIES, df))


@pytest.mark.parametrize("df", DFS)
def test_chi_square(df):
    # cross-check: scipy.stats.chi2
    _same(d.chi2_sf(POINTS, df), stats.chi2.sf(POINTS, df))
    _same(d.chi2_ppf(PROBABILITIES, df), stats.chi2.ppf(PROBABILITIES, df))
    _same(d.chi2_isf(PROBABILITIES, df), stats.chi2.isf(PROBABILITIES, df))


@pytest.mark.parametrize("dfn", [0.5, 1, 2, 5, 40, 0.0, np.nan])
@pytest.mark.parametrize("dfd", [0.7, 1, 3, 12, 200, 1e6, -2.0])
def test_f(dfn, dfd):
    # cross-check: scipy.stats.f
    _same(d.f_cdf(POINTS, dfn, dfd), stats.f.cdf(POINTS, dfn, dfd))
    _same(d.f_sf(POINTS, dfn, dfd), stats.f.sf(POINTS, dfn, dfd))
    _same(d.f_ppf(PROBABILITIES, dfn, dfd), stats.f.ppf(PROBABILITIES, dfn, dfd))
    _same(d.f_isf(PROBABILITIES, dfn, dfd), stats.f.isf(PROBABILITIES, dfn, dfd))


def test_normal():
    # cross-check: scipy.stats.norm
    _same(d.norm_cdf(POINTS), stats.norm.cdf(POINTS))
    _same(d.norm_sf(POINTS), stats.norm.sf(POINTS))
    _same(d.norm_pdf(POINTS), stats.norm.pdf(POINTS))
    _same(d.norm_ppf(PROBABILITIES), stats.norm.ppf(PROBABILITIES))
    _same(d.norm_isf(PROBABILITIES), stats.norm.isf(PROBABILITIES))


@pytest.mark.parametrize("df", [1, 2.5, 4, 11, 60, 0.0])
@pytest.mark.parametrize("nc", [-3.0, 0.0, 0.8, 2.5, 7.0, np.nan])
def test_noncentral_t(df, nc):
    # cross-check: scipy.stats.nct
    x = POINTS[np.abs(POINTS) < 1e5]                 # far tails: both give the same special-function value
    _same(d.nct_cdf(x, df, nc), stats.nct.cdf(x, df, nc))
    q = PROBABILITIES[(PROBABILITIES > 1e-12) & (PROBABILITIES < 1 - 1e-12) | ~np.isfinite(PROBABILITIES)
                      | (PROBABILITIES <= 0) | (PROBABILITIES >= 1)]
    _same(d.nct_ppf(q, df, nc), stats.nct.ppf(q, df, nc))


@pytest.mark.parametrize("df", [1, 2, 5.5, 30, np.inf, 0.0])
@pytest.mark.parametrize("nc", [0.0, 1e-6, 0.4, 3.0, 25.0, -1.0])
def test_noncentral_chi_square_quantile(df, nc):
    # cross-check: scipy.stats.ncx2
    _same(d.ncx2_ppf(PROBABILITIES, df, nc), stats.ncx2.ppf(PROBABILITIES, df, nc))


def test_noncentral_chi_square_arrays_mixing_central_and_noncentral():
    # cross-check: scipy.stats.ncx2 (nc = 0 is the central chi-square there too)
    nc = np.array([0.0, 0.5, 0.0, 4.0])
    _same(d.ncx2_ppf(0.9, 1, nc), stats.ncx2.ppf(0.9, 1, nc))


def test_binomial_quantile():
    # cross-check: scipy.stats.binom.ppf, over sample sizes and the probabilities EP17 and others use
    n = np.arange(0, 301)
    for p in (0.0, 0.05, 0.1, 0.5, 0.9, 1.0, 1.2):
        for q in (0.0, 1e-9, 0.01, 0.025, 0.05, 0.5, 0.95, 0.975, 1 - 1e-9, 1.0, np.nan):
            _same(d.binom_ppf(q, n, p), stats.binom.ppf(q, n, p))
    rng = np.random.default_rng(20261202)
    q, nn, p = rng.uniform(size=2000), rng.integers(1, 500, size=2000), rng.uniform(size=2000)
    _same(d.binom_ppf(q, nn, p), stats.binom.ppf(q, nn, p))
    _same(d.binom_ppf(0.5, 10.5, 0.5), stats.binom.ppf(0.5, 10.5, 0.5))     # n not an integer: NaN


def test_kolmogorov_limit():
    # cross-check: scipy.stats.kstwobign
    _same(d.kstwobign_sf(POINTS), stats.kstwobign.sf(POINTS))


def test_scalars_in_scalars_out():
    # scipy.stats returns numpy floats for scalar arguments; so does this module
    for value in (d.t_ppf(0.975, 5), d.chi2_sf(3.0, 2), d.f_isf(0.05, 2, 9), d.norm_ppf(0.9),
                  d.nct_cdf(1.0, 5, 0.5), d.ncx2_ppf(0.9, 1, 0.3), d.kstwobign_sf(1.2), d.binom_ppf(0.05, 20, 0.5)):
        assert isinstance(value, np.float64) and np.ndim(value) == 0


def test_f_test_two_sided():
    # hand computation from the formula in Snedecor & Cochran (1989) sec. 6.12: twice the smaller
    # tail, with scipy.stats.f as the cross-check of the tails
    for f, a, b in ((2.5, 4, 9), (0.3, 4, 9), (1.0, 7, 7), (40.0, 1, 2)):
        expected = min(1.0, 2 * min(stats.f.sf(f, a, b), stats.f.cdf(f, a, b)))
        assert d.f_test_two_sided(f, a, b) == expected
