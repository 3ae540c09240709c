"""Comparing a calibration with a previous validation's: slopes and residual SDs.

Pure functions over the summary numbers a results.json records (slope, its
standard error, s(y/x), n); the ``[revalidation]`` section of a study runs
:func:`assess_revalidation` per analyte matched by name.

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


@dataclass(frozen=True)
class RevalidationResult:
    slope: SlopeComparison
    intercept_previous: float | None
    intercept_current: float | None
    residual_sd_previous: float
    residual_sd_current: float
    residual_sd_ratio: float
    residual_sd_f: float
    residual_sd_pvalue: float
    residual_sd_ratio_max: float
    lod: tuple            # (previous, current) on the reported basis
    loq: tuple
    recovery: tuple | None        # (previous mean %, current mean %, Welch p, F-test p of the variances)
    repeatability: tuple          # (level, previous s_r, current s_r, F p) for levels in both runs
    verdict: str
    reasons: tuple


def _reported(analyte: dict, key: str):
    det = analyte.get("detection") or {}
    for e in det.get("estimates", []):
        if e["method"] == det.get("reported_basis"):
            return e[key]
    return None


def assess_revalidation(previous: dict, current: dict, *, slope_change_max_pct: float,
                        residual_sd_ratio_max: float, alpha: float = 0.05) -> RevalidationResult:
    """Compare one analyte of this run (its results.json entry) with the previous run's entry.

    Notes
    -----
    Slopes: :func:`compare_slopes`. Residual SD: ratio s2/s1 and F = ratio^2 on
    (n2 - p2, n1 - p1), two-sided. Recovery: Welch's t test on the per-replicate
    recoveries of all levels (scipy.stats.ttest_ind, equal_var=False), and the F test of
    their variances. Repeatability:
    F = s_r2^2/s_r1^2 per level present in both runs. Verdict: "different" when the slope
    interval lies outside the margin or the residual SD ratio exceeds its maximum;
    "not shown equivalent" when the slope interval straddles the margin; else "equivalent".
    """
    pc, cc = previous["calibration"], current["calibration"]
    summary = lambda c: (c["coefficients"]["slope"]["estimate"], c["coefficients"]["slope"]["std_error"],  # noqa: E731
                         c["residual_sd"], c["n"])
    slope = compare_slopes(summary(pc), summary(cc), slope_change_max_pct, alpha)
    ratio, F, p = residual_sd_ratio(pc["residual_sd"], pc["df_resid"], cc["residual_sd"], cc["df_resid"])
    rec = None
    if previous.get("recovery") and current.get("recovery"):
        r1 = [v for lv in previous["recovery"]["levels"] for v in lv["recoveries_pct"]]
        r2 = [v for lv in current["recovery"]["levels"] for v in lv["recoveries_pct"]]
        welch = f_p = None
        if len(r1) > 1 and len(r2) > 1:
            welch = float(stats.ttest_ind(r2, r1, equal_var=False).pvalue)
            f = np.var(r2, ddof=1) / np.var(r1, ddof=1) if np.var(r1) > 0 else np.inf
            d2, d1 = len(r2) - 1, len(r1) - 1
            f_p = float(min(1.0, 2 * min(stats.f.sf(f, d2, d1), stats.f.cdf(f, d2, d1))))
        rec = (float(np.mean(r1)), float(np.mean(r2)), welch, f_p)
    rep = []
    if previous.get("precision") and current.get("precision"):
        old = {lv["level"]: lv for lv in previous["precision"]["levels"]}
        for lv in current["precision"]["levels"]:
            o = old.get(lv["level"])
            if o and o["repeatability_sd"] and lv["repeatability_sd"]:
                f = (lv["repeatability_sd"] / o["repeatability_sd"]) ** 2
                d2, d1 = lv["df"][1], o["df"][1]
                pf = 2 * min(stats.f.sf(f, d2, d1), stats.f.cdf(f, d2, d1))
                rep.append((lv["level"], o["repeatability_sd"], lv["repeatability_sd"], float(min(pf, 1.0))))
    reasons = [f"slope change {slope.change_pct:+.2f} % with 90 % CI {slope.change_ci_pct.low:+.2f} to "
               f"{slope.change_ci_pct.high:+.2f} % against the margin ±{slope_change_max_pct:g} %: {slope.verdict}"]
    verdict = slope.verdict
    if ratio > residual_sd_ratio_max:
        verdict = "different"
        reasons.append(f"residual SD ratio {ratio:.3g} exceeds the maximum {residual_sd_ratio_max:g}")
    else:
        reasons.append(f"residual SD ratio {ratio:.3g} is within the maximum {residual_sd_ratio_max:g}")
    ci = lambda c: c["coefficients"].get("intercept", {}).get("estimate")  # noqa: E731
    return RevalidationResult(slope, ci(pc), ci(cc), pc["residual_sd"], cc["residual_sd"], ratio, F, p,
                              residual_sd_ratio_max, (_reported(previous, "lod"), _reported(current, "lod")),
                              (_reported(previous, "loq"), _reported(current, "loq")), rec, tuple(rep),
                              verdict, tuple(reasons))
