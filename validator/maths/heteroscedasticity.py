"""Tests of non-constant variance of regression residuals.

References
----------
.. [Breusch-Pagan] Breusch, T. S. and Pagan, A. R. (1979). A simple test for heteroscedasticity and
   random coefficient variation. Econometrica 47(5), 1287-1294.
.. [Koenker] Koenker, R. (1981). A note on studentizing a test for heteroscedasticity. Journal of
   Econometrics 17(1), 107-112.
.. [Levene] Levene, H. (1960). Robust tests for equality of variances. In Olkin, I. (ed.),
   Contributions to Probability and Statistics, 278-292. Stanford University Press.
.. [Brown-Forsythe] Brown, M. B. and Forsythe, A. B. (1974). Robust tests for the equality of
   variances. Journal of the American Statistical Association 69(346), 364-367.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from .._common import TestResult, not_applicable, quiet_numpy
from .distributions import chi2_sf, f_sf

__all__ = ["BREUSCH_PAGAN", "breusch_pagan", "Levene", "levene_median"]

BREUSCH_PAGAN = "Breusch-Pagan (Koenker studentised)"


def breusch_pagan(residuals, exog) -> TestResult:
    """Koenker's studentised Breusch-Pagan test: statistic LM, p-value, df (k - 1,).

    ``residuals``: the residuals e of a least-squares fit; ``exog``: the n x k design of the
    variance model, its first column the constant (for a calibration: 1 and the powers of x).

    Notes
    -----
    The squared residuals are regressed on ``exog`` by least squares; with R² of that auxiliary
    regression (1 - SSR / centred total sum of squares), LM = n R², referred to the chi-square
    distribution with k - 1 degrees of freedom [Koenker]; the original statistic
    [Breusch-Pagan] divides the explained sum of squares by 2 instead, and assumes normal errors.
    The arithmetic follows statsmodels' ``het_breuschpagan(robust=True)`` step by step
    (pseudo-inverse by SVD with the same cut-off, the same sums), which the tests use as the
    cross-check; statsmodels is not imported here because its import (about 0.3 s with pandas)
    cost every run more than the test itself. Squared residuals that do not vary (every residual
    of the same size) give 0/0: the test is then not applicable, as it has no information.
    """
    e2 = np.asarray(residuals, dtype=float) ** 2
    x = np.asarray(exog, dtype=float)
    u, s, vt = np.linalg.svd(x, False)
    cutoff = 1e-15 * np.maximum.reduce(s)
    inverse = np.where(s > cutoff, 1.0 / np.where(s > cutoff, s, 1.0), 0.0)
    pinv = np.dot(np.transpose(vt), np.multiply(inverse[:, np.newaxis], np.transpose(u)))
    params = np.dot(pinv, e2)
    resid = e2 - np.dot(x, params)
    ssr = np.dot(resid, resid)
    ones = np.ones_like(e2)
    mean = np.average(e2, weights=ones)
    centred_tss = np.sum(ones * (e2 - mean) ** 2)
    with quiet_numpy():
        lm = e2.size * (1 - ssr / centred_tss)
        pvalue = chi2_sf(lm, x.shape[1] - 1)
    if not (np.isfinite(lm) and np.isfinite(pvalue)):
        return not_applicable(BREUSCH_PAGAN, "the squared residuals do not vary (every residual has the same "
                                             "size), so the test has no information")
    return TestResult(BREUSCH_PAGAN, float(lm), float(pvalue), (x.shape[1] - 1,))


@dataclass(frozen=True)
class Levene:
    """Levene's statistic W on (k - 1, N - k) degrees of freedom and its p-value."""

    statistic: float
    pvalue: float


def levene_median(*groups) -> Levene:
    """Levene's test of equal variances, centred on each group's median (Brown-Forsythe).

    Notes
    -----
    z_ij = |y_ij - median_i|; W = (N - k) sum_i n_i (zbar_i - zbar)^2 / ((k - 1) sum_ij (z_ij -
    zbar_i)^2), referred to F(k - 1, N - k) [Levene], [Brown-Forsythe]. The sums are taken group
    by group in the order ``scipy.stats.levene(center="median")`` takes them (the tests' cross-check),
    so the numbers are the same to the last digit. Groups with no spread at all give 0/0 (NaN).
    """
    groups = [np.asarray(g, dtype=float) for g in groups]
    k = len(groups)
    if k < 2:
        raise ValueError(f"Levene's test needs at least two groups, got {k}")
    sizes = [g.shape[-1] for g in groups]
    total = sum(sizes)
    z = [np.abs(g - np.median(g, axis=-1, keepdims=True)) for g in groups]
    zbar_i = [np.mean(zi, axis=-1, keepdims=True) for zi in z]
    zbar = sum(ni * zb for ni, zb in zip(sizes, zbar_i)) / total
    dfd = total - k
    dfn = k - 1.0
    with quiet_numpy():
        numerator = dfd * sum(ni * (zb - zbar) ** 2 for ni, zb in zip(sizes, zbar_i))
        denominator = dfn * sum(np.sum((zi - zb) ** 2, axis=-1, keepdims=True) for zi, zb in zip(z, zbar_i))
        w = (numerator / denominator)[0]
    return Levene(float(w), float(f_sf(w, dfn, float(dfd))))
