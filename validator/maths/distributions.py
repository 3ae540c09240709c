"""Small distribution helpers shared by several characteristics.

References
----------
.. [Snedecor-Cochran] Snedecor, G. W. and Cochran, W. G. (1989). Statistical Methods,
   8th ed., sec. 6.12 (the F test of two variances, two-sided).
"""

from __future__ import annotations

from scipy import stats

__all__ = ["f_test_two_sided"]


def f_test_two_sided(f: float, df_numerator: float, df_denominator: float) -> float:
    """Two-sided p-value of a variance ratio ``f`` on F(df_numerator, df_denominator).

    Notes
    -----
    p = min(1, 2 min(P(F >= f), P(F <= f))): twice the smaller tail [Snedecor-Cochran].
    """
    tail = min(stats.f.sf(f, df_numerator, df_denominator), stats.f.cdf(f, df_numerator, df_denominator))
    return float(min(1.0, 2 * tail))
