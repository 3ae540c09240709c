"""Welch's two-sample t test (unequal variances).

Written with numpy so that a run does not import ``scipy.stats``; the tests compare it with
``scipy.stats.ttest_ind(equal_var=False)`` (``tests/test_normality.py``).

References
----------
.. [Welch] Welch, B. L. (1947). The generalization of "Student's" problem when several different
   population variances are involved. Biometrika 34(1-2), 28-35.
.. [Satterthwaite] Satterthwaite, F. E. (1946). An approximate distribution of estimates of
   variance components. Biometrics Bulletin 2(6), 110-114.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .distributions import t_sf

__all__ = ["WelchTest", "welch_t_test"]


@dataclass(frozen=True)
class WelchTest:
    """t = (mean(a) - mean(b)) / se on ``df`` degrees of freedom, and its two-sided p-value."""

    statistic: float
    pvalue: float
    df: float


def welch_t_test(a, b) -> WelchTest:
    """Welch's t test of equal means of ``a`` and ``b`` (two-sided), each of 2 or more values.

    Notes
    -----
    v = s^2 / n for each sample; t = (mean_a - mean_b) / sqrt(v_a + v_b);
    df = (v_a + v_b)^2 / (v_a^2 / (n_a - 1) + v_b^2 / (n_b - 1)) [Welch], [Satterthwaite];
    p = 2 P(T_df > |t|). Both variances zero: df is taken as 1 and t is +-inf or NaN (0/0), as
    ``scipy.stats.ttest_ind(equal_var=False)`` does; s^2 is computed as that function does
    (mean squared deviation times n / (n - 1)), so the numbers agree to the last digit.
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    if a.size < 2 or b.size < 2:
        raise ValueError(f"Welch's t test needs at least 2 values in each sample, got {a.size} and {b.size}")
    with np.errstate(divide="ignore", invalid="ignore"):
        vn = []
        for sample in (a, b):
            n = sample.size
            variance = np.mean((sample - np.mean(sample)) ** 2) * (float(n) / float(n - 1))
            vn.append(variance / n)
        vn1, vn2 = vn
        df = (vn1 + vn2) ** 2 / (vn1 ** 2 / (a.size - 1) + vn2 ** 2 / (b.size - 1))
        df = 1.0 if np.isnan(df) else df
        t = np.divide(np.mean(a) - np.mean(b), np.sqrt(vn1 + vn2))
    return WelchTest(float(t), float(2 * t_sf(np.abs(t), df)), float(df))
