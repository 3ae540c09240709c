"""Outlier tests for series of results: Cochran's C, Grubbs' single, double and within-series tests.

References
----------
.. [ISO5725-2] ISO 5725-2:2019, Accuracy (trueness and precision) of
   measurement methods and results - Part 2: Basic method for the
   determination of repeatability and reproducibility (Cochran's and Grubbs' tests).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from .._common import quiet_numpy
from .distributions import f_isf, f_sf, t_isf, t_sf

__all__ = ["OutlierTest", "MONTE_CARLO_DRAWS", "MONTE_CARLO_SEED", "cochran_c", "cochran_critical_value",
           "cochran_null_sample", "grubbs_means", "grubbs_double", "grubbs_double_null_sample",
           "grubbs_within_series", "grubbs_critical_value"]


MONTE_CARLO_DRAWS = 100_000
MONTE_CARLO_SEED = 20_261_202


@dataclass(frozen=True)
class OutlierTest:
    """An outlier test (Cochran or Grubbs), or the statement that it was not applicable.

    Field names follow :class:`validator._common.TestResult`; in addition
    ``basis`` says how the p-value was obtained (closed form, bound or Monte
    Carlo), ``pvalue_se`` is the Monte Carlo standard error of the p-value
    (``None`` for closed forms), ``suspect`` names the series or result the
    statistic points at, ``series`` the series a within-series test ran on and
    ``sizes`` the series sizes the reference distribution was built for and
    ``positions`` the indices (into the values tested) of the results the
    statistic points at: every result of the suspect series, or the suspect
    result of a within-series test (not written to results.json; a caller that
    knows where each value was read names them).
    """

    method: str
    statistic: float | None
    pvalue: float | None = field(metadata={"json": "p_value"})
    basis: str = field(default="", metadata={"json": "p_value_basis"})
    pvalue_se: float | None = field(default=None, metadata={"json": "p_value_se"})
    suspect: str = ""
    reason: str = ""
    df: tuple[float, ...] | None = field(default=None, metadata={"omit_none": True})
    sizes: tuple[int, ...] | None = field(default=None, metadata={"json": "series_sizes", "omit_none": True})
    series: str | None = field(default=None, metadata={"omit_none": True})
    positions: tuple[int, ...] = field(default=(), metadata={"json": None}, repr=False)

    @property
    def applicable(self) -> bool:
        return self.statistic is not None


def _positions(groups, label) -> tuple[int, ...]:
    """The indices of the results of series ``label``, in input order."""
    return tuple(int(i) for i in np.flatnonzero(np.asarray(groups) == label))


def _outlier_na(method, reason, series=None) -> OutlierTest:
    return OutlierTest(method, None, None, reason=reason, series=series)


def _monte_carlo_pvalue(null_sorted: np.ndarray, statistic: float, upper: bool):
    """(p, standard error) from a sorted null sample; p = (b + 1)/(N + 1).

    b counts the simulated statistics at least as extreme as the observed one
    (>= for an upper-tail test, <= for a lower-tail test). The standard error
    is sqrt(p (1 - p)/N), at most 0.5/sqrt(N) (0.0016 for N = 100 000).
    """
    N = null_sorted.size
    if upper:
        b = N - np.searchsorted(null_sorted, statistic, side="left")
    else:
        b = np.searchsorted(null_sorted, statistic, side="right")
    p = (b + 1) / (N + 1)
    return float(p), float(np.sqrt(p * (1 - p) / N))


@lru_cache(maxsize=32)
def cochran_null_sample(sizes: tuple, draws: int = MONTE_CARLO_DRAWS, seed: int = MONTE_CARLO_SEED) -> np.ndarray:
    """Sorted simulated values of Cochran's C under the null for these series sizes.

    Under normal errors with one common variance, s_j^2 = sigma^2 chi^2(n_j - 1)/(n_j - 1)
    independently; sigma cancels in C, so C is simulated from chi-square draws
    with each series' own degrees of freedom (seeded, reproducible).
    """
    df = np.asarray(sizes, float) - 1
    rng = np.random.default_rng(seed)
    parts = []
    for rows in _chunks(draws, df.size):
        v = rng.chisquare(np.broadcast_to(df, (rows, df.size))) / df
        parts.append(v.max(axis=1) / v.sum(axis=1))
    out = np.sort(np.concatenate(parts))
    out.setflags(write=False)
    return out


MAX_SIMULATED_SERIES = 500      # beyond this the simulated p-values would take too long
_CHUNK_VALUES = 2_000_000       # random numbers held in memory at once by a simulation


def _chunks(draws: int, width: int):
    """Row counts that split ``draws`` rows of ``width`` values into memory-bounded blocks."""
    step = max(1, _CHUNK_VALUES // max(width, 1))
    done = 0
    while done < draws:
        rows = min(step, draws - done)
        yield rows
        done += rows


def cochran_critical_value(series: int, n: int, alpha: float = 0.05) -> float:
    """Upper critical value of Cochran's C for ``series`` series of ``n`` results each.

    Notes
    -----
    C_crit = 1 / (1 + (p - 1)/F), F = F(1 - alpha/p; n - 1, (p - 1)(n - 1)).
    Exact when C_crit >= 1/2 (then at most one series can exceed it); below
    1/2 it is the Bonferroni value, a slightly conservative (too large) limit.
    """
    F = f_isf(alpha / series, n - 1, (series - 1) * (n - 1))
    return float(1.0 / (1.0 + (series - 1) / F))


def cochran_c(values, groups, alpha=0.05) -> OutlierTest:
    """Cochran's C for the largest series variance.

    Notes
    -----
    C = s_max^2 / sum_j s_j^2, each s_j^2 the variance of series j on its own
    n_j - 1 degrees of freedom, unweighted, also when the series sizes differ
    (the statistic of [ISO5725-2] sec. 7.3.3). One-sided (upper) test.

    p-value:

    * equal sizes n: p = min(1, p_s P(F > F_C)), F_C = (p_s - 1) C/(1 - C) on
      (n - 1, (n - 1)(p_s - 1)) df, p_s the number of series. Exact for
      C >= 1/2 (the events "series j has C_j > c" are then disjoint); for
      C < 1/2 it is the Bonferroni upper bound, so conservative.
    * unequal sizes: the closed form does not hold (using a mean n and n - 1 df
      for every variance inflates the false-alarm rate several-fold), so the
      p-value comes from a seeded Monte Carlo simulation of C under the null
      with the actual sizes (:func:`cochran_null_sample`, 100 000 draws;
      standard error of p at most 0.0016, reported in ``pvalue_se``).

    When every series but one has zero variance (ties), C = 1 whatever that
    variance is, and the test is reported not applicable rather than p = 0.
    """
    method = "Cochran's C"
    y = np.asarray(values, float)
    g = np.asarray(groups)
    labels = list(dict.fromkeys(g.tolist()))
    sizes = np.array([np.sum(g == lab) for lab in labels])
    if len(labels) < 2 or np.any(sizes < 2):
        return _outlier_na(method, "needs at least 2 series with 2 or more results each")
    var = np.array([np.var(y[g == lab] - y[g == lab].mean(), ddof=1) for lab in labels])
    if not np.all(np.isfinite(var)):
        return _outlier_na(method, "a series variance is not finite")
    if np.sum(var) == 0:
        return _outlier_na(method, "every series has zero variance")
    k = len(labels)
    if np.count_nonzero(var) == 1:
        return _outlier_na(method, "every series but one has zero variance (ties, e.g. from rounding), so C = 1 "
                                   "whatever the one variance is; the test cannot judge it")
    C = float(var.max() / var.sum())
    suspect = f"series {labels[int(np.argmax(var))]}"
    positions = _positions(g, labels[int(np.argmax(var))])
    if np.all(sizes == sizes[0]):
        n = int(sizes[0])
        d1, d2 = n - 1, (n - 1) * (k - 1)
        with quiet_numpy():
            f_equiv = (k - 1) * C / (1 - C) if C < 1 else np.inf
        p = float(min(1.0, k * f_sf(f_equiv, d1, d2)))
        basis = ("closed form from the F distribution, exact (equal series sizes, C >= 1/2)" if C >= 0.5 else
                 "closed form from the F distribution, Bonferroni upper bound (equal series sizes, C < 1/2; "
                 "conservative)")
        return OutlierTest(method, C, p, df=(k, n), basis=basis, suspect=suspect, sizes=tuple(int(s) for s in sizes),
                           positions=positions)
    if k > MAX_SIMULATED_SERIES:
        return _outlier_na(method, f"unequal series sizes need a simulated p-value, done for at most "
                                   f"{MAX_SIMULATED_SERIES} series (this level has {k})")
    key = tuple(sorted(int(s) for s in sizes))
    p, se = _monte_carlo_pvalue(cochran_null_sample(key), C, upper=True)
    basis = (f"Monte Carlo under the normal null with the actual series sizes ({MONTE_CARLO_DRAWS} draws, "
             f"seed {MONTE_CARLO_SEED}; standard error of p {se:.2g}); unequal sizes, so no closed form")
    return OutlierTest(method, C, p, basis=basis, pvalue_se=se, suspect=suspect,
                       sizes=tuple(int(s) for s in sizes), positions=positions)


def grubbs_critical_value(n: int, alpha: float = 0.05) -> float:
    """One-sided critical value of Grubbs' single-outlier statistic for ``n`` values.

    Notes
    -----
    G_crit = ((n - 1)/sqrt(n)) sqrt(t^2/(n - 2 + t^2)), t = t(1 - alpha/n, n - 2)
    (Grubbs 1969). The two-sided value (largest |deviation|) uses alpha/2.
    """
    t = t_isf(alpha / n, n - 2)
    return float((n - 1) / np.sqrt(n) * np.sqrt(t**2 / (n - 2 + t**2)))


def _grubbs_single(x):
    """(G, p, index of the most extreme value, exact) for the largest |x_i - mean|/s.

    p = min(1, 2 n P(T > t_G)), T ~ t(n - 2), t_G^2 = G^2 n (n - 2)/((n - 1)^2 - n G^2).
    This is the Bonferroni sum over the n values and both tails; it is exact
    when G > sqrt((n - 1)/2), since two values with |x_i - mean| >= G s need a
    sum of squares of at least 2 G^2 s^2 = (n - 1) s^2 (hand derivation), so at
    most one value can then reach G; below that it is an upper bound.
    """
    n = x.size
    dev = x - x.mean()
    sd = float(np.sqrt(np.sum(dev**2) / (n - 1)))
    idx = int(np.argmax(np.abs(dev)))
    G = float(abs(dev[idx]) / sd)
    denom = (n - 1) ** 2 - n * G**2
    t_equiv = np.inf if denom <= 0 else np.sqrt(G**2 * n * (n - 2) / denom)
    p = float(min(1.0, 2 * n * t_sf(t_equiv, n - 2)))
    return G, p, idx, bool(G > np.sqrt((n - 1) / 2))


def _at_grubbs_maximum(x) -> bool:
    """True when all but one value are identical: G then equals its bound (n - 1)/sqrt(n).

    For continuous data this has probability zero, so the closed-form p is 0;
    with rounded data it happens by ties alone, and a p-value of 0 would
    judge the rounding, not the data.
    """
    vals, counts = np.unique(x, return_counts=True)
    return bool(vals.size == 2 and counts.min() == 1)


_TIES = ("all results but one are identical (ties, e.g. from rounding), so G is at its largest possible value "
         "(n - 1)/sqrt(n) whatever the odd value is; the test cannot judge it")


def _grubbs_basis(exact):
    return ("closed form from the t distribution (2n·P(T > t_G)), exact here (G > sqrt((n - 1)/2))" if exact else
            "closed form from the t distribution (2n·P(T > t_G)), Bonferroni upper bound here "
            "(G <= sqrt((n - 1)/2); conservative)")


def _series_means(values, groups, method: str, min_series: int):
    """(labels, means) of the series in order of first appearance, or the not-applicable test
    when there are fewer than ``min_series`` series or a mean is not finite."""
    y = np.asarray(values, float)
    g = np.asarray(groups)
    labels = list(dict.fromkeys(g.tolist()))
    if len(labels) < min_series:
        return _outlier_na(method, f"needs at least {min_series} series")
    m = np.array([y[g == lab].mean() for lab in labels])
    if not np.all(np.isfinite(m)):
        return _outlier_na(method, "a series mean is not finite")
    return labels, m


def grubbs_means(values, groups, alpha=0.05) -> OutlierTest:
    """Grubbs' test for the most extreme series mean (two-sided).

    Notes
    -----
    G = max |m_j - mbar| / s_m over the p series means (each mean counts
    once, whatever its series size, as in [ISO5725-2] sec. 7.3.4). With
    t = t(1 - alpha/(2p), p - 2), G_crit = ((p - 1)/sqrt(p)) sqrt(t^2 / (p - 2 + t^2));
    the p-value inverts this, p = min(1, 2p t_sf(t_G, p - 2)), exact for
    G > sqrt((p - 1)/2) (see :func:`_grubbs_single`). Grubbs (1969),
    Technometrics 11, 1-21.
    """
    method = "Grubbs (series means)"
    got = _series_means(values, groups, method, 3)
    if isinstance(got, OutlierTest):
        return got
    labels, m = got
    k = len(labels)
    if np.std(m, ddof=1) == 0:
        return _outlier_na(method, "all series means are equal")
    if _at_grubbs_maximum(m):
        return _outlier_na(method, _TIES.replace("results", "series means"))
    G, p, idx, exact = _grubbs_single(m)
    return OutlierTest(method, G, p, df=(k,), basis=_grubbs_basis(exact), suspect=f"series {labels[idx]}",
                       positions=_positions(groups, labels[idx]))


def grubbs_within_series(values, groups, alpha=0.05, offset=0.0) -> tuple:
    """Grubbs' single-outlier test on the individual results of each series.

    Notes
    -----
    Per series j with n_j >= 3 results: G_j = max_i |y_ij - ybar_j| / s_j and
    its two-sided p-value as in :func:`grubbs_means` with n_j in place of p.
    Each series is tested on its own (no correction for the number of series).
    When all results of a series but one are identical, G sits at its bound
    (n - 1)/sqrt(n) through ties alone and the test is reported not applicable.
    ``offset`` is a constant already subtracted from ``values``; it is added
    back to the suspect result shown.
    [ISO5725-2] sec. 7.3.4 applies Grubbs' test to single results as well as
    to series means.
    """
    method = "Grubbs (results within a series)"
    y = np.asarray(values, float)
    g = np.asarray(groups)
    out = []
    for lab in dict.fromkeys(g.tolist()):
        x = y[g == lab]
        if x.size < 3:
            out.append(_outlier_na(method, "needs at least 3 results in the series", series=str(lab)))
        elif not np.all(np.isfinite(x)):
            out.append(_outlier_na(method, "a result is not finite", series=str(lab)))
        elif np.all(x == x[0]):
            out.append(_outlier_na(method, "every result in the series is identical", series=str(lab)))
        elif _at_grubbs_maximum(x):
            out.append(_outlier_na(method, _TIES, series=str(lab)))
        else:
            G, p, idx, exact = _grubbs_single(x)
            out.append(OutlierTest(method, G, p, df=(int(x.size),), basis=_grubbs_basis(exact),
                                   suspect=f"result {float(x[idx]) + offset:.12g}", series=str(lab),
                                   positions=(_positions(g, lab)[idx],)))
    return tuple(out)


def _double_ratios(sorted_values):
    """(SS without the two largest, SS without the two smallest) / SS of all; rows sorted."""
    z = sorted_values
    ss = lambda a: np.sum((a - a.mean(axis=-1, keepdims=True)) ** 2, axis=-1)  # noqa: E731
    total = ss(z)
    return ss(z[..., :-2]) / total, ss(z[..., 2:]) / total


@lru_cache(maxsize=32)
def grubbs_double_null_sample(p: int, draws: int = MONTE_CARLO_DRAWS, seed: int = MONTE_CARLO_SEED) -> np.ndarray:
    """Sorted simulated min(G_high, G_low) for p independent standard normal values."""
    rng = np.random.default_rng(seed)
    parts = []
    for rows in _chunks(draws, p):
        hi, lo = _double_ratios(np.sort(rng.standard_normal((rows, p)), axis=1))
        parts.append(np.minimum(hi, lo))
    out = np.sort(np.concatenate(parts))
    out.setflags(write=False)
    return out


def grubbs_double(values, groups, alpha=0.05) -> OutlierTest:
    """Grubbs' double test for the two largest or two smallest series means.

    Notes
    -----
    With the p series means sorted, s_0^2 = sum (m_i - mbar)^2,
    G_high = sum_{i <= p-2} (m_i - mbar_{1..p-2})^2 / s_0^2 (without the two
    largest), G_low likewise without the two smallest ([ISO5725-2] sec. 7.3.4;
    Grubbs 1969). Small G means the removed pair is outlying. The statistic is
    min(G_high, G_low), a two-sided test of both pairs together; its
    lower-tail p-value comes from a seeded Monte Carlo simulation of p
    independent normal means (100 000 draws; standard error reported), since
    no table of its critical values is in the reference data.
    """
    method = "Grubbs double (two largest or two smallest series means)"
    got = _series_means(values, groups, method, 4)
    if isinstance(got, OutlierTest):
        return got
    labels, m = got
    k = len(labels)
    if np.all(m == m[0]):
        return _outlier_na(method, "all series means are equal")
    if k > MAX_SIMULATED_SERIES:
        return _outlier_na(method, f"the simulated p-value is done for at most {MAX_SIMULATED_SERIES} series "
                                   f"(this level has {k})")
    order = np.argsort(m, kind="stable")
    hi, lo = _double_ratios(m[order])
    G = float(min(hi, lo))
    pair = order[-2:] if hi <= lo else order[:2]
    which = "two largest" if hi <= lo else "two smallest"
    p, se = _monte_carlo_pvalue(grubbs_double_null_sample(k), G, upper=False)
    basis = (f"Monte Carlo under the normal null ({MONTE_CARLO_DRAWS} draws, seed {MONTE_CARLO_SEED}; "
             f"standard error of p {se:.2g}); lower tail of min(G_high, G_low)")
    return OutlierTest(method, G, p, df=(k,), basis=basis, pvalue_se=se,
                       suspect=f"{which}: series {labels[pair[0]]}, {labels[pair[1]]}",
                       positions=tuple(sorted(_positions(groups, labels[pair[0]]) + _positions(groups, labels[pair[1]]))))
