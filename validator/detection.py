"""Detection capability: limits of detection and quantitation, each with its basis.

References
----------
.. [ICH-Q2] ICH Q2(R2) Validation of analytical procedures (2023), and ICH
   Q2(R1) (2005) sec. 6.2-6.3 and 7.2-7.3: LOD = 3.3 sigma / S, LOQ = 10 sigma / S,
   with sigma the residual SD of the regression, the SD of the intercept, or
   the SD of blank responses, and S the slope.
.. [Eurachem] Eurachem Guide, The Fitness for Purpose of Analytical Methods,
   2nd ed. (2014), sec. 6.2 (blank-based limits).
.. [ISO11843-2] ISO 11843-2:2000, Capability of detection - Part 2:
   Methodology in the linear calibration case, eqs. for x_C and x_D.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import optimize, stats

__all__ = ["DetectionEstimate", "DetectionResult", "assess_detection", "noncentrality_delta"]

METHODS = ("ich-residual-sd", "ich-intercept-sd", "blank-sd", "iso-11843-2")


@dataclass(frozen=True)
class DetectionEstimate:
    method: str
    basis: str
    lod: float | None
    loq: float | None
    sigma: float | None               # the SD the estimate uses (response units)
    critical_value: float | None = None
    delta: float | None = None
    reason: str = ""                  # why not applicable, when lod is None

    @property
    def applicable(self) -> bool:
        return self.lod is not None


@dataclass(frozen=True)
class DetectionResult:
    estimates: tuple
    reporting_method: str
    lod_factor: float
    loq_factor: float

    @property
    def reported(self) -> DetectionEstimate:
        return next(e for e in self.estimates if e.method == self.reporting_method)


def noncentrality_delta(df: int, alpha: float, beta: float) -> float:
    """Exact delta(nu, alpha, beta) of ISO 11843-2.

    The non-centrality parameter for which the non-central t distribution
    with ``df`` degrees of freedom has probability ``beta`` below
    t(1 - alpha, df). (The common shortcut delta ~ 2 t is not used.)
    """
    tc = stats.t.ppf(1 - alpha, df)
    f = lambda d: stats.nct.cdf(tc, df, d) - beta  # noqa: E731  decreasing in d
    hi = 2 * tc + 4
    while not f(hi) < 0:          # widen the bracket until the root is inside
        hi *= 1.5
    return float(optimize.brentq(f, 0.0, hi, xtol=1e-12))


def assess_detection(cal, blanks, *, lod_factor=3.3, loq_factor=10.0, readings_per_sample=1,
                     beta=0.05, alpha=0.05, reporting_method="ich-residual-sd") -> DetectionResult:
    """Every detection/quantitation estimate the data allow.

    Parameters
    ----------
    cal : CalibrationResult
    blanks : array_like or None
        Blank responses (response units).

    Notes
    -----
    S is the slope at zero concentration (the linear coefficient b; for a
    quadratic, df/dx at x = 0). ISO 11843-2 with I J = n calibration
    readings, K readings per test sample:
    x_C = t(1 - alpha, n - 2) (s/b) sqrt(1/K + 1/n + xbar^2/Sxx),
    x_D = delta (s/b) sqrt(1/K + 1/n + xbar^2/Sxx).
    """
    fit = cal.fit
    b = float(fit.slope_at(0.0))
    s = fit.residual_sd
    out = []
    f_lod, f_loq = lod_factor, loq_factor

    def pair(sigma):
        return f_lod * sigma / b, f_loq * sigma / b

    if fit.exact:
        out.append(DetectionEstimate("ich-residual-sd", "residual SD of the calibration", None, None, s,
                                     reason="the calibration fits exactly (zero residual SD)"))
    else:
        out.append(DetectionEstimate("ich-residual-sd", f"{f_lod:g}·s(y/x)/b and {f_loq:g}·s(y/x)/b",
                                     *pair(s), s))
    icpt = fit.coefficients.get("intercept")
    if icpt is None:
        out.append(DetectionEstimate("ich-intercept-sd", "SD of the intercept", None, None, None,
                                     reason="the line is forced through the origin (no intercept)"))
    elif fit.exact:
        out.append(DetectionEstimate("ich-intercept-sd", "SD of the intercept", None, None, None,
                                     reason="the calibration fits exactly (zero residual SD)"))
    else:
        out.append(DetectionEstimate("ich-intercept-sd", f"{f_lod:g}·s(a)/b and {f_loq:g}·s(a)/b",
                                     *pair(icpt.std_error), icpt.std_error))
    blanks = None if blanks is None else np.asarray(blanks, float)
    if blanks is None or blanks.size == 0:
        out.append(DetectionEstimate("blank-sd", "SD of blank responses", None, None, None,
                                     reason="no blank data in the study"))
    elif blanks.size < 2:
        out.append(DetectionEstimate("blank-sd", "SD of blank responses", None, None, None,
                                     reason="needs at least 2 blank readings"))
    else:
        sb = float(np.std(blanks - blanks.mean(), ddof=1))
        if sb == 0:
            out.append(DetectionEstimate("blank-sd", "SD of blank responses", None, None, 0.0,
                                         reason="every blank reading is identical"))
        else:
            out.append(DetectionEstimate("blank-sd", f"{f_lod:g}·s(blank)/b and {f_loq:g}·s(blank)/b "
                                         f"({blanks.size} blanks)", *pair(sb), sb))
    out.append(_iso11843(cal, readings_per_sample, alpha, beta, f_loq))
    return DetectionResult(tuple(out), reporting_method, lod_factor, loq_factor)


def _iso11843(cal, K, alpha, beta, f_loq) -> DetectionEstimate:
    fit = cal.fit
    name = "iso-11843-2"
    basis = "ISO 11843-2 critical value x_C and minimum detectable value x_D (exact non-central t)"
    reason = ""
    if cal.model != "linear" or cal.through_origin:
        reason = "needs a straight line with intercept"
    elif fit.weighting != "none":
        reason = f"needs an unweighted calibration (this one is weighted {fit.weighting})"
    elif fit.exact:
        reason = "the calibration fits exactly (zero residual SD)"
    elif cal.heteroscedasticity.applicable and cal.heteroscedasticity.pvalue < fit.alpha:
        reason = ("needs constant variance, but the Breusch-Pagan test is significant "
                  f"(p = {cal.heteroscedasticity.pvalue:.3g})")
    if reason:
        return DetectionEstimate(name, basis, None, None, None, reason=reason)
    n = fit.n
    df = n - 2
    x = fit.x
    xbar = x.mean()
    sxx = float(np.sum((x - xbar) ** 2))
    b = fit.coefficients["slope"].estimate
    s = fit.residual_sd
    root = np.sqrt(1.0 / K + 1.0 / n + xbar**2 / sxx)
    tq = float(stats.t.ppf(1 - alpha, df))
    delta = noncentrality_delta(df, alpha, beta)
    xc = tq * s / b * root
    xd = delta * s / b * root
    # ISO 11843-2 defines no quantitation limit, so none is reported under this basis
    return DetectionEstimate(name, basis + "; no quantitation limit is defined by this standard",
                             float(xd), None, s, critical_value=float(xc), delta=delta)
