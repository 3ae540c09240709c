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
.. [NIST-ANOVA] NIST StRD one-way ANOVA datasets (SiRstv, AtmWtAg, SmLs01-09).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
from scipy import stats

from ._common import ConfidenceInterval, TestResult, not_applicable, quiet_numpy

__all__ = ["OneWayAnova", "PrecisionLevel", "one_way_anova", "assess_precision_level",
           "cochran_c", "grubbs_means", "mass_fraction_factor", "horwitz_prsd"]


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


def cochran_c(values, groups, alpha=0.05) -> TestResult:
    """Cochran's C for the largest series variance.

    Notes
    -----
    C = s_max^2 / sum s_j^2. Upper critical value from the F distribution,
    C_crit = 1 / (1 + (p - 1) / F(1 - alpha/p; n - 1, (n - 1)(p - 1))),
    with n the (rounded mean) series size; p-value by inverting that
    relation with the Bonferroni bound p = min(1, p F_sf). [ISO5725-2] sec. 7.3.3.
    # from memory: the F-based form of Cochran's critical value
    """
    method = "Cochran's C"
    y = np.asarray(values, float)
    g = np.asarray(groups)
    labels = list(dict.fromkeys(g.tolist()))
    var = np.array([np.var(y[g == lab], ddof=1) if np.sum(g == lab) > 1 else np.nan for lab in labels])
    sizes = np.array([np.sum(g == lab) for lab in labels])
    if len(labels) < 2 or np.any(sizes < 2):
        return not_applicable(method, "needs at least 2 series with 2 or more results each")
    if np.sum(var) == 0:
        return not_applicable(method, "every series has zero variance")
    k = len(labels)
    n = int(round(sizes.mean()))
    C = float(var.max() / var.sum())
    d1, d2 = n - 1, (n - 1) * (k - 1)
    with quiet_numpy():
        f_equiv = (k - 1) * C / (1 - C) if C < 1 else np.inf
    p = float(min(1.0, k * stats.f.sf(f_equiv, d1, d2)))
    return TestResult(method, C, p, (k, n))


def grubbs_means(values, groups, alpha=0.05) -> TestResult:
    """Grubbs' test for the most extreme series mean.

    Notes
    -----
    G = max |m_j - mbar| / s_m over the p series means. With t = t(1 - alpha/(2p), p - 2),
    G_crit = ((p - 1)/sqrt(p)) sqrt(t^2 / (p - 2 + t^2)); the p-value inverts this,
    p = min(1, 2p t_sf(t_G, p - 2)). Grubbs (1969), Technometrics 11, 1-21; [ISO5725-2] sec. 7.3.4.
    """
    method = "Grubbs (series means)"
    y = np.asarray(values, float)
    g = np.asarray(groups)
    labels = list(dict.fromkeys(g.tolist()))
    k = len(labels)
    if k < 3:
        return not_applicable(method, "needs at least 3 series")
    m = np.array([y[g == lab].mean() for lab in labels])
    sd = np.std(m, ddof=1)
    if sd == 0:
        return not_applicable(method, "all series means are equal")
    G = float(np.max(np.abs(m - m.mean())) / sd)
    denom = (k - 1) ** 2 - k * G**2
    t_equiv = np.inf if denom <= 0 else np.sqrt(G**2 * k * (k - 2) / denom)
    p = float(min(1.0, 2 * k * stats.t.sf(t_equiv, k - 2)))
    return TestResult(method, G, p, (k,))


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


def horwitz_prsd(mass_fraction: float) -> float:
    """Predicted reproducibility RSD (%) = 2 C^-0.1505 [Horwitz]."""
    return 2.0 * mass_fraction ** (-0.1505)


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
    cochran: TestResult
    grubbs: TestResult
    horrat: float | None
    horwitz_prsd_pct: float | None
    horwitz_note: str
    reason: str = ""          # why some estimates are missing (degenerate design)


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
        prsd = horwitz_prsd(mean * factor)
        horrat = rsd(si) / prsd
        note = ("HorRat = intermediate RSD / PRSD_R (intermediate precision in place of reproducibility)"
                + (f"; {assumption}" if assumption else ""))
    return PrecisionLevel(
        float(level), a.groups, a.n, a, mean, sr, rsd(sr), sl, clamped, si, rsd(si),
        _sd_ci(sr, a.df_within, alpha) if np.isfinite(sr) else None,
        _sd_ci(si, df_i, alpha) if np.isfinite(si) else None, df_i,
        cochran_c(values, series, alpha), grubbs_means(values, series, alpha), horrat, prsd, note,
        "; ".join(notes))
