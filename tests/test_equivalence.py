"""Equivalence tests (validator/equivalence.py); every expected value names its source."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.weightstats import DescrStatsW, ttost_ind, ttost_paired

from validator.maths.equivalence import rsd_upper_bound, tost_mean, tost_two_samples

RECOVERY = [98.2, 101.5, 99.1, 100.4, 97.8, 100.9, 99.6, 98.7]   # invented demo data; values are cross-checked


@pytest.mark.parametrize("low, high", [(98.0, 102.0), (99.0, 101.0), (95.0, 100.0)])
def test_tost_mean_against_statsmodels(low, high):
    got = tost_mean(RECOVERY, low, high, alpha=0.05)
    # cross-check: statsmodels DescrStatsW.ttost_mean returns (p, (t1, p1, df1), (t2, p2, df2))
    p, (t1, p1, df1), (t2, p2, df2) = DescrStatsW(np.array(RECOVERY)).ttost_mean(low, high)
    assert got.pvalue == pytest.approx(p, rel=1e-12)
    assert (got.statistic_lower, got.statistic_upper) == (pytest.approx(t1, rel=1e-12), pytest.approx(t2, rel=1e-12))
    assert (got.pvalue_lower, got.pvalue_upper) == (pytest.approx(p1, rel=1e-12), pytest.approx(p2, rel=1e-12))
    assert got.df == df1 == df2
    # cross-check: statsmodels ttost_paired against a sample of zeros is the same one-sample test
    assert got.pvalue == pytest.approx(ttost_paired(np.array(RECOVERY), np.zeros(len(RECOVERY)), low, high)[0],
                                       rel=1e-12)
    # the (1 - 2 alpha) interval is inside the range exactly when p <= alpha
    assert got.equivalent == (low <= got.ci.low and got.ci.high <= high) == (p <= 0.05)
    assert got.ci.level == pytest.approx(0.90)


def test_tost_ci_hand_computation():
    # hand computation: mean +/- t_{0.95; 7} s / sqrt(8)
    x = np.array(RECOVERY)
    half = stats.t.ppf(0.95, 7) * x.std(ddof=1) / math.sqrt(8)
    got = tost_mean(x, 98, 102)
    assert (got.ci.low, got.ci.high) == (pytest.approx(x.mean() - half, rel=1e-13),
                                         pytest.approx(x.mean() + half, rel=1e-13))


@pytest.mark.parametrize("equal_variances, usevar", [(True, "pooled"), (False, "unequal")])
def test_tost_two_samples_against_statsmodels(equal_variances, usevar):
    a = np.array(RECOVERY)
    b = np.array([100.3, 99.0, 101.2, 100.8, 99.9, 101.7])
    got = tost_two_samples(a, b, -2.0, 2.0, equal_variances=equal_variances)
    # cross-check: statsmodels ttost_ind
    p, (t1, p1, df1), (t2, p2, df2) = ttost_ind(a, b, -2.0, 2.0, usevar=usevar)
    assert got.pvalue == pytest.approx(p, rel=1e-11)
    assert (got.statistic_lower, got.statistic_upper) == (pytest.approx(t1, rel=1e-12), pytest.approx(t2, rel=1e-12))
    assert got.df == pytest.approx(df1, rel=1e-12)


def test_rsd_upper_bound_hand_computation():
    x = np.array(RECOVERY)
    rsd = 100 * x.std(ddof=1) / x.mean()
    # hand computation: s sqrt((n-1) / chi2_{0.05; n-1}) / mean
    bound = rsd * math.sqrt(7 / stats.chi2.ppf(0.05, 7))
    got = rsd_upper_bound(x, confidence=0.95, limit_percent=2.0)
    assert got.rsd_percent == pytest.approx(rsd, rel=1e-13)
    assert got.upper_bound_percent == pytest.approx(bound, rel=1e-13)
    assert got.within_limit == (bound <= 2.0)


def test_degenerate_and_invalid():
    flat = tost_mean([100.0, 100.0, 100.0], 98, 102)
    assert flat.pvalue is None and flat.equivalent is None and "standard error is 0" in flat.reason
    assert "at least 2" in tost_mean([100.0], 98, 102).reason
    assert "mean is zero" in rsd_upper_bound([-1.0, 1.0]).reason
    assert "mean is negative" in rsd_upper_bound([-1.0, -1.5]).reason   # an RSD needs a positive mean
    with pytest.raises(ValueError, match=r"low and high must be finite with low < high, got 102 and 98"):
        tost_mean(RECOVERY, 102, 98)
    with pytest.raises(ValueError, match=r"alpha must be in the open interval \(0, 0.5\), got 0.6"):
        tost_mean(RECOVERY, 98, 102, alpha=0.6)
