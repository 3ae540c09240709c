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

from dataclasses import dataclass, field

import numpy as np

from ...maths.distributions import nct_cdf, t_isf

__all__ = ["DetectionEstimate", "DetectionResult", "assess_detection", "noncentrality_delta"]

METHODS = ("ich-residual-sd", "ich-intercept-sd", "blank-sd", "iso-11843-2")


def _is_iso(estimate) -> bool:
    return estimate.method == "iso-11843-2"


@dataclass(frozen=True)
class DetectionEstimate:
    """One basis of LOD/LOQ. Field order and ``metadata`` give its results.json form."""

    method: str
    basis: str
    lod: float | None
    loq: float | None = field(metadata={"null_reason": "loq_reason"})
    sigma: float | None               # the SD the estimate uses (response units)
    applicable: bool = field(init=False)      # an LOD exists
    reason: str = ""                  # why not applicable, when lod is None
    critical_value: float | None = field(default=None, metadata={"when": _is_iso})
    delta: float | None = field(default=None, metadata={"when": _is_iso})

    def __post_init__(self):
        object.__setattr__(self, "applicable", self.lod is not None)

    @property
    def loq_reason(self) -> str:
        """Why the LOQ alone is missing (results.json ``not_applicable``); "" when the LOD is missing too."""
        if self.lod is None:
            return ""
        return self.reason or "no quantitation limit is defined on this basis"


@dataclass(frozen=True)
class DetectionResult:
    lod_factor: float
    loq_factor: float
    reporting_method: str = field(metadata={"json": "reported_basis"})
    estimates: tuple[DetectionEstimate, ...]

    @property
    def reported(self) -> DetectionEstimate:
        return next(e for e in self.estimates if e.method == self.reporting_method)


def noncentrality_delta(df: int, alpha: float, beta: float, *, max_iter: int = 200) -> float:
    """Exact delta(nu, alpha, beta) of ISO 11843-2.

    The non-centrality parameter for which the non-central t distribution
    with ``df`` degrees of freedom has probability ``beta`` below
    t(1 - alpha, df). (The common shortcut delta ~ 2 t is not used.)

    Raises
    ------
    ValueError
        For a non-finite or out-of-range ``df``, ``alpha`` or ``beta``
        (0 < alpha, beta and alpha + beta < 1 are needed for delta >= 0), when
        the quantile or the non-central t probability is not finite, or when
        the root is not bracketed within ``max_iter`` doublings. The search
        never runs longer than ``max_iter`` bracket steps plus ``max_iter``
        Brent iterations.
    """
    for name, v in (("df", df), ("alpha", alpha), ("beta", beta)):
        if not isinstance(v, (int, float, np.integer, np.floating)) or not np.isfinite(v):
            raise ValueError(f"noncentrality_delta: {name} must be a finite number, got {v!r}")
    if df < 1:
        raise ValueError(f"noncentrality_delta: df must be at least 1, got {df!r}")
    if not (0 < alpha < 1 and 0 < beta < 1 and alpha + beta < 1):
        raise ValueError(f"noncentrality_delta: needs 0 < alpha, 0 < beta and alpha + beta < 1, "
                         f"got alpha = {alpha!r}, beta = {beta!r}")
    tc = float(t_isf(alpha, df))       # isf, not ppf(1 - alpha): 1 - 1e-17 rounds to 1
    if not np.isfinite(tc):
        raise ValueError(f"noncentrality_delta: t quantile for alpha = {alpha!r}, df = {df!r} is not finite")

    def f(d):                                 # decreasing in d
        v = float(nct_cdf(tc, df, d)) - beta
        if not np.isfinite(v):
            raise ValueError(f"noncentrality_delta: non-central t probability not finite at delta = {d!r} "
                             f"(alpha = {alpha!r}, beta = {beta!r}, df = {df!r})")
        return v

    hi = 2 * max(tc, 0.0) + 4
    for _ in range(max_iter):                 # widen the bracket until the root is inside
        if f(hi) < 0:
            break
        hi *= 2.0
        if not np.isfinite(hi):
            break
    else:
        hi = float("inf")
    if not np.isfinite(hi):
        raise ValueError(f"noncentrality_delta: no root bracketed for alpha = {alpha!r}, beta = {beta!r}, "
                         f"df = {df!r}")
    from scipy import optimize            # imported here: about 0.2 s, and only this path needs it

    try:
        root = optimize.brentq(f, 0.0, hi, xtol=1e-12, maxiter=max_iter)
    except RuntimeError as exc:               # brentq did not converge within maxiter
        raise ValueError(f"noncentrality_delta: {exc} (alpha = {alpha!r}, beta = {beta!r}, df = {df!r})") from exc
    return float(root)


def _slope_note(b: float) -> str:
    return "; the calibration slope is negative, so |S| is used" if b < 0 else ""


def _sigma_residual(fit):
    """(sigma, basis text, reason) for the residual-SD basis.

    Unweighted: sigma = s(y/x). Weighted: the SD of one reading at the lowest
    calibrator above zero, s(y/x)/sqrt(w(x_low)) with the fit's normalised
    weight there; this does not depend on how the weights are scaled (a
    weighted s(y/x) alone does: it scales with 1/sqrt(weight factor)).
    """
    s = fit.residual_sd
    if fit.weighting == "none":
        return s, "s(y/x) of the unweighted calibration", ""
    positive = fit.x[fit.x > 0]
    if positive.size == 0:
        return None, "", "the weighted calibration has no calibrator above zero to take the noise at"
    x_low = float(positive.min())
    w = fit.weight_at(x_low, float(fit.predict(x_low)))
    if not (np.isfinite(w) and w > 0):
        return None, "", f"the weight of the {fit.weighting} fit at the lowest calibrator {x_low:g} is not positive"
    return (float(s / np.sqrt(w)),
            f"s(y/x) of the {fit.weighting} weighted fit taken at the lowest calibrator above zero, "
            f"x = {x_low:g}: s(y/x)/√w(x_low), independent of how the weights are scaled", "")


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
    LOD = f_LOD sigma/|S|, LOQ = f_LOQ sigma/|S| [ICH-Q2]. S is the slope at
    zero concentration (the linear coefficient b; for a quadratic, df/dx at
    x = 0); a negative slope (response falling with concentration) is used by
    its magnitude and the basis says so; a zero or non-finite slope makes
    every estimate not applicable.

    sigma for the residual-SD basis: s(y/x) for an unweighted fit; for a
    weighted fit the SD of one reading at the lowest calibrator above zero,
    s(y/x)/sqrt(w(x_low)), which does not depend on how the weights are
    normalised (s(y/x) of a weighted fit alone does).

    ISO 11843-2 with I J = n individual calibration readings (every reading,
    not the level means) and K readings per test sample, whose mean is the
    test result:
    x_C = t(1 - alpha, n - 2) (s/|b|) sqrt(1/K + 1/n + xbar^2/Sxx),
    x_D = delta (s/|b|) sqrt(1/K + 1/n + xbar^2/Sxx).
    """
    fit = cal.fit
    b_signed = float(fit.slope_at(0.0))
    out = []
    f_lod, f_loq = lod_factor, loq_factor
    if not np.isfinite(b_signed) or b_signed == 0:
        reason = f"the calibration slope at zero concentration is {b_signed:g}, so no limit can be computed"
        for m in METHODS[:3]:
            out.append(DetectionEstimate(m, "", None, None, None, reason=reason))
        out.append(DetectionEstimate("iso-11843-2", "", None, None, None, reason=reason))
        return DetectionResult(lod_factor=lod_factor, loq_factor=loq_factor, reporting_method=reporting_method,
                           estimates=tuple(out))
    b = abs(b_signed)
    note = _slope_note(b_signed)

    def pair(sigma):
        return f_lod * sigma / b, f_loq * sigma / b

    if fit.exact:
        out.append(DetectionEstimate("ich-residual-sd", "residual SD of the calibration", None, None, fit.residual_sd,
                                     reason="the calibration fits exactly (zero residual SD)"))
    else:
        sigma, how, reason = _sigma_residual(fit)
        if sigma is None:
            out.append(DetectionEstimate("ich-residual-sd", "residual SD of the calibration", None, None, None,
                                         reason=reason))
        else:
            out.append(DetectionEstimate("ich-residual-sd", f"{f_lod:g}·σ/S and {f_loq:g}·σ/S, σ = {how}{note}",
                                         *pair(sigma), sigma))
    icpt = fit.coefficients.get("intercept")
    if icpt is None:
        out.append(DetectionEstimate("ich-intercept-sd", "SD of the intercept", None, None, None,
                                     reason="the line is forced through the origin (no intercept)"))
    elif fit.exact:
        out.append(DetectionEstimate("ich-intercept-sd", "SD of the intercept", None, None, None,
                                     reason="the calibration fits exactly (zero residual SD)"))
    else:
        out.append(DetectionEstimate("ich-intercept-sd", f"{f_lod:g}·s(a)/b and {f_loq:g}·s(a)/b{note}",
                                     *pair(icpt.std_error), icpt.std_error))
    blanks = None if blanks is None else np.asarray(blanks, float)
    if blanks is None or blanks.size == 0:
        out.append(DetectionEstimate("blank-sd", "SD of blank responses", None, None, None,
                                     reason="no blank readings for this analyte (no [blanks] section, or its file "
                                            "has none for this analyte)"))
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
                                         f"({blanks.size} blanks){note}", *pair(sb), sb))
    out.append(_iso11843(cal, readings_per_sample, alpha, beta, f_loq))
    return DetectionResult(lod_factor=lod_factor, loq_factor=loq_factor, reporting_method=reporting_method,
                           estimates=tuple(out))


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
    b_signed = fit.coefficients["slope"].estimate
    b = abs(b_signed)
    s = fit.residual_sd
    root = np.sqrt(1.0 / K + 1.0 / n + xbar**2 / sxx)
    tq = float(t_isf(alpha, df))
    try:
        delta = noncentrality_delta(df, alpha, beta)
    except ValueError as exc:
        return DetectionEstimate(name, basis, None, None, None, reason=f"delta could not be computed: {exc}")
    xc = tq * s / b * root
    xd = delta * s / b * root
    # ISO 11843-2 defines no quantitation limit, so none is reported under this basis
    return DetectionEstimate(name, basis + f"; K = {K} reading(s) per test sample (their mean is the result), "
                             f"calibration from its n = {n} individual readings; "
                             "no quantitation limit is defined by this standard" + _slope_note(b_signed),
                             float(xd), None, s, critical_value=float(xc), delta=delta)
