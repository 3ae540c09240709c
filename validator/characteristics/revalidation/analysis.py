"""Comparing a calibration with a previous validation's, like with like.

Pure functions over the numbers a results.json records. The ``[revalidation]``
section of a study runs :func:`assess_revalidation` for every analyte matched
with the previous run (see ``validator.inputs.previous`` for the matching rules).

Like with like: the current calibration points are refitted with the previous
run's model, weighting and through-origin setting (:func:`refit_like`), so that
a change of weighting or model between the runs (or a different automatic
choice) does not show up as a change of the method. The current run's own
choice is reported beside the comparison.

The previous run's raw calibration points are its ``back_calculated`` entries
(nominal concentration and response of every calibrator). With both runs' points
the comparison is a joint fit with separate coefficients per run
(:func:`joint_comparison`); a results.json that lacks the points falls back to
the summary-statistics test (:func:`compare_slopes`), for straight lines only.

References
----------
.. [Armitage] Armitage, P., Berry, G. and Matthews, J. N. S. (2002).
   Statistical Methods in Medical Research, 4th ed., Blackwell, sec. 11.4
   (comparison of two regression slopes with a pooled residual variance).
.. [Draper-Smith] Draper, N. R. and Smith, H. (1998). Applied Regression
   Analysis, 3rd ed., Wiley, ch. 9 (weighted least squares) and ch. 14
   (indicator variables: separate coefficients per group in one fit).
.. [Schuirmann] Schuirmann, D. J. (1987). A comparison of the two one-sided
   tests procedure and the power approach for assessing the equivalence of
   average bioavailability. J. Pharmacokinet. Biopharm. 15, 657-680.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..._common import ConfidenceInterval, not_above, quiet_numpy
from ...criteria import Criterion, at_most, interval_within
from ...maths.distributions import f_test_two_sided, t_ppf, t_sf
from ...maths.regression import PolynomialFit, fit_polynomial
from ...maths.welch import welch_t_test

__all__ = ["SlopeComparison", "JointComparison", "RevalidationResult", "CalibrationFunction", "RunPair", "RecoveryChange", "ResidualSdChange",
           "PreviousResults", "revalidation_criteria", "unmatched_criterion",
           "RepeatabilityChange", "CalibrationChoice", "compare_slopes", "residual_sd_ratio",
           "refit_like", "joint_comparison", "assess_revalidation", "calibration_points", "RunSummary",
           "CalibrationPoints", "LevelRepeatability", "run_summary"]


@dataclass(frozen=True, kw_only=True)
class SlopeComparison:
    """Change of the sensitivity between two runs and its equivalence decision.

    ``quantity`` is "slope" for straight lines and "mean sensitivity" for curves
    (the average first derivative over ``sensitivity_range``). ``change_ci_pct``
    has level 1 - 2 alpha. Fields are ``None`` (and ``reason`` says why) when the
    comparison cannot be made.
    """

    quantity: str = "slope"
    sensitivity_range: tuple[float, float] | None = field(default=None,
                                                         metadata={"null_reason": "no_sensitivity_range"})
    previous: float | None
    current: float | None
    change_pct: float | None
    change_ci_pct: ConfidenceInterval | None = field(metadata={"interval": "pair", "level_json": "change_ci_level"})
    t_statistic: float | None
    df: int
    pvalue: float | None = field(metadata={"json": "p_value"})
    margin_pct: float
    equivalent: bool = field(init=False)
    verdict: str                 # "equivalent" | "not shown equivalent" | "different" | "not applicable"
    reason: str = ""
    basis: str = field(default="summary statistics", metadata={"json": None})   # written with the result

    def __post_init__(self):
        object.__setattr__(self, "equivalent", self.verdict == "equivalent")

    @property
    def no_sensitivity_range(self) -> str:
        """Why ``sensitivity_range`` is null: a straight line's slope needs no range to average over."""
        return ("" if self.sensitivity_range is not None else
                f"the {self.quantity} of a straight line is compared; a sensitivity range applies to a curve only")


def _decide(b1, b2, diff_se, df, margin_pct, alpha):
    """Change %, its 1 - 2 alpha CI, t, p and the TOST verdict (b1 is the reference value)."""
    with quiet_numpy():
        t = float((b2 - b1) / diff_se) if diff_se > 0 else None
    p = float(2 * t_sf(abs(t), df)) if t is not None and np.isfinite(t) else None
    tq = float(t_ppf(1 - alpha, df))
    lo, hi = 100 * (b2 - b1 - tq * diff_se) / b1, 100 * (b2 - b1 + tq * diff_se) / b1
    lo, hi = min(lo, hi), max(lo, hi)
    if interval_within([lo, hi], [-margin_pct, margin_pct]):
        verdict = "equivalent"
    elif hi < -margin_pct or lo > margin_pct:
        verdict = "different"
    else:
        verdict = "not shown equivalent"
    return 100 * (b2 - b1) / b1, ConfidenceInterval(lo, hi, 1 - 2 * alpha), t, p, verdict


def compare_slopes(previous, current, margin_pct: float, alpha: float = 0.05, *,
                   n_params: int = 2) -> SlopeComparison:
    """t test for the difference of two straight-line slopes from summary numbers, and TOST.

    ``previous`` and ``current`` are ``(slope, std_error, residual_sd, n)``; ``n_params``
    is the number of coefficients of each line (2, or 1 through the origin).

    Notes
    -----
    With p = ``n_params``: Sxx_k = s_k^2 / SE(b_k)^2; pooled
    s^2 = [(n1 - p) s1^2 + (n2 - p) s2^2] / (n1 + n2 - 2p);
    t = (b2 - b1) / sqrt(s^2 (1/Sxx1 + 1/Sxx2)) on n1 + n2 - 2p df [Armitage]. This equals
    the t of the interaction term in one OLS fit y ~ x * run (y ~ x + x:run through the
    origin). Equivalence: the 100(1 - 2 alpha) % CI of the change 100 (b2 - b1)/b1 (b1 taken
    as the reference value) inside +/- margin [Schuirmann]; "different" when the interval
    lies wholly outside the margin.
    """
    b1, se1, s1, n1 = previous
    b2, se2, s2, n2 = current
    p = int(n_params)
    df = int(n1 + n2 - 2 * p)
    with quiet_numpy():
        pooled = ((n1 - p) * s1**2 + (n2 - p) * s2**2) / df if df > 0 else float("nan")
        unscaled = (se1 / s1) ** 2 + (se2 / s2) ** 2 if s1 > 0 and s2 > 0 else float("nan")
    if not (df > 0 and np.isfinite(unscaled) and b1 != 0):
        reason = ("the previous slope is zero" if b1 == 0 else
                  "a residual SD or slope standard error is zero or missing, so no pooled variance exists")
        return SlopeComparison(previous=b1, current=b2, change_pct=None, change_ci_pct=None, t_statistic=None,
                               df=max(df, 0), pvalue=None, margin_pct=margin_pct, verdict="not applicable",
                               reason=reason)
    se = float(np.sqrt(pooled * unscaled))
    change, ci, t, pv, verdict = _decide(b1, b2, se, df, margin_pct, alpha)
    return SlopeComparison(previous=b1, current=b2, change_pct=change, change_ci_pct=ci, t_statistic=t, df=df,
                           pvalue=pv, margin_pct=margin_pct, verdict=verdict)


def residual_sd_ratio(previous_sd, previous_df, current_sd, current_df):
    """(ratio current/previous, F = ratio^2, two-sided p on F(current_df, previous_df)).

    All three are ``None`` when the previous residual SD is zero (no ratio exists).
    """
    if not previous_sd > 0:
        return None, None, None
    F = (current_sd / previous_sd) ** 2
    return float(current_sd / previous_sd), float(F), f_test_two_sided(F, current_df, previous_df)


def refit_like(x, y, *, model: str, through_origin: bool, weighting: str, alpha: float = 0.05) -> PolynomialFit:
    """Fit calibration points with a given run's model, through-origin setting and weighting.

    ``model`` is "linear" or "quadratic" as results.json records it; ``through_origin``
    forces a straight line through 0 (as the calibration does). Raises ``ValueError``
    when the weighting cannot be computed for these points (checked in loading first).
    """
    return fit_polynomial(x, y, model="origin" if through_origin else model, weighting=weighting, alpha=alpha)


@dataclass(frozen=True)
class JointComparison:
    """Two runs in one weighted least-squares fit with separate coefficients per run.

    ``residual_sd`` values are on the common weight scale of the joint fit (raw weights
    times one factor, so that the weights of both runs together average 1).
    """

    slope: SlopeComparison
    residual_sd_previous: float
    residual_sd_current: float
    residual_df: tuple[int, int]           # (previous, current): n_k - p
    pooled_residual_sd: float
    n_params: int


def _mean_sensitivity_vector(fit: PolynomialFit, low: float, high: float) -> np.ndarray:
    """g with g' beta_u = (f(high) - f(low)) / (high - low); for a straight line, the slope."""
    if 2 not in fit.powers:
        return np.array([k / fit.scale if k == 1 else 0.0 for k in fit.powers])
    ua, ub = fit._u(low), fit._u(high)
    return np.array([(ub**k - ua**k) / (high - low) for k in fit.powers])


def joint_comparison(previous: PolynomialFit, current: PolynomialFit, margin_pct: float,
                     alpha: float = 0.05) -> JointComparison:
    """Compare two fits of the same model and weighting in one joint fit.

    Notes
    -----
    Model: y_i = f_run(i)(x_i) + e_i with separate coefficients for each run, weights
    w_i = c r_i from the common weighting scheme (r_i the raw weight, c = (n1 + n2)/sum r_i),
    Var(e_i) = sigma^2 / w_i with one sigma^2 for both runs (equal error variance after
    weighting is assumed). The coefficients are those of the separate fits; the pooled
    residual variance is s^2 = (SSR1 + SSR2)/(n1 + n2 - 2p), SSR_k = sum_k w_i e_i^2
    [Draper-Smith ch. 9, 14].

    Compared quantity: for a straight line (with or without intercept) the slope; for a
    quadratic the mean sensitivity over the common calibrated range [a, b] (a = larger
    of the two lowest levels, b = smaller of the two highest),
    S = (f(b) - f(a))/(b - a) = b1 + b2 (a + b), the average of the first derivative
    over [a, b]. S is linear in the coefficients, so Var(S_k) = s^2 g' (X_k'W_k X_k)^-1 g
    exactly; one quantity, so no simultaneous-interval adjustment is needed.
    t = (S2 - S1)/sqrt(Var(S1) + Var(S2)) on n1 + n2 - 2p df; the change
    100 (S2 - S1)/S1 with its 100(1 - 2 alpha) % CI is judged against +/- margin by
    two one-sided tests [Schuirmann]. Residual SDs s_k^2 = SSR_k/(n_k - p) on the
    common weight scale; their ratio is tested by F = s2^2/s1^2 on (n2 - p, n1 - p).
    """
    fits = (previous, current)
    p = previous.n_params
    n1, n2 = previous.n, current.n
    raw_sums = [float(f.weights.sum() / f.weight_factor) for f in fits]
    common = (n1 + n2) / sum(raw_sums)
    # a fit's normalised weights are weight_factor * raw; on the common scale: common * raw
    ssr = [f.ssr / f.weight_factor * common for f in fits]
    df = n1 + n2 - 2 * p
    s2_pooled = sum(ssr) / df
    run_s = [float(np.sqrt(s / (f.n - p))) for s, f in zip(ssr, fits)]
    quadratic = 2 in previous.powers
    low = max(float(previous.x.min()), float(current.x.min()))
    high = min(float(previous.x.max()), float(current.x.max()))
    if not high > low:      # a straight line's slope, too, is only compared over a range both runs calibrated
        slope = SlopeComparison(previous=None, current=None, change_pct=None, change_ci_pct=None, t_statistic=None,
                                df=df, pvalue=None, margin_pct=margin_pct, verdict="not applicable",
                                quantity="mean sensitivity" if quadratic else "slope", sensitivity_range=None,
                                basis="joint fit",
                                reason="the two calibrated ranges do not overlap, so no common range exists "
                                "over which to compare the two calibration functions like with like")
        return JointComparison(slope, run_s[0], run_s[1], (n1 - p, n2 - p), float(np.sqrt(s2_pooled)), p)
    if not quadratic:
        low = high = None
    values, unscaled = [], []
    for f in fits:
        g = _mean_sensitivity_vector(f, low, high)
        values.append(float(g @ f.beta_u))
        # (X'W_c X)^-1 = (weight_factor / common) (X'W X)^-1 for the fit's own weights W
        unscaled.append(float(g @ f.cov_u @ g) * f.weight_factor / common)
    b1, b2 = values
    quantity, rng = ("mean sensitivity", (low, high)) if quadratic else ("slope", None)
    if b1 == 0:
        slope = SlopeComparison(previous=b1, current=b2, change_pct=None, change_ci_pct=None, t_statistic=None,
                                df=df, pvalue=None, margin_pct=margin_pct, verdict="not applicable",
                                quantity=quantity, sensitivity_range=rng, basis="joint fit",
                                reason=f"the previous {quantity} is zero, so no relative change exists")
    else:
        se = float(np.sqrt(s2_pooled * (unscaled[0] + unscaled[1])))
        change, ci, t, pv, verdict = _decide(b1, b2, se, df, margin_pct, alpha)
        slope = SlopeComparison(previous=b1, current=b2, change_pct=change, change_ci_pct=ci, t_statistic=t, df=df,
                                pvalue=pv, margin_pct=margin_pct, verdict=verdict, quantity=quantity,
                                sensitivity_range=rng, basis="joint fit")
    return JointComparison(slope, run_s[0], run_s[1], (n1 - p, n2 - p), float(np.sqrt(s2_pooled)), p)


@dataclass(frozen=True)
class RunPair:
    """One quantity in the previous run and in this one."""

    previous: float | None
    current: float | None


@dataclass(frozen=True)
class RecoveryChange:
    """Mean recovery before and now: Welch's t test of the means, F test of the variances (two-sided)."""

    previous_mean_pct: float | None
    current_mean_pct: float | None
    welch_pvalue: float | None = field(metadata={"json": "welch_p_value"})
    variance_f_pvalue: float | None = field(metadata={"json": "variance_f_p_value"})


@dataclass(frozen=True)
class RepeatabilityChange:
    """Repeatability SD at a level both runs assessed, with the two-sided F test of the variances."""

    level: float
    previous_sd: float
    current_sd: float
    f_pvalue: float = field(metadata={"json": "f_p_value"})


@dataclass(frozen=True)
class CalibrationChoice:
    """A calibration function: model, weighting, through the origin or not."""

    model: str
    weighting: str
    through_origin: bool


@dataclass(frozen=True)
class ResidualSdChange:
    """Residual SD before and now (on the joint fit's common weight scale), their ratio and the
    two-sided F test of F = ratio^2 on ``df`` = (previous, current) degrees of freedom."""

    previous: float
    current: float
    df: tuple[int, int]
    ratio: float | None
    f_statistic: float | None
    pvalue: float | None = field(metadata={"json": "p_value"})
    ratio_max: float


@dataclass(frozen=True)
class PreviousResults:
    """The earlier results.json compared with, as identified in the audit trail."""

    path: str
    study_id: str
    generated_at: str
    sha256: str


_LIST = ("previous", "current")         # a RunPair written as [previous, current]


@dataclass(frozen=True)
class CalibrationFunction:
    """A run's calibration function a + b x + c x² (a = 0 through the origin, c = 0 for a straight
    line) over its calibrated range [low, high], as its results.json recorded it (for drawing)."""

    intercept: float
    slope: float
    quadratic: float
    low: float
    high: float

    @classmethod
    def from_entry(cls, calibration: dict) -> "CalibrationFunction":
        """From a results.json analyte's ``calibration`` entry (coefficients and level table)."""
        coefficients = calibration["coefficients"]
        levels = [lv["concentration"] for lv in calibration["level_table"]]
        return cls(intercept=coefficients.get("intercept", {}).get("estimate", 0.0),
                   slope=coefficients["slope"]["estimate"],
                   quadratic=coefficients.get("quadratic", {}).get("estimate", 0.0),
                   low=min(levels), high=max(levels))


@dataclass(frozen=True, kw_only=True)
class RevalidationResult:
    """One analyte compared with its previous validation. Field order and ``metadata`` give its
    results.json form; ``previous`` and ``previous_analyte`` name the earlier file and analyte."""

    previous: PreviousResults | None = None
    previous_analyte: str = ""
    basis: str = field(init=False)                        # the slope comparison's basis
    refit_model: str = "linear"           # the previous run's model, used for both runs
    refit_weighting: str = "none"
    refit_through_origin: bool = False
    current_own_choice: CalibrationChoice | None = None  # the function this run chose for itself
    slope: SlopeComparison
    intercept: RunPair                    # refitted
    residual_sd: ResidualSdChange
    lod: RunPair = field(metadata={"flatten": (("lod", _LIST),)})       # on the reported basis
    loq: RunPair = field(metadata={"flatten": (("loq", _LIST),)})
    recovery: RecoveryChange | None = field(metadata={"null_reason": "recovery_reason"})
    repeatability: tuple[RepeatabilityChange, ...]       # levels in both runs
    verdict: str
    reasons: tuple[str, ...]
    # the previous validation's own calibration function, drawn beside this run's in the dossier
    previous_function: CalibrationFunction | None = field(default=None, metadata={"omit_none": True})

    def __post_init__(self):
        object.__setattr__(self, "basis", self.slope.basis)

    @property
    def null_reason(self) -> str:
        """Why a value is missing (results.json ``not_applicable``)."""
        return "; ".join(self.reasons) or "the previous results.json has no value for it"

    recovery_reason = "recovery data are missing in this or the previous validation"


@dataclass(frozen=True)
class CalibrationPoints:
    """Every calibrator of a run: nominal concentrations and responses."""

    concentration: np.ndarray = field(repr=False)
    response: np.ndarray = field(repr=False)


@dataclass(frozen=True)
class LevelRepeatability:
    """A precision level's repeatability SD and its within-series degrees of freedom."""

    level: float
    sd: float | None
    df_within: int | None          # None when an earlier file does not record it


@dataclass(frozen=True)
class RunSummary:
    """What a re-validation compares of one run of one analyte.

    This run's is built from its typed results (:func:`run_summary`); the previous run's
    from its entry in the earlier results.json (:meth:`from_results`).
    """

    function: CalibrationChoice
    n: int
    residual_sd: float | None
    slope: float | None                    # the straight line's slope and its standard error
    slope_se: float | None
    intercept: float | None
    points: CalibrationPoints | None       # None when an earlier file lacks the raw points
    lod: float | None                      # on the reported basis
    loq: float | None
    recoveries_pct: tuple[float, ...] | None              # None: recovery not assessed
    repeatability: tuple[LevelRepeatability, ...] | None   # None: precision not assessed

    @classmethod
    def from_results(cls, entry: dict) -> "RunSummary":
        """From an analyte entry of a results.json (any version the schema accepts)."""
        cal = entry["calibration"]
        coefficients = cal["coefficients"]
        slope = coefficients.get("slope", {})
        points = calibration_points(entry)
        recovery, precision = entry.get("recovery"), entry.get("precision")
        return cls(
            CalibrationChoice(cal["model"], cal["weighting"], bool(cal["through_origin"])), cal["n"],
            cal["residual_sd"], slope.get("estimate"), slope.get("std_error"),
            coefficients.get("intercept", {}).get("estimate"),
            None if points is None else CalibrationPoints(*points),
            _reported(entry, "lod"), _reported(entry, "loq"),
            None if not recovery else tuple(v for lv in recovery["levels"] for v in lv.get("recoveries_pct", [])
                                            if v is not None),
            None if not precision else tuple(
                LevelRepeatability(lv["level"], lv.get("repeatability_sd"), lv["df"][-1] if lv.get("df") else None)
                for lv in precision["levels"]))


def run_summary(cal, detection, recovery, precision) -> RunSummary:
    """This run's :class:`RunSummary` from its calibration, detection, recovery and precision results."""
    fit = cal.fit
    reported = detection.reported
    slope, intercept = fit.coefficients.get("slope"), fit.coefficients.get("intercept")
    return RunSummary(
        CalibrationChoice(cal.model, cal.weighting, bool(cal.through_origin)), fit.n, fit.residual_sd,
        None if slope is None else slope.estimate, None if slope is None else slope.std_error,
        None if intercept is None else intercept.estimate,
        CalibrationPoints(np.asarray(fit.x, float), np.asarray(fit.y, float)), reported.lod, reported.loq,
        None if recovery is None else tuple(v for lv in recovery.levels for v in lv.recoveries_pct),
        tuple(LevelRepeatability(lv.level, lv.repeatability_sd, lv.anova.df_within) for lv in precision)
        if precision else None)


def _reported(analyte: dict, key: str):
    det = analyte.get("detection") or {}
    for e in det.get("estimates", []):
        if e["method"] == det.get("reported_basis"):
            return e[key]
    return None


def calibration_points(entry: dict):
    """(concentrations, responses) of every calibrator of a results.json analyte entry.

    ``None`` when its ``back_calculated`` list does not hold one entry per calibrator
    (``calibration.n``), which older or reduced files may lack.
    """
    cal = entry["calibration"]
    rows = cal.get("back_calculated") or []
    if len(rows) != cal["n"] or any(r.get("nominal") is None or r.get("response") is None for r in rows):
        return None
    return (np.array([r["nominal"] for r in rows], float), np.array([r["response"] for r in rows], float))


def _as_tuple(choice: CalibrationChoice) -> tuple:
    return choice.model, choice.weighting, choice.through_origin


def _describe(spec: tuple) -> str:
    model, weighting, origin = spec
    shape = "straight line through the origin" if origin else \
        {"linear": "straight line", "quadratic": "quadratic"}.get(model, model)
    return f"{shape}, weighting {weighting}"


def _fallback(previous: RunSummary, current_fit: PolynomialFit, margin_pct, alpha):
    p = current_fit.n_params
    if 2 in current_fit.powers:
        slope = SlopeComparison(previous=None, current=None, change_pct=None, change_ci_pct=None, t_statistic=None,
                                df=0, pvalue=None, margin_pct=margin_pct, verdict="not applicable",
                                quantity="mean sensitivity", sensitivity_range=None, basis="summary statistics",
                                reason="the previous results.json lacks the raw calibration points that the "
                                "comparison of curves needs")
    else:
        se = previous.slope_se
        prev = (previous.slope, float("nan") if se is None else se, previous.residual_sd, previous.n)
        cur = (current_fit.coefficients["slope"].estimate, current_fit.coefficients["slope"].std_error,
               current_fit.residual_sd, current_fit.n)
        slope = compare_slopes(prev, cur, margin_pct, alpha, n_params=p)
    return slope, float(previous.residual_sd), current_fit.residual_sd, (int(previous.n) - p, current_fit.df_resid)


def assess_revalidation(previous: RunSummary, current: RunSummary, *, slope_change_max_pct: float,
                        residual_sd_ratio_max: float, alpha: float = 0.05) -> RevalidationResult:
    """Compare one analyte of this run with the previous run.

    ``current`` must hold every calibrator (``points``); ``previous`` may lack them
    (an earlier file), in which case straight lines are compared on summary statistics.

    Notes
    -----
    This run's points are refitted with the previous run's model, weighting and
    through-origin setting (:func:`refit_like`). With the previous run's points the two
    runs are compared in one joint fit (:func:`joint_comparison`); without them, for
    straight lines only, by :func:`compare_slopes` on the summary numbers. Residual SD:
    ratio s2/s1 and F = ratio^2 on (n2 - p, n1 - p), two-sided. Recovery: Welch's t test
    on the per-replicate recoveries of all levels (:func:`validator.maths.welch.welch_t_test`),
    and the F test of their variances. Repeatability: F = s_r2^2/s_r1^2 per level present in
    both runs. Verdict: "different" when the sensitivity interval lies outside the margin or
    the residual SD ratio exceeds its maximum; "not shown equivalent" when the interval
    straddles the margin or the comparison cannot be made; else "equivalent".
    """
    spec = _as_tuple(previous.function)
    own = _as_tuple(current.function)
    model, weighting, origin = spec
    refit_current = refit_like(current.points.concentration, current.points.response, model=model,
                               through_origin=origin, weighting=weighting, alpha=alpha)
    if previous.points is not None:
        refit_previous = refit_like(previous.points.concentration, previous.points.response, model=model,
                                    through_origin=origin, weighting=weighting, alpha=alpha)
        joint = joint_comparison(refit_previous, refit_current, slope_change_max_pct, alpha)
        slope, s1, s2 = joint.slope, joint.residual_sd_previous, joint.residual_sd_current
        sd_df = joint.residual_df
        intercept_previous = refit_previous.coefficients.get("intercept")
        intercept_previous = None if intercept_previous is None else intercept_previous.estimate
    else:
        slope, s1, s2, sd_df = _fallback(previous, refit_current, slope_change_max_pct, alpha)
        intercept_previous = previous.intercept
    intercept_current = refit_current.coefficients.get("intercept")
    intercept_current = None if intercept_current is None else intercept_current.estimate
    ratio, F, p = residual_sd_ratio(s1, sd_df[0], s2, sd_df[1])

    rec = None
    if previous.recoveries_pct is not None and current.recoveries_pct is not None:
        r1, r2 = list(previous.recoveries_pct), list(current.recoveries_pct)
        welch = f_p = None
        if len(r1) > 1 and len(r2) > 1:
            with quiet_numpy():
                welch = welch_t_test(r2, r1).pvalue
                welch = welch if np.isfinite(welch) else None
                if np.var(r1) > 0 and np.var(r2) > 0:
                    f = np.var(r2, ddof=1) / np.var(r1, ddof=1)
                    d2, d1 = len(r2) - 1, len(r1) - 1
                    f_p = f_test_two_sided(f, d2, d1)
        rec = RecoveryChange(float(np.mean(r1)) if r1 else None, float(np.mean(r2)) if r2 else None, welch, f_p)
    rep = []
    if previous.repeatability is not None and current.repeatability is not None:
        old = {lv.level: lv for lv in previous.repeatability}
        for lv in current.repeatability:
            o = old.get(lv.level)
            if o and o.sd and lv.sd and o.df_within is not None and lv.df_within is not None:
                f = (lv.sd / o.sd) ** 2
                d2, d1 = lv.df_within, o.df_within
                if d1 > 0 and d2 > 0:
                    rep.append(RepeatabilityChange(lv.level, o.sd, lv.sd, f_test_two_sided(f, d2, d1)))

    reasons = []
    if own != spec:
        reasons.append(f"this run's points were refitted with the previous run's calibration function "
                       f"({_describe(spec)}) for the comparison; this run itself uses {_describe(own)}")
    if slope.verdict == "not applicable":
        reasons.append(f"the {slope.quantity} change cannot be judged: {slope.reason}")
        verdict = "not shown equivalent"
    else:
        where = "" if slope.sensitivity_range is None else \
            f" over {slope.sensitivity_range[0]:g} to {slope.sensitivity_range[1]:g}"
        reasons.append(f"{slope.quantity}{where} change {slope.change_pct:+.2f} % with "
                       f"{slope.change_ci_pct.label} CI {slope.change_ci_pct.low:+.2f} to "
                       f"{slope.change_ci_pct.high:+.2f} % against the margin ±{slope_change_max_pct:g} %: "
                       f"{slope.verdict}")
        verdict = slope.verdict
    if ratio is None:
        reasons.append("the previous residual SD is zero, so no residual SD ratio exists")
        verdict = "different" if verdict == "different" else "not shown equivalent"
    elif not not_above(ratio, residual_sd_ratio_max):
        verdict = "different"
        reasons.append(f"residual SD ratio {ratio:.3g} exceeds the maximum {residual_sd_ratio_max:g}")
    else:
        reasons.append(f"residual SD ratio {ratio:.3g} is within the maximum {residual_sd_ratio_max:g}")
    if slope.basis == "summary statistics":
        reasons.append("the previous results.json lacks the raw calibration points, so the comparison used its "
                       "summary statistics (slope, its standard error, residual SD and n)")
    return RevalidationResult(
        refit_model=model, refit_weighting=weighting, refit_through_origin=origin,
        current_own_choice=CalibrationChoice(*own), slope=slope,
        intercept=RunPair(intercept_previous, intercept_current),
        residual_sd=ResidualSdChange(s1, s2, tuple(sd_df), ratio, F, p, residual_sd_ratio_max),
        lod=RunPair(previous.lod, current.lod), loq=RunPair(previous.loq, current.loq), recovery=rec,
        repeatability=tuple(rep), verdict=verdict, reasons=tuple(reasons))


def revalidation_criteria(reval: RevalidationResult, slope_change_max_pct: float,
                          residual_sd_ratio_max: float) -> tuple[Criterion, ...]:
    """Slope (sensitivity) equivalence and residual SD ratio; "not applicable" when no value exists."""
    sl = reval.slope
    what = sl.quantity if sl.sensitivity_range is None else \
        f"{sl.quantity} over {sl.sensitivity_range[0]:g} to {sl.sensitivity_range[1]:g}"
    ci = sl.change_ci_pct
    level = "" if ci is None else f"{ci.label} "
    value = None if ci is None else [ci.low, ci.high]
    margin = [-slope_change_max_pct, slope_change_max_pct]
    slope = Criterion("slope-equivalence",
                      f"{level}CI of the {what} change inside ±{slope_change_max_pct:g} % of the previous "
                      "validation", value, margin, interval_within(value, margin),
                      f"not applicable: {sl.reason}" if ci is None else sl.verdict)
    ratio = reval.residual_sd.ratio
    sd = Criterion("residual-sd-ratio", f"s(y/x) ratio current/previous at most {residual_sd_ratio_max:g}",
                   ratio, residual_sd_ratio_max, at_most(ratio, residual_sd_ratio_max),
                   "not applicable: the previous residual SD is zero, so no ratio exists" if ratio is None else "")
    return slope, sd


def unmatched_criterion(slope_change_max_pct: float) -> Criterion:
    """The slope criterion of an analyte with no counterpart in the previous results: not applicable."""
    margin = slope_change_max_pct
    return Criterion(
        "slope-equivalence", f"slope change inside ±{margin:g} % of the previous validation", None,
        [-margin, margin], None, "not applicable: the previous results have no analyte matching this one "
        "(map renamed analytes with [revalidation] analytes = {new = \"old\"}), so nothing was compared")
