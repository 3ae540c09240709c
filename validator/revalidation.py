"""Comparing a calibration with a previous validation's: slopes and residual SDs.

Pure functions over the summary numbers a results.json records (slope, its
standard error, s(y/x), n). Not yet wired into the study file or the dossier
(see issue 5).

References
----------
.. [Armitage] Armitage, P., Berry, G. and Matthews, J. N. S. (2002).
   Statistical Methods in Medical Research, 4th ed., Blackwell, sec. 11.4
   (comparison of two regression slopes with a pooled residual variance).
.. [Schuirmann] Schuirmann, D. J. (1987). A comparison of the two one-sided
   tests procedure and the power approach for assessing the equivalence of
   average bioavailability. J. Pharmacokinet. Biopharm. 15, 657-680.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import stats

from ._common import ConfidenceInterval

__all__ = ["SlopeComparison", "compare_slopes", "residual_sd_ratio"]


@dataclass(frozen=True)
class SlopeComparison:
    previous: float
    current: float
    change_pct: float
    change_ci_pct: ConfidenceInterval        # 1 - 2*alpha (90 % for alpha = 0.05)
    t_statistic: float
    df: int
    pvalue: float
    margin_pct: float
    verdict: str                             # "equivalent" | "not shown equivalent" | "different"


def compare_slopes(previous, current, margin_pct: float, alpha: float = 0.05) -> SlopeComparison:
    """t test for the difference of two slopes, and a TOST equivalence decision.

    ``previous`` and ``current`` are ``(slope, std_error, residual_sd, n)``.

    Notes
    -----
    Sxx_k = s_k^2 / SE(b_k)^2; pooled s^2 = [(n1 - 2) s1^2 + (n2 - 2) s2^2] / (n1 + n2 - 4);
    t = (b2 - b1) / sqrt(s^2 (1/Sxx1 + 1/Sxx2)) on n1 + n2 - 4 df [Armitage]. This equals the
    t of the interaction term in one OLS fit y ~ x * run. Equivalence: the 100(1 - 2 alpha) %
    CI of the change 100 (b2 - b1)/b1 (b1 taken as the reference value) inside +/- margin
    [Schuirmann]; "different" when the interval lies wholly outside the margin.
    """
    b1, se1, s1, n1 = previous
    b2, se2, s2, n2 = current
    sxx1, sxx2 = (s1 / se1) ** 2, (s2 / se2) ** 2
    df = int(n1 + n2 - 4)
    pooled = ((n1 - 2) * s1**2 + (n2 - 2) * s2**2) / df
    se = float(np.sqrt(pooled * (1 / sxx1 + 1 / sxx2)))
    t = float((b2 - b1) / se)
    p = float(2 * stats.t.sf(abs(t), df))
    tq = float(stats.t.ppf(1 - alpha, df))
    lo, hi = 100 * (b2 - b1 - tq * se) / b1, 100 * (b2 - b1 + tq * se) / b1
    lo, hi = min(lo, hi), max(lo, hi)
    if -margin_pct <= lo and hi <= margin_pct:
        verdict = "equivalent"
    elif hi < -margin_pct or lo > margin_pct:
        verdict = "different"
    else:
        verdict = "not shown equivalent"
    return SlopeComparison(b1, b2, 100 * (b2 - b1) / b1, ConfidenceInterval(lo, hi, 1 - 2 * alpha), t, df, p,
                           margin_pct, verdict)


def residual_sd_ratio(previous_sd, previous_df, current_sd, current_df):
    """(ratio current/previous, F = ratio^2, two-sided p on F(current_df, previous_df))."""
    F = (current_sd / previous_sd) ** 2
    p = 2 * min(stats.f.sf(F, current_df, previous_df), stats.f.cdf(F, current_df, previous_df))
    return float(current_sd / previous_sd), float(F), float(min(p, 1.0))
