"""One-way analysis of variance, with sums of squares centred on the grand mean.

References
----------
.. [ISO5725-2] ISO 5725-2:2019, Accuracy (trueness and precision) of
   measurement methods and results - Part 2 (one-way ANOVA, n0 for unbalanced designs).
.. [NIST-ANOVA] NIST StRD one-way ANOVA datasets (SiRstv, AtmWtAg, SmLs01-09).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._common import quiet_numpy
from .distributions import f_sf

__all__ = ["OneWayAnova", "one_way_anova"]


@dataclass(frozen=True)
class OneWayAnova:
    groups: int
    n: int
    grand_mean: float
    ss_between: float
    ss_within: float
    df_between: int
    df_within: int
    ms_between: float
    ms_within: float
    statistic: float | None
    pvalue: float | None
    n0: float


def one_way_anova(values, groups, offset: float = 0.0) -> OneWayAnova:
    """One-way ANOVA, with sums of squares from data centred on the grand mean.

    Notes
    -----
    With p groups, N results and n_j per group: SS_between = sum n_j (ybar_j - ybar)^2,
    SS_within = sum (y_ij - ybar_j)^2, both from values centred on the grand
    mean first (two-pass), so constant leading digits do not cancel away
    precision [NIST-ANOVA]. n0 = (N - sum n_j^2 / N) / (p - 1) [ISO5725-2].
    ``offset`` is a constant already subtracted exactly from ``values`` (see
    :func:`validator.inputs.tables.exact_centre`); it is added back to the mean.
    """
    y = np.asarray(values, float)
    g = np.asarray(groups)
    labels = list(dict.fromkeys(g.tolist()))
    N, p = y.size, len(labels)
    grand = float(y.mean())
    c = y - grand
    grand += offset
    c = c - c.mean()
    ss_b = ss_w = 0.0
    nj = []
    for lab in labels:
        cj = c[g == lab]
        mj = cj.mean()
        ss_b += cj.size * mj**2
        ss_w += float(np.sum((cj - mj) ** 2))
        nj.append(cj.size)
    nj = np.array(nj, float)
    df_b, df_w = p - 1, N - p
    ms_b = ss_b / df_b if df_b > 0 else float("nan")
    ms_w = ss_w / df_w if df_w > 0 else float("nan")
    with quiet_numpy():
        F = ms_b / ms_w if df_b > 0 and df_w > 0 and ms_w > 0 else None
    pval = float(f_sf(F, df_b, df_w)) if F is not None else None
    n0 = float((N - np.sum(nj**2) / N) / df_b) if df_b > 0 else float("nan")
    return OneWayAnova(p, N, grand, float(ss_b), float(ss_w), df_b, df_w, float(ms_b), float(ms_w),
                       None if F is None else float(F), pval, n0)
