"""Tests of non-constant variance of regression residuals.

References
----------
.. [Breusch-Pagan] Breusch, T. S. and Pagan, A. R. (1979). A simple test for heteroscedasticity and
   random coefficient variation. Econometrica 47(5), 1287-1294.
.. [Koenker] Koenker, R. (1981). A note on studentizing a test for heteroscedasticity. Journal of
   Econometrics 17(1), 107-112.
"""

from __future__ import annotations

import numpy as np
from scipy import stats

from .._common import TestResult, not_applicable, quiet_numpy

__all__ = ["BREUSCH_PAGAN", "breusch_pagan"]

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
        pvalue = stats.chi2.sf(lm, x.shape[1] - 1)
    if not (np.isfinite(lm) and np.isfinite(pvalue)):
        return not_applicable(BREUSCH_PAGAN, "the squared residuals do not vary (every residual has the same "
                                             "size), so the test has no information")
    return TestResult(BREUSCH_PAGAN, float(lm), float(pvalue), (x.shape[1] - 1,))
