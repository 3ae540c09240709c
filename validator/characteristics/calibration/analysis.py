"""Calibration function: fit, diagnostics, back-calculation and inverse prediction.

Pure functions over arrays; nothing here reads files or formats text.

References
----------
.. [ISO8466-1] ISO 8466-1:2021, Water quality - Calibration and evaluation
   of analytical methods - Part 1: Linear calibration function.
.. [ISO8466-2] ISO 8466-2:2001, Part 2: non-linear second-order calibration.
.. [DIN38402-51] DIN 38402-51:2017, German standard methods - Calibration of
   analytical methods (Mandel's fitting test).
.. [Mandel] Mandel, J. (1964). The Statistical Analysis of Experimental Data,
   Wiley (the linear-vs-quadratic variance comparison).
.. [Draper-Smith] Draper, N. R. and Smith, H. (1998). Applied Regression
   Analysis, 3rd ed., Wiley: lack of fit against pure error (sec. 2.1),
   studentised residuals and Cook's distance (ch. 8).
.. [Almeida] Almeida, A. M., Castel-Branco, M. M. and Falcao, A. C. (2002).
   Linear regression for calibration lines revisited: weighting schemes for
   bioanalytical methods. J. Chromatogr. B 774, 215-222.
.. [Koenker] Koenker, R. (1981). A note on studentizing a test for
   heteroscedasticity. J. Econometrics 17, 107-112.
.. [SW] Shapiro, S. S. and Wilk, M. B. (1965). Biometrika 52, 591-611.
.. [Levene] Levene, H. (1960); Brown, M. B. and Forsythe, A. B. (1974).
   JASA 69, 364-367 (median-centred form, scipy's default).
.. [Cook] Cook, R. D. (1977). Detection of influential observation in linear
   regression. Technometrics 19, 15-18.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..._common import ConfidenceInterval, TestResult, not_above, not_applicable, quiet_numpy
from ...criteria import Criterion, at_least, missing
from ...maths.distributions import f_ppf, f_sf, t_ppf
from ...maths.heteroscedasticity import BREUSCH_PAGAN, breusch_pagan, levene_median
from ...maths.normality import shapiro_wilk
from ...maths.regression import EXACT_RTOL, WEIGHTINGS, PolynomialFit, fit_polynomial, raw_weights

__all__ = [
    "CalibrationResult", "BackCalculated", "OutlierFlag", "WeightingCandidate", "ChoiceStep",
    "SampleResult", "analyse_calibration", "quantify", "lack_of_fit", "mandel_test",
    "choose_weighting", "back_calculate", "calibration_criteria", "CalibrationRecord", "calibration_record",
]


@dataclass(frozen=True)
class BackCalculated:
    nominal: float
    response: float
    found: float
    deviation_pct: float | None     # None for nominal 0
    tolerance_pct: float | None
    passed: bool | None = field(metadata={"json": "pass"})    # None: not judged (nominal 0)

    @property
    def null_reason(self) -> str:
        """Why a value of this calibrator is missing (results.json ``not_applicable``)."""
        if self.nominal == 0:
            return "nominal 0: the % deviation is not defined and the calibrator is not judged"
        if self.found is None or not np.isfinite(self.found):
            return "the response lies beyond the vertex of the quadratic; no concentration corresponds to it"
        return ""


@dataclass(frozen=True)
class OutlierFlag:
    index: int = field(metadata={"json": None})
    concentration: float
    response: float
    studentised_residual: float
    cooks_distance: float
    reasons: tuple[str, ...]


@dataclass(frozen=True)
class WeightingCandidate:
    weighting: str
    sum_abs_relative_error_pct: float | None
    residual_sd: float | None
    reason: str = ""


@dataclass(frozen=True)
class ChoiceStep:
    """One recorded step of the model/weighting choice (see :func:`analyse_calibration`)."""

    step: str          # "weighting" | "mandel" | "model"
    model: str         # the model the step was computed for ("linear", "quadratic", "origin")
    weighting: str     # the weighting the step chose or was computed under
    outcome: str       # what the step found, in words


@dataclass(frozen=True)
class CalibrationResult:
    """Everything known about one analyte's calibration."""

    fit: PolynomialFit = field(repr=False)
    model: str                     # "linear" | "quadratic" (as the study names it)
    through_origin: bool
    weighting: str
    model_choice: str              # how the model was chosen
    weighting_candidates: tuple[WeightingCandidate, ...]    # empty unless auto
    levels: tuple[float, ...]      # distinct concentrations, ascending
    replicates: tuple[int, ...]    # count per level
    lack_of_fit: TestResult
    mandel: TestResult
    normality: TestResult
    heteroscedasticity: TestResult
    levene: TestResult
    intercept_test: TestResult
    back_calculated: tuple[BackCalculated, ...]
    fraction_within_tolerance: float | None
    outliers: tuple[OutlierFlag, ...]
    studentised_limit: float | None
    cooks_limit: float | None
    diagnostics: tuple[str, ...]   # sentences about degenerate data
    mandel_weighting: str | None = None   # the weighting Mandel's test was computed under
    choice_steps: tuple[ChoiceStep, ...] = ()       # in the order they were taken
    sensitivity_ratio: float | None = None   # see :func:`sensitivity_ratio`


def sensitivity_ratio(fit: PolynomialFit) -> float | None:
    """Slope of the fitted function at its flatter end of the calibrated range over that at its steeper end.

    Notes
    -----
    r = f'(x_a) / f'(x_b), with x_a, x_b the lowest and highest calibrator and
    b the end with the larger |f'|. r = 1 for a straight line; for a quadratic,
    whose derivative is linear in x, r > 0 exactly when the vertex lies outside
    the calibrated range, i.e. the function keeps rising (or keeps falling)
    from the lowest to the highest calibrator and every response in the range
    has one concentration. r <= 0: the curve turns over inside the range.
    ``None`` when the slope is zero at both ends.
    """
    ends = [float(fit.slope_at(float(v))) for v in (fit.x.min(), fit.x.max())]
    steep = max(ends, key=abs)
    if steep == 0 or not np.isfinite(steep):
        return None
    flat = min(ends, key=abs)
    return float(flat / steep)


def _levels(x):
    levels, counts = np.unique(x, return_counts=True)
    return levels, counts


def lack_of_fit(fit: PolynomialFit) -> TestResult:
    """Lack-of-fit F test against pure error.

    Notes
    -----
    With k distinct concentrations and p parameters, SS_pe = sum_i w_ij
    (y_ij - ybar_i)^2 (weighted group means), SS_lof = SS_res - SS_pe,
    F = (SS_lof / (k - p)) / (SS_pe / (n - k)) on F(k - p, n - k).
    Requires replicated levels (n > k) and k > p. [Draper-Smith] sec. 2.1;
    [ISO8466-1].
    """
    method = "lack-of-fit F test"
    levels, counts = _levels(fit.x)
    k, n, p = levels.size, fit.n, fit.n_params
    if n <= k:
        return not_applicable(method, "no concentration is replicated, so there is no pure error")
    if k <= p:
        return not_applicable(method, f"{k} distinct concentrations leave no degrees of freedom "
                                      f"for lack of fit with {p} parameters")
    w, y = fit.weights, fit.y
    group = np.unique(fit.x, return_inverse=True)[1]            # O(n log n), one pass per sum
    ybar = np.bincount(group, w * y) / np.bincount(group, w)
    ss_pe = float(np.sum(w * (y - ybar[group]) ** 2))
    ss_lof = max(fit.ssr - ss_pe, 0.0)
    d1, d2 = k - p, n - k
    if fit.exact:
        return not_applicable(method, "the fit is exact (zero residual SD)")
    if ss_pe <= (EXACT_RTOL * fit.response_spread) ** 2 * n:     # relative to the centred SS_tot
        return not_applicable(method, "replicates are identical (zero pure error)")
    F = (ss_lof / d1) / (ss_pe / d2)
    return TestResult(method, float(F), float(f_sf(F, d1, d2)), (d1, d2))


def mandel_test(x, y, weighting: str = "none", alpha: float = 0.05) -> TestResult:
    """Mandel's fitting test: does a quadratic fit significantly better than a line?

    Notes
    -----
    With s1 and s2 the residual SDs of the straight line and the quadratic,
    DS^2 = (n - 2) s1^2 - (n - 3) s2^2 and F = DS^2 / s2^2 on F(1, n - 3).
    [ISO8466-1], [DIN38402-51], [Mandel].
    """
    method = "Mandel's fitting test"
    x = np.asarray(x, float)
    n = x.size
    if np.unique(x).size < 3 or n < 4:
        return not_applicable(method, "needs at least 3 distinct concentrations and 4 points")
    try:
        lin = fit_polynomial(x, y, model="linear", weighting=weighting, alpha=alpha)
        quad = fit_polynomial(x, y, model="quadratic", weighting=weighting, alpha=alpha)
    except ValueError as exc:      # e.g. levels so unevenly spaced that the quadratic is numerically singular
        return not_applicable(method, f"the quadratic cannot be fitted to these concentrations ({exc})")
    if quad.exact:
        return not_applicable(method, "the quadratic fits exactly (zero residual SD)")
    ds2 = (n - 2) * lin.residual_variance - (n - 3) * quad.residual_variance
    F = max(ds2, 0.0) / quad.residual_variance
    return TestResult(method, float(F), float(f_sf(F, 1, n - 3)), (1, n - 3))


def back_calculate(fit: PolynomialFit, tolerance_pct: float, lowest_tolerance_pct: float) -> tuple:
    """Back-calculated concentration of every calibrator and its % deviation.

    Notes
    -----
    found_i = f^-1(y_i); deviation = 100 (found_i - x_i) / x_i. The lowest
    non-zero level is judged against ``lowest_tolerance_pct``, the others
    against ``tolerance_pct``; nominal zero is reported, not judged.
    Common practice in bioanalytical validation (ICH M10, sec. 3.2.5.1 and
    EMA 2011 guideline: +/-15 %, +/-20 % at the LLOQ).
    The work is O(n): the inverse is computed for all responses at once by
    :meth:`PolynomialFit.inverse_many`.
    """
    x, y = fit.x, fit.y
    nonzero = x[x > 0]
    lowest = float(nonzero.min()) if nonzero.size else None
    found, _ = fit.inverse_many(y)
    with quiet_numpy():
        dev = 100.0 * (found - x) / x
    tol = np.where(x == lowest, lowest_tolerance_pct, tolerance_pct) if lowest is not None else \
        np.full(x.shape, float(tolerance_pct))
    ok = np.isfinite(dev) & not_above(np.abs(dev), tol)
    out = []
    for xi, yi, fi, di, ti, oi in zip(x.tolist(), y.tolist(), found.tolist(), dev.tolist(), tol.tolist(),
                                      ok.tolist()):
        if xi == 0:
            out.append(BackCalculated(xi, yi, fi, None, None, None))
        else:
            out.append(BackCalculated(xi, yi, fi, di, ti, oi))
    return tuple(out)


def _sum_abs_re(fit: PolynomialFit) -> float:
    total = 0.0
    for b in back_calculate(fit, np.inf, np.inf):
        if b.deviation_pct is not None:
            total += abs(b.deviation_pct) if np.isfinite(b.deviation_pct) else np.inf
    return total


def choose_weighting(x, y, model: str, alpha: float = 0.05) -> tuple:
    """Choose the weighting with the smallest sum of |relative error| of back-calculation.

    Candidates none, 1/x, 1/x^2, 1/y, 1/y^2; a candidate that cannot be
    computed on these data is listed with the reason. [Almeida].
    Returns ``(best, candidates)``.
    """
    candidates = []
    for wt in WEIGHTINGS:
        try:
            raw_weights(wt, x, y)
        except ValueError as exc:
            candidates.append(WeightingCandidate(wt, None, None, str(exc)))
            continue
        fit = fit_polynomial(x, y, model=model, weighting=wt, alpha=alpha)
        candidates.append(WeightingCandidate(wt, _sum_abs_re(fit), fit.residual_sd))
    usable = [c for c in candidates if c.sum_abs_relative_error_pct is not None]
    best = min(usable, key=lambda c: c.sum_abs_relative_error_pct).weighting
    return best, tuple(candidates)


def _normality(fit: PolynomialFit) -> TestResult:
    method = "Shapiro-Wilk"
    r = fit.weighted_residuals
    if r.size < 3:
        return not_applicable(method, "needs at least 3 residuals")
    if fit.exact:
        return not_applicable(method, "the residuals are all zero (perfect fit)")
    with quiet_numpy():
        res = shapiro_wilk(r)
    return TestResult(method, float(res.statistic), float(res.pvalue))


def _breusch_pagan(x, y, model: str) -> TestResult:
    unweighted = fit_polynomial(x, y, model=model, weighting="none")
    if unweighted.exact:
        return not_applicable(BREUSCH_PAGAN, "the residuals are all zero (perfect fit)")
    u = (np.asarray(x, float) - unweighted.centre) / unweighted.scale
    exog = np.column_stack([np.ones_like(u)] + [u**k for k in unweighted.powers if k > 0])
    return breusch_pagan(unweighted.residuals, exog)


def _levene(x, y) -> TestResult:
    method = "Levene (median-centred)"
    levels, counts = _levels(x)
    if levels.size < 2 or counts.min() < 3:
        return not_applicable(method, "needs at least 3 replicates at every concentration")
    order = np.argsort(x, kind="stable")                        # O(n log n), not one pass per level
    groups = np.split(np.asarray(y)[order], np.cumsum(counts)[:-1])
    if all(np.ptp(g) == 0 for g in groups):
        return not_applicable(method, "every level has identical replicates")
    with quiet_numpy():
        res = levene_median(*groups)
    return TestResult(method, float(res.statistic), float(res.pvalue), (levels.size - 1, x.size - levels.size))


def _outliers(fit: PolynomialFit, alpha: float):
    """Externally studentised residuals and Cook's distance, on the weighted fit.

    Notes
    -----
    r_i = e_i sqrt(w_i) / (s sqrt(1 - h_i)); t_i = r_i sqrt((n-p-1)/(n-p-r_i^2));
    flagged when |t_i| > t(1 - alpha/(2n), n - p - 1) (Bonferroni).
    Cook's D_i = r_i^2 h_i / (p (1 - h_i)), flagged when above the median of
    F(p, n - p). [Draper-Smith] ch. 8, [Cook].
    """
    n, p = fit.n, fit.n_params
    if n - p - 1 < 1 or fit.exact:
        return (), None, None
    h = np.clip(fit.leverage, 0, 1 - 1e-12)
    with quiet_numpy():
        r = fit.weighted_residuals / (fit.residual_sd * np.sqrt(1 - h))
        t = r * np.sqrt((n - p - 1) / np.maximum(n - p - r**2, 1e-300))
        cooks = r**2 * h / (p * (1 - h))
    t_limit = float(t_ppf(1 - alpha / (2 * n), n - p - 1))
    d_limit = float(f_ppf(0.5, p, n - p))
    flags = []
    for i in np.flatnonzero((np.abs(t) > t_limit) | (cooks > d_limit)):
        reasons = []
        if abs(t[i]) > t_limit:
            reasons.append("studentised residual")
        if cooks[i] > d_limit:
            reasons.append("Cook's distance")
        if reasons:
            flags.append(OutlierFlag(i, float(fit.x[i]), float(fit.y[i]), float(t[i]),
                                     float(cooks[i]), tuple(reasons)))
    return tuple(flags), t_limit, d_limit


def _intercept_test(fit: PolynomialFit) -> TestResult:
    method = "t test, H0: intercept = 0"
    c = fit.coefficients.get("intercept")
    if c is None:
        return not_applicable(method, "the line is forced through the origin")
    if c.statistic is None or fit.exact:
        return not_applicable(method, "the fit is exact (zero residual SD)")
    return TestResult(method, c.statistic, c.pvalue, (fit.df_resid,))


_MODEL_WORDS = {"linear": "straight line", "quadratic": "quadratic", "origin": "line through the origin"}


def _weighting_words(wt: str) -> str:
    return "unweighted" if wt == "none" else f"weighting {wt}"


def _mandel_outcome(mandel: TestResult, alpha: float) -> str:
    if not mandel.applicable:
        return f"not applicable: {mandel.reason}"
    verdict = "significant" if mandel.pvalue < alpha else "not significant"
    return f"F = {mandel.statistic:.6g}, p = {mandel.pvalue:.3g}: {verdict} at alpha = {alpha:g}"


def analyse_calibration(x, y, *, model: str = "linear", weighting: str = "none",
                        through_origin: bool = False, alpha: float = 0.05,
                        tolerance_pct: float = 15.0, lowest_tolerance_pct: float = 20.0
                        ) -> CalibrationResult:
    """Fit and assess one analyte's calibration.

    ``model`` may be "auto" (Mandel's test at ``alpha`` decides between
    straight line and quadratic) and ``weighting`` may be "auto" (see
    :func:`choose_weighting`).

    Notes
    -----
    The automatic choice is one fixed sequence, recorded step by step in
    ``choice_steps``:

    1. weighting "auto": choose the weighting for the straight line
       (:func:`choose_weighting`); otherwise use the declared weighting;
    2. model "auto": Mandel's test under that weighting; p < alpha selects
       the quadratic, otherwise the straight line stays;
    3. if the quadratic was selected and the weighting is "auto", choose the
       weighting again, now for the quadratic (this is the weighting of the
       final fit, ``weighting``);
    4. ``mandel`` is the test of step 2 and ``mandel_weighting`` the weighting
       it was computed under, which differs from ``weighting`` when step 3
       changed it. The test is not re-run after step 3: the model decision
       was taken on step 2, and a re-run could contradict the decision.

    With a declared model the weighting is chosen for that model (the line
    through the origin when ``through_origin``) and Mandel's test is
    reported for information under the weighting of the fit.
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    levels, counts = _levels(x)
    diagnostics = []
    if np.ptp(y) == 0:
        diagnostics.append("every response is the same: the method does not respond to concentration")

    wt, candidates, steps = weighting, (), []
    mandel_wt = None

    def pick_weighting(for_model):
        best, cands = choose_weighting(x, y, for_model, alpha)
        steps.append(ChoiceStep("weighting", for_model, best,
                                f"{best} has the smallest sum of |relative error| of back-calculation "
                                f"for the {_MODEL_WORDS[for_model]}"))
        return best, cands

    chosen = model
    model_choice = f'as declared (model = "{model}")'
    if through_origin:
        mandel = not_applicable("Mandel's fitting test", "the line is forced through the origin")
        if model == "auto":
            chosen = "linear"
            model_choice = ("straight line, because Mandel's test is not applicable "
                            "(the line is forced through the origin)")
        if weighting == "auto":
            wt, candidates = pick_weighting("origin")
    elif model == "auto":
        # (a) weighting for the straight line, (b) Mandel's test under it, (c) if the quadratic
        # wins, the weighting is chosen again for the quadratic; Mandel's F stays the one of (b)
        # and is reported with the weighting of (b)
        if weighting == "auto":
            wt, candidates = pick_weighting("linear")
        mandel, mandel_wt = mandel_test(x, y, wt, alpha), wt
        steps.append(ChoiceStep("mandel", "linear", wt, _mandel_outcome(mandel, alpha)))
        if mandel.applicable and mandel.pvalue < alpha:
            chosen = "quadratic"
            model_choice = (f"quadratic, because Mandel's test ({_weighting_words(wt)}) is significant "
                            f"(p = {mandel.pvalue:.3g} < alpha = {alpha:g})")
        else:
            chosen = "linear"
            model_choice = (f"straight line, because Mandel's test ({_weighting_words(wt)}) is not significant"
                            if mandel.applicable else
                            f"straight line, because Mandel's test is not applicable ({mandel.reason})")
        steps.append(ChoiceStep("model", chosen, wt, model_choice))
        if weighting == "auto" and chosen == "quadratic":
            wt, candidates = pick_weighting("quadratic")
    else:
        # declared model: the weighting is chosen for that model; Mandel's test is reported
        # for information under the weighting of the fit
        if weighting == "auto":
            wt, candidates = pick_weighting(model)
        mandel, mandel_wt = mandel_test(x, y, wt, alpha), wt
        steps.append(ChoiceStep("mandel", "linear", wt, _mandel_outcome(mandel, alpha)))
    fit_model = "origin" if through_origin else chosen
    fit = fit_polynomial(x, y, model=fit_model, weighting=wt, alpha=alpha)
    if fit.exact:
        diagnostics.append("the fit is exact (zero residual SD): tests that need residual "
                           "scatter are not applicable and every interval has zero width")
    back = back_calculate(fit, tolerance_pct, lowest_tolerance_pct)
    judged = [b for b in back if b.passed is not None]
    fraction = sum(b.passed for b in judged) / len(judged) if judged else None
    outliers, t_limit, d_limit = _outliers(fit, alpha)
    with quiet_numpy():
        result = CalibrationResult(
            fit=fit, model=chosen, through_origin=through_origin, weighting=wt,
            model_choice=model_choice, weighting_candidates=candidates,
            levels=tuple(float(v) for v in levels), replicates=tuple(int(c) for c in counts),
            lack_of_fit=lack_of_fit(fit), mandel=mandel, normality=_normality(fit),
            heteroscedasticity=_breusch_pagan(x, y, fit_model), levene=_levene(x, y),
            intercept_test=_intercept_test(fit), back_calculated=back,
            fraction_within_tolerance=fraction, outliers=outliers,
            studentised_limit=t_limit, cooks_limit=d_limit, diagnostics=tuple(diagnostics),
            mandel_weighting=mandel_wt if mandel.applicable else None, choice_steps=tuple(steps),
            sensitivity_ratio=sensitivity_ratio(fit))
    return result


@dataclass(frozen=True)
class SampleResult:
    """Concentration read back from the calibration for one unknown.

    ``concentration`` is NaN (and ``reason`` says why) when the response has
    no real inverse on a quadratic.
    """

    id: str
    replicates: int
    mean_response: float
    concentration: float
    std_error: float
    ci: ConfidenceInterval = field(metadata={"interval": "pair"})
    within_range: bool
    reason: str = field(default="", metadata={"json": None})

    @property
    def null_item(self) -> str:
        """Its name in results.json ``not_applicable``: unknowns are listed by id."""
        return f"samples.{self.id}"


def quantify(fit: PolynomialFit, sample_id: str, responses) -> SampleResult:
    """Inverse prediction x0 from the mean of m readings, with its standard error.

    Notes
    -----
    x0 solves f(x0) = ybar0. By first-order propagation,

        Var(x0) = [s^2 / (w0 m) + Var(yhat(x0))] / f'(x0)^2,

    with w0 the weight at x0 (1 unweighted) and Var(yhat(x0)) the variance of
    the fitted response at x0. For the unweighted straight line this is the
    closed form s(x0) = (s/b) sqrt(1/m + 1/n + (ybar0 - ybar)^2 / (b^2 Sxx))
    [ISO8466-1] sec. 6; [Draper-Smith] sec. 3.2 (inverse regression).
    CI: x0 +/- t(1 - alpha/2, n - p) s(x0). ``within_range`` is False when x0
    lies outside [min x, max x] (extrapolation).
    """
    r = np.asarray(responses, float)
    m = r.size
    y0 = float(r.mean())
    x0, inside = fit.inverse(y0)
    lo, hi = float(fit.x.min()), float(fit.x.max())
    level = 1 - fit.alpha
    if not np.isfinite(x0):
        nan = float("nan")
        return SampleResult(sample_id, m, y0, nan, nan, ConfidenceInterval(nan, nan, level), False,
                            "the mean response lies beyond the vertex of the quadratic; "
                            "no concentration corresponds to it")
    with quiet_numpy():
        w0 = fit.weight_at(x0, y0)
        slope = float(fit.slope_at(x0))
        var = (fit.residual_variance / (w0 * m) + float(fit.mean_response_variance(x0))) / slope**2
    se = float(np.sqrt(var)) if np.isfinite(var) else float("nan")
    tq = fit.t_quantile
    reason = ""
    if not np.isfinite(se):
        reason = ("the weight at this concentration cannot be computed (zero or negative value)"
                  if not w0 > 0 else "the calibration function is flat at this concentration (zero slope), "
                  "so the standard error does not exist")
    within = bool(inside and lo <= x0 <= hi)
    return SampleResult(sample_id, m, y0, x0, se, ConfidenceInterval(x0 - tq * se, x0 + tq * se, level),
                        within, reason)


def calibration_criteria(cal, crit) -> tuple:
    """Criteria on one analyte's calibration (see docs/results.md for each id)."""
    out = []
    lof = cal.lack_of_fit
    out.append(Criterion(
        "lack-of-fit", f"lack-of-fit F test: p-value at least alpha = {crit.alpha:g}",
        lof.pvalue, crit.alpha, at_least(lof.pvalue, crit.alpha),
        "" if lof.applicable else f"not applicable: {lof.reason}"))
    bad = [b for b in cal.back_calculated if b.passed is False]
    frac = cal.fraction_within_tolerance
    out.append(Criterion(
        "back-calculation",
        f"fraction of calibrators back-calculated within +/-{crit.back_calculation_tolerance_pct:g} % "
        f"(+/-{crit.lowest_level_tolerance_pct:g} % at the lowest level) at least "
        f"{crit.min_fraction_within_tolerance:g}",
        frac, crit.min_fraction_within_tolerance, at_least(frac, crit.min_fraction_within_tolerance),
        ("outside tolerance at nominal " + ", ".join(f"{b.nominal:g}" for b in bad)) if bad else
        ("" if frac is not None else "not applicable: no calibrator with a non-zero nominal value")))
    ratio = cal.sensitivity_ratio
    out.append(Criterion(
        "monotonic", "calibration function monotonic over the calibrated range: slope at its flatter end "
        "over slope at its steeper end greater than 0", ratio, 0.0,
        None if ratio is None else ratio > 0,
        "not applicable: the slope is zero at both ends of the range" if ratio is None else
        ("" if ratio > 0 else "the curve turns over inside the calibrated range: some responses "
         "correspond to two concentrations")))
    if crit.r_squared_min is not None:
        r2 = cal.fit.r_squared
        out.append(Criterion("r-squared", f"coefficient of determination R² at least {crit.r_squared_min:g}",
                             r2, crit.r_squared_min, at_least(r2, crit.r_squared_min),
                             "" if not missing(r2) else "not applicable: R² does not exist "
                             "(the responses do not vary)"))
    return tuple(out)


# --- the results.json form of a calibration ---------------------------------------------------


@dataclass(frozen=True)
class LevelCount:
    concentration: float
    replicates: int


@dataclass(frozen=True)
class CoefficientRecord:
    """A coefficient as results.json writes it."""

    estimate: float
    std_error: float
    ci: ConfidenceInterval = field(metadata={"interval": "pair"})
    t_statistic: float | None
    pvalue: float | None = field(metadata={"json": "p_value"})

    @property
    def null_reason(self) -> str:
        return "the standard error is zero (exact fit): no t test" if self.t_statistic is None else ""


@dataclass(frozen=True)
class TestRecord:
    """An applicable test as results.json writes it (``method`` only where several methods exist)."""

    method: str | None = field(metadata={"omit_none": True})
    statistic: float
    pvalue: float | None = field(metadata={"json": "p_value"})
    df: tuple[float, ...] | None = field(metadata={"omit_none": True})


@dataclass(frozen=True)
class MandelRecord(TestRecord):
    weighting: str | None            # the weighting the test was computed under


@dataclass(frozen=True)
class OutlierRecord:
    studentised_limit: float | None
    cooks_limit: float | None
    flagged: tuple[OutlierFlag, ...]
    null_reason: str = field(metadata={"json": None})     # why the limits are missing, when they are


def _record_test(t: TestResult, with_method: bool = False) -> TestRecord | None:
    return None if not t.applicable else TestRecord(t.method if with_method else None, t.statistic, t.pvalue, t.df)


def _test_field(name: str):
    """A test's field: ``null`` when it is not applicable, listed under its own name with its reason."""
    return field(metadata={"null_reason": f"{name}_reason", "null_item": name})


@dataclass(frozen=True, kw_only=True)
class CalibrationRecord:
    """A calibration as results.json writes it (field order and ``metadata`` give the form); the
    reason of each missing value is declared beside it."""

    model: str
    weighting: str
    through_origin: bool
    model_choice: str
    n: int
    levels: int
    level_table: tuple[LevelCount, ...]
    df_resid: int
    confidence_level: float
    t_quantile: float
    coefficients: dict[str, CoefficientRecord]
    residual_sd: float
    r_squared: float | None = field(metadata={"null_reason": "r_squared_reason"})
    r: float | None = field(metadata={"null_reason": "r_reason"})
    lack_of_fit: TestRecord | None = _test_field("lack_of_fit")
    mandel: MandelRecord | None = _test_field("mandel")
    choice_steps: tuple[ChoiceStep, ...]
    normality: TestRecord | None = _test_field("normality")
    heteroscedasticity: TestRecord | None = _test_field("heteroscedasticity")
    levene: TestRecord | None = _test_field("levene")
    intercept_test: TestRecord | None = _test_field("intercept_test")
    weighting_candidates: tuple[WeightingCandidate, ...]
    outliers: OutlierRecord
    back_calculated: tuple[BackCalculated, ...]
    fraction_within_tolerance: float | None = field(metadata={"null_reason": "fraction_reason"})
    sensitivity_ratio: float | None = field(metadata={"null_reason": "sensitivity_reason"})
    residuals: tuple[float, ...]
    r_reason: str = field(metadata={"json": None})
    lack_of_fit_reason: str = field(default="", metadata={"json": None})
    mandel_reason: str = field(default="", metadata={"json": None})
    normality_reason: str = field(default="", metadata={"json": None})
    heteroscedasticity_reason: str = field(default="", metadata={"json": None})
    levene_reason: str = field(default="", metadata={"json": None})
    intercept_test_reason: str = field(default="", metadata={"json": None})

    r_squared_reason = "the responses do not vary about their mean: R² does not exist"
    fraction_reason = "no calibrator with a non-zero nominal value"
    sensitivity_reason = "the slope of the calibration function is zero at both ends of the range"


def calibration_record(cal: CalibrationResult) -> CalibrationRecord:
    """The results.json form of ``cal``: the fit's summary, the tests, the calibrators.

    r = sign(slope) sqrt(R²), for a straight line only (R² >= 0).
    """
    fit = cal.fit
    r = None
    if fit.r_squared >= 0 and "slope" in fit.coefficients and fit.n_params <= 2:
        r = (1 if fit.coefficients["slope"].estimate >= 0 else -1) * fit.r_squared ** 0.5
    mandel = cal.mandel
    tests = {"lack_of_fit": cal.lack_of_fit, "mandel": mandel, "normality": cal.normality,
             "heteroscedasticity": cal.heteroscedasticity, "levene": cal.levene, "intercept_test": cal.intercept_test}
    return CalibrationRecord(
        model=cal.model, weighting=cal.weighting, through_origin=cal.through_origin, model_choice=cal.model_choice,
        n=fit.n, levels=len(cal.levels),
        level_table=tuple(LevelCount(c, k) for c, k in zip(cal.levels, cal.replicates)),
        df_resid=fit.df_resid, confidence_level=1 - fit.alpha, t_quantile=fit.t_quantile,
        coefficients={name: CoefficientRecord(c.estimate, c.std_error, c.ci, c.statistic, c.pvalue)
                      for name, c in fit.coefficients.items()},
        residual_sd=fit.residual_sd, r_squared=fit.r_squared, r=r,
        lack_of_fit=_record_test(cal.lack_of_fit),
        mandel=None if not mandel.applicable else MandelRecord(None, mandel.statistic, mandel.pvalue, mandel.df,
                                                               cal.mandel_weighting),
        choice_steps=cal.choice_steps, normality=_record_test(cal.normality, True),
        heteroscedasticity=_record_test(cal.heteroscedasticity, True), levene=_record_test(cal.levene, True),
        intercept_test=_record_test(cal.intercept_test), weighting_candidates=cal.weighting_candidates,
        outliers=OutlierRecord(cal.studentised_limit, cal.cooks_limit, cal.outliers,
                               "the fit is exact (zero residual SD): residuals cannot be studentised" if fit.exact
                               else "needs at least one residual degree of freedom after leaving a point out "
                               "(n - p - 1 >= 1)"),
        back_calculated=cal.back_calculated, fraction_within_tolerance=cal.fraction_within_tolerance,
        sensitivity_ratio=cal.sensitivity_ratio, residuals=tuple(fit.residuals.tolist()),
        r_reason=("r is reported for a straight line only; see r_squared" if fit.n_params > 2
                  else "R² does not exist for these data"),
        **{f"{name}_reason": t.reason for name, t in tests.items() if not t.applicable})
