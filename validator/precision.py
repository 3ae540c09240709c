"""Precision: repeatability and intermediate precision by one-way ANOVA per level.

References
----------
.. [ISO5725-2] ISO 5725-2:2019, Accuracy (trueness and precision) of
   measurement methods and results - Part 2: Basic method for the
   determination of repeatability and reproducibility (one-way ANOVA,
   n0 for unbalanced designs, Cochran's and Grubbs' tests).
.. [Satterthwaite] Satterthwaite, F. E. (1946). An approximate distribution
   of estimates of variance components. Biometrics Bulletin 2, 110-114.
.. [Horwitz] Horwitz, W. and Albert, R. (2006). The Horwitz ratio (HorRat).
   J. AOAC Int. 89, 1095-1109: PRSD_R = 2 C^-0.1505, C a mass fraction.
.. [Thompson] Thompson, M. (2000). Analyst 125, 385-386: PRSD_R = 22 % below
   a mass fraction of 1.2e-7, Horwitz up to 0.138, C^-0.5 % above.
.. [NIST-ANOVA] NIST StRD one-way ANOVA datasets (SiRstv, AtmWtAg, SmLs01-09).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from scipy import stats

from ._common import ConfidenceInterval, quiet_numpy

__all__ = ["OneWayAnova", "OutlierTest", "PrecisionLevel", "one_way_anova", "assess_precision_level",
           "cochran_c", "cochran_critical_value", "cochran_null_sample", "grubbs_means", "grubbs_double",
           "grubbs_double_null_sample", "grubbs_within_series", "grubbs_critical_value",
           "mass_fraction_factor", "horwitz_prsd"]


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
    :func:`validator.csvdata.exact_centre`); it is added back to the mean.
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
    pval = float(stats.f.sf(F, df_b, df_w)) if F is not None else None
    n0 = float((N - np.sum(nj**2) / N) / df_b) if df_b > 0 else float("nan")
    return OneWayAnova(p, N, grand, float(ss_b), float(ss_w), df_b, df_w, float(ms_b), float(ms_w),
                       None if F is None else float(F), pval, n0)


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
    ``sizes`` the series sizes the reference distribution was built for.
    """

    method: str
    statistic: float | None
    pvalue: float | None
    df: tuple | None = None
    reason: str = ""
    basis: str = ""
    pvalue_se: float | None = None
    suspect: str = ""
    series: str | None = None
    sizes: tuple | None = None

    @property
    def applicable(self) -> bool:
        return self.statistic is not None


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
    F = stats.f.isf(alpha / series, n - 1, (series - 1) * (n - 1))
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
    if np.all(sizes == sizes[0]):
        n = int(sizes[0])
        d1, d2 = n - 1, (n - 1) * (k - 1)
        with quiet_numpy():
            f_equiv = (k - 1) * C / (1 - C) if C < 1 else np.inf
        p = float(min(1.0, k * stats.f.sf(f_equiv, d1, d2)))
        basis = ("closed form from the F distribution, exact (equal series sizes, C >= 1/2)" if C >= 0.5 else
                 "closed form from the F distribution, Bonferroni upper bound (equal series sizes, C < 1/2; "
                 "conservative)")
        return OutlierTest(method, C, p, (k, n), basis=basis, suspect=suspect, sizes=tuple(int(s) for s in sizes))
    if k > MAX_SIMULATED_SERIES:
        return _outlier_na(method, f"unequal series sizes need a simulated p-value, done for at most "
                                   f"{MAX_SIMULATED_SERIES} series (this level has {k})")
    key = tuple(sorted(int(s) for s in sizes))
    p, se = _monte_carlo_pvalue(cochran_null_sample(key), C, upper=True)
    basis = (f"Monte Carlo under the normal null with the actual series sizes ({MONTE_CARLO_DRAWS} draws, "
             f"seed {MONTE_CARLO_SEED}; standard error of p {se:.2g}); unequal sizes, so no closed form")
    return OutlierTest(method, C, p, None, basis=basis, pvalue_se=se, suspect=suspect,
                       sizes=tuple(int(s) for s in sizes))


def grubbs_critical_value(n: int, alpha: float = 0.05) -> float:
    """One-sided critical value of Grubbs' single-outlier statistic for ``n`` values.

    Notes
    -----
    G_crit = ((n - 1)/sqrt(n)) sqrt(t^2/(n - 2 + t^2)), t = t(1 - alpha/n, n - 2)
    (Grubbs 1969). The two-sided value (largest |deviation|) uses alpha/2.
    """
    t = stats.t.isf(alpha / n, n - 2)
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
    p = float(min(1.0, 2 * n * stats.t.sf(t_equiv, n - 2)))
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
    y = np.asarray(values, float)
    g = np.asarray(groups)
    labels = list(dict.fromkeys(g.tolist()))
    k = len(labels)
    if k < 3:
        return _outlier_na(method, "needs at least 3 series")
    m = np.array([y[g == lab].mean() for lab in labels])
    if not np.all(np.isfinite(m)):
        return _outlier_na(method, "a series mean is not finite")
    if np.std(m, ddof=1) == 0:
        return _outlier_na(method, "all series means are equal")
    if _at_grubbs_maximum(m):
        return _outlier_na(method, _TIES.replace("results", "series means"))
    G, p, idx, exact = _grubbs_single(m)
    return OutlierTest(method, G, p, (k,), basis=_grubbs_basis(exact), suspect=f"series {labels[idx]}")


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
            out.append(OutlierTest(method, G, p, (int(x.size),), basis=_grubbs_basis(exact),
                                   suspect=f"result {float(x[idx]) + offset:.12g}", series=str(lab)))
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
    y = np.asarray(values, float)
    g = np.asarray(groups)
    labels = list(dict.fromkeys(g.tolist()))
    k = len(labels)
    if k < 4:
        return _outlier_na(method, "needs at least 4 series")
    m = np.array([y[g == lab].mean() for lab in labels])
    if not np.all(np.isfinite(m)):
        return _outlier_na(method, "a series mean is not finite")
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
    return OutlierTest(method, G, p, (k,), basis=basis, pvalue_se=se,
                       suspect=f"{which}: series {labels[pair[0]]}, {labels[pair[1]]}")


_MASS_FRACTION = {
    "%": (1e-2, ""), "g/100g": (1e-2, ""), "g/100 g": (1e-2, ""), "g/kg": (1e-3, ""), "mg/g": (1e-3, ""),
    "mg/kg": (1e-6, ""), "µg/g": (1e-6, ""), "ug/g": (1e-6, ""), "ppm": (1e-6, ""),
    "µg/kg": (1e-9, ""), "ug/kg": (1e-9, ""), "ng/g": (1e-9, ""), "ppb": (1e-9, ""),
    "ng/kg": (1e-12, ""), "ppt": (1e-12, ""),
    "g/l": (1e-3, "density 1 kg/L assumed"), "mg/l": (1e-6, "density 1 kg/L assumed"),
    "µg/l": (1e-9, "density 1 kg/L assumed"), "ug/l": (1e-9, "density 1 kg/L assumed"),
    "ng/l": (1e-12, "density 1 kg/L assumed"), "mg/ml": (1e-3, "density 1 kg/L assumed"),
    "µg/ml": (1e-6, "density 1 kg/L assumed"), "ug/ml": (1e-6, "density 1 kg/L assumed"),
}


def mass_fraction_factor(unit: str):
    """(factor, assumption) converting ``unit`` to a mass fraction, or None."""
    key = re.sub(r"\s+", "", unit.strip()).lower().replace("μ", "µ")
    for k, v in _MASS_FRACTION.items():
        if re.sub(r"\s+", "", k) == key:
            return v
    return None


THOMPSON_LOW = 1.2e-7      # mass fraction below which PRSD_R is 22 % [Thompson]
THOMPSON_HIGH = 0.138      # mass fraction above which PRSD_R = C^-0.5 % [Thompson]


def horwitz_prsd(mass_fraction: float) -> float:
    """Predicted reproducibility RSD (%), the Horwitz function with Thompson's modification.

    Notes
    -----
    PRSD_R = 22 % for C < 1.2e-7; 2 C^-0.1505 % for 1.2e-7 <= C <= 0.138
    (Horwitz); C^-0.5 % for C > 0.138 (sigma_R = 0.01 C^0.5), C a mass
    fraction [Thompson], [Horwitz]. The pieces meet (to rounding) at both
    boundaries.
    """
    c = float(mass_fraction)
    if not np.isfinite(c) or c <= 0:
        raise ValueError(f"mass fraction must be a positive finite number, got {mass_fraction!r}")
    if c < THOMPSON_LOW:
        return 22.0
    if c > THOMPSON_HIGH:
        return 100.0 * 0.01 * c ** -0.5
    return 2.0 * c ** (-0.1505)


def horwitz_band(mass_fraction: float) -> str:
    """Which piece of the Thompson-modified Horwitz function applies."""
    if mass_fraction < THOMPSON_LOW:
        return "22 % (mass fraction below 1.2e-7)"
    if mass_fraction > THOMPSON_HIGH:
        return "C^-0.5 % (mass fraction above 0.138)"
    return "2 C^-0.1505 % (mass fraction 1.2e-7 to 0.138)"


@dataclass(frozen=True)
class PrecisionLevel:
    level: float
    series: int
    n: int
    anova: OneWayAnova
    mean: float
    repeatability_sd: float
    repeatability_rsd_pct: float | None
    between_series_sd: float
    between_clamped: bool
    intermediate_sd: float
    intermediate_rsd_pct: float | None
    repeatability_sd_ci: ConfidenceInterval | None
    intermediate_sd_ci: ConfidenceInterval | None
    intermediate_df: float | None
    cochran: OutlierTest
    grubbs: OutlierTest
    horrat: float | None
    horwitz_prsd_pct: float | None
    horwitz_note: str
    reason: str = ""          # why some estimates are missing (degenerate design)
    grubbs_double: OutlierTest | None = None
    grubbs_within: tuple = ()   # OutlierTest per series


def _sd_ci(sd, df, alpha):
    if df is None or not np.isfinite(df) or df <= 0:
        return None
    lo = sd * np.sqrt(df / stats.chi2.ppf(1 - alpha / 2, df))
    hi = sd * np.sqrt(df / stats.chi2.ppf(alpha / 2, df))
    return ConfidenceInterval(float(lo), float(hi), 1 - alpha)


def assess_precision_level(level, values, series, *, alpha=0.05, unit="", offset=0.0) -> PrecisionLevel:
    """Repeatability, between-series and intermediate precision at one level.

    Notes
    -----
    s_r^2 = MS_within; s_L^2 = (MS_between - MS_within)/n0, set to 0 when
    negative; s_I^2 = s_r^2 + s_L^2. RSDs relative to the grand mean.
    CI of s_r from chi^2 with N - p df; CI of s_I from chi^2 with
    Satterthwaite's effective df
    nu = (s_I^2)^2 / [ (MS_b/n0)^2/(p-1) + ((1 - 1/n0) MS_w)^2/(N-p) ]
    [ISO5725-2], [Satterthwaite].
    """
    a = one_way_anova(values, series, offset)
    notes = []
    nan = float("nan")
    sr2 = a.ms_within if a.df_within > 0 else nan
    if a.df_within == 0:
        notes.append("every series has a single result, so repeatability cannot be estimated")
    if a.df_between == 0:
        notes.append("only one series, so between-series variance cannot be estimated "
                     "(intermediate precision is not assessed)")
        sl2 = nan
    else:
        sl2 = (a.ms_between - a.ms_within) / a.n0
    clamped = bool(sl2 < 0)
    if clamped:
        sl2 = 0.0
    si2 = sr2 + sl2
    sr, sl, si = (float(np.sqrt(v)) for v in (sr2, sl2, si2))
    mean = a.grand_mean
    if mean == 0:
        notes.append("the mean is zero, so no relative standard deviation exists")
    rsd = (lambda sd: 100 * sd / mean if mean != 0 and np.isfinite(sd) else None)
    df_i = None
    if np.isfinite(si2):
        if clamped:
            df_i = float(a.df_within)
        else:
            den = ((a.ms_between / a.n0) ** 2 / a.df_between
                   + ((1 - 1 / a.n0) * a.ms_within) ** 2 / a.df_within)
            df_i = float(si2**2 / den) if den > 0 else None
    horrat = prsd = None
    note = ""
    conv = mass_fraction_factor(unit) if unit else None
    if conv is None:
        note = f'the concentration unit "{unit}" does not convert to a mass fraction'
    elif mean <= 0:
        note = "the mean is not positive"
    elif rsd(si) is None:
        note = "intermediate precision was not estimated"
    else:
        factor, assumption = conv
        fraction = mean * factor
        prsd = horwitz_prsd(fraction)
        horrat = rsd(si) / prsd
        note = ("HorRat = intermediate RSD / PRSD_R (intermediate precision in place of reproducibility); "
                f"PRSD_R from the Horwitz function with Thompson's (2000) modification, here {horwitz_band(fraction)}"
                + (f"; {assumption}" if assumption else ""))
    return PrecisionLevel(
        float(level), a.groups, a.n, a, mean, sr, rsd(sr), sl, clamped, si, rsd(si),
        _sd_ci(sr, a.df_within, alpha) if np.isfinite(sr) else None,
        _sd_ci(si, df_i, alpha) if np.isfinite(si) else None, df_i,
        cochran_c(values, series, alpha), grubbs_means(values, series, alpha), horrat, prsd, note,
        "; ".join(notes), grubbs_double(values, series, alpha), grubbs_within_series(values, series, alpha, offset))
