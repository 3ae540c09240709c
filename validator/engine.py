"""The analysis engine: loaded study in, judged results out. No I/O.

For every analyte it runs each assessed characteristic, judges the criteria
and precomputes what the dossier plots need (fitted curve and bands), so
that the rendering layer only draws and formats.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields, replace
from typing import Callable, Generic, TypeVar

import numpy as np
from scipy import stats
from ._common import quiet_numpy
from .characteristics.calibration import CalibrationResult, SampleResult, analyse_calibration, quantify
from .criteria import (at_most, calibration_criteria, comparison_criteria, interval_within, loq_criterion,
                       overall_verdict, recovery_criteria, reference_material_criterion,
                       working_range_criterion)
from .characteristics.detection import DetectionResult, assess_detection
from .characteristics.precision import PrecisionLevel, assess_precision_level, precision_criteria
from .characteristics.recovery import (RecoveryResult, ReferenceMaterialResult, assess_recovery,
                                       assess_reference_material)
from .characteristics.comparison import ComparisonResult, assess_comparison
from .characteristics.interval_judgement import recovery_interval_criteria
from .characteristics.accuracy_profile.analysis import (AccuracyProfileResult, accuracy_profile_criteria,
                                                        assess_accuracy_profile)
from .characteristics.uncertainty.analysis import (BiasEvidence, PrecisionInput, UncertaintyResult,
                                                   assess_uncertainty, uncertainty_criteria)
from .criteria import Criterion
from .characteristics.revalidation import RevalidationResult, RunSummary, assess_revalidation, run_summary
from .characteristics.working_range import LoqCheck, WorkingRange, verify_loq, working_range
from .inputs.loading import AnalyteData, LoadedStudy
from .inputs.study import StudyConfig

__all__ = ["AnalyteResult", "StudyResult", "CurveBands", "ResidualSeries", "StraightLine", "AnalyteContext",
           "Assessment", "Characteristic", "REGISTRY", "analyse_analyte", "analyse_study", "curve_bands",
           "residual_series"]


@dataclass(frozen=True)
class CurveBands:
    """Fitted curve with confidence and prediction bands on a grid (for plots).

    Notes
    -----
    Confidence band yhat +/- t s_yhat(x); prediction band for one new reading
    yhat +/- t sqrt(s^2/w(x) + s_yhat(x)^2), t = t(1 - alpha/2, n - p).
    [Draper-Smith] sec. 3.1-3.2.
    """

    x: np.ndarray = field(repr=False)
    fit: np.ndarray = field(repr=False)
    confidence_low: np.ndarray = field(repr=False)
    confidence_high: np.ndarray = field(repr=False)
    prediction_low: np.ndarray = field(repr=False)
    prediction_high: np.ndarray = field(repr=False)


def curve_bands(fit, points: int = 121) -> CurveBands:
    lo, hi = float(fit.x.min()), float(fit.x.max())
    grid = np.linspace(lo, hi, points)
    yhat = fit.predict(grid)
    with quiet_numpy():
        var_mean = fit.mean_response_variance(grid)
        w = np.array([fit.weight_at(g, v) for g, v in zip(grid, yhat)])
        w[~(w > 0)] = np.nan
        var_pred = fit.residual_variance / w + var_mean
    t = fit.t_quantile
    return CurveBands(grid, yhat, yhat - t * np.sqrt(var_mean), yhat + t * np.sqrt(var_mean),
                      yhat - t * np.sqrt(var_pred), yhat + t * np.sqrt(var_pred))


@dataclass(frozen=True)
class StraightLine:
    """y = intercept + slope x."""

    intercept: float
    slope: float


@dataclass(frozen=True)
class ResidualSeries:
    """Residual views for the dossier plots.

    Relative residual = 100 e_i / yhat_i (undefined where yhat_i = 0).
    Q-Q: ordered weight-scaled residuals against normal quantiles with
    Filliben's plotting positions, and the least-squares line through them,
    as scipy.stats.probplot computes them.
    """

    relative_x: tuple[float, ...]
    relative_pct: tuple[float, ...]
    qq_theoretical: tuple[float, ...]
    qq_ordered: tuple[float, ...]
    qq_line: StraightLine | None


def residual_series(fit) -> ResidualSeries:
    yhat = fit.predict(fit.x)
    keep = np.abs(yhat) > 0
    rel = 100.0 * fit.residuals[keep] / yhat[keep]
    with quiet_numpy():
        (osm, osr), (slope, intercept, _) = stats.probplot(fit.weighted_residuals, dist="norm")
    line = StraightLine(float(intercept), float(slope)) if np.isfinite(slope) and not fit.exact else None
    return ResidualSeries(tuple(map(float, fit.x[keep])), tuple(map(float, rel)),
                          tuple(map(float, osm)), tuple(map(float, osr)), line)


@dataclass(frozen=True)
class AnalyteResult:
    name: str
    data: AnalyteData = field(repr=False)
    calibration: CalibrationResult = field(repr=False)
    samples: tuple[SampleResult, ...]
    criteria: tuple[Criterion, ...]
    bands: CurveBands = field(repr=False)
    residual_views: ResidualSeries = field(repr=False)
    detection: DetectionResult | None = None
    working_range: WorkingRange | None = None
    loq_check: LoqCheck | None = None
    recovery: RecoveryResult | None = None
    precision: tuple[PrecisionLevel, ...] = ()           # one per level
    reference_material: ReferenceMaterialResult | None = None
    revalidation: RevalidationResult | None = None
    comparison: ComparisonResult | None = None
    accuracy_profile: AccuracyProfileResult | None = None
    uncertainty: UncertaintyResult | None = None

    @property
    def characteristics(self) -> tuple:
        out = ["calibration", "detection", "working_range"]
        if self.samples:
            out.append("samples")
        if self.recovery is not None:
            out.append("recovery")
        if self.precision:
            out.append("precision")
        if self.reference_material is not None:
            out.append("reference_material")
        if self.revalidation is not None:
            out.append("revalidation")
        if self.comparison is not None:
            out.append("comparison")
        if self.accuracy_profile is not None:
            out.append("accuracy_profile")
        if self.uncertainty is not None:
            out.append("uncertainty")
        return tuple(out)

    @property
    def verdict(self) -> str:
        return overall_verdict(self.criteria)


@dataclass(frozen=True)
class StudyResult:
    loaded: LoadedStudy = field(repr=False)
    analytes: tuple[AnalyteResult, ...]

    @property
    def criteria(self):
        return tuple(c for a in self.analytes for c in a.criteria)

    @property
    def verdict(self) -> str:
        return overall_verdict(self.criteria)


@dataclass(frozen=True)
class AnalyteContext:
    """One analyte's data and settings, and every result assessed so far (typed, never a dict).

    A characteristic that uses another's results (working range, LOQ verification,
    re-validation) reads them here; the registry's order guarantees they exist.
    """

    data: AnalyteData
    config: StudyConfig
    unit: str = ""
    calibration: CalibrationResult | None = None
    samples: tuple[SampleResult, ...] = ()
    detection: DetectionResult | None = None
    recovery: RecoveryResult | None = None
    precision: tuple[PrecisionLevel, ...] = ()
    reference_material: ReferenceMaterialResult | None = None
    loq_check: LoqCheck | None = None
    working_range: WorkingRange | None = None
    comparison: ComparisonResult | None = None
    revalidation: RevalidationResult | None = None
    accuracy_profile: AccuracyProfileResult | None = None
    uncertainty: UncertaintyResult | None = None
    criteria: tuple[Criterion, ...] = ()
    # characteristics without a field of their own here (added to the registry only), by name
    others: tuple[tuple[str, Assessment], ...] = ()

    @property
    def alpha(self) -> float:
        return self.config.criteria.alpha


R = TypeVar("R")


@dataclass(frozen=True)
class Assessment(Generic[R]):
    """What one characteristic adds: its result (stored in the context field of its name) and criteria."""

    result: R
    criteria: tuple[Criterion, ...] = ()


@dataclass(frozen=True)
class Characteristic:
    """A registry entry: the context field it fills and the step that assesses it."""

    name: str
    assess: Callable[[AnalyteContext], Assessment | None]      # None: not assessed for this analyte


def _calibration(ctx: AnalyteContext) -> Assessment:
    cal_cfg, crit = ctx.config.calibration, ctx.config.criteria
    d = ctx.data.calibration
    cal = analyse_calibration(d.concentration, d.response, model=cal_cfg.model, weighting=cal_cfg.weighting,
                              through_origin=cal_cfg.through_origin, alpha=ctx.alpha,
                              tolerance_pct=crit.back_calculation_tolerance_pct,
                              lowest_tolerance_pct=crit.lowest_level_tolerance_pct)
    return Assessment(cal, calibration_criteria(cal, crit))


def _samples(ctx: AnalyteContext) -> Assessment:
    return Assessment(tuple(quantify(ctx.calibration.fit, s.id, s.responses) for s in ctx.data.samples))


def _detection(ctx: AnalyteContext) -> Assessment:
    det = ctx.config.detection
    return Assessment(assess_detection(ctx.calibration, ctx.data.blanks, lod_factor=det.lod_factor,
                                       loq_factor=det.loq_factor, readings_per_sample=det.readings_per_sample,
                                       beta=det.beta, alpha=ctx.alpha, reporting_method=det.reporting_basis))


def _recovery(ctx: AnalyteContext) -> Assessment | None:
    r = ctx.data.recovery
    if r is None:
        return None
    recovery = assess_recovery(r.added, r.found, r.native, alpha=ctx.alpha, range_for=ctx.config.recovery.range_for)
    if ctx.config.criteria.on_intervals:
        return Assessment(recovery, recovery_interval_criteria(recovery, ctx.alpha))
    return Assessment(recovery, recovery_criteria(recovery))


def _precision(ctx: AnalyteContext) -> Assessment | None:
    p = ctx.data.precision
    if p is None:
        return None
    pc = ctx.config.precision
    levels = []
    for level in np.unique(p.level):
        mask = p.level == level
        levels.append(assess_precision_level(
            level, p.found[mask], [s for s, lv in zip(p.series, p.level) if lv == level], alpha=ctx.alpha,
            unit=ctx.unit, offset=p.offset, design=pc.design, factors=tuple(np.asarray(f)[mask] for f in p.factors),
            claims=pc.claims_for(float(level)), bounds=ctx.config.criteria.on_intervals))
    levels = tuple(levels)
    return Assessment(levels, tuple(c for lv in levels for c in _precision_criteria(ctx, lv)))


def _precision_criteria(ctx: AnalyteContext, lv: PrecisionLevel) -> tuple:
    return precision_criteria(lv, ctx.config.precision.limits_for(lv.level),
                              on_intervals=ctx.config.criteria.on_intervals, alpha=ctx.alpha)


def _reference_material(ctx: AnalyteContext) -> Assessment | None:
    if ctx.data.reference_material is None:
        return None
    rmc = ctx.config.reference_material
    rm = assess_reference_material(ctx.data.reference_material, rmc.certified_value, rmc.standard_uncertainty,
                                   k=rmc.coverage_factor, measurement_uncertainty=rmc.measurement_standard_uncertainty)
    return Assessment(rm, (reference_material_criterion(rm),))


def _runs(p) -> tuple[str, ...]:
    """The run of each precision result: the innermost unit of the declared design, else the series."""
    return tuple(" / ".join(path) for path in zip(*p.factors)) if p.factors else p.series


def _accuracy_profile(ctx: AnalyteContext) -> Assessment | None:
    ac, p = ctx.config.accuracy_profile, ctx.data.precision
    if ac is None or p is None:
        return None
    runs = _runs(p)
    by = f"units of the innermost design factor ({ctx.config.precision.design[-1]})" if p.factors else "series"
    profile = assess_accuracy_profile(p.level, p.found + p.offset, runs, beta=ac.beta,
                                      acceptance_for=ac.acceptance_for, runs_by=by, content=ac.content,
                                      confidence=ac.confidence)
    return Assessment(profile, accuracy_profile_criteria(profile))


def _uncertainty(ctx: AnalyteContext) -> Assessment | None:
    uc = ctx.config.uncertainty
    if uc is None or not ctx.precision:
        return None
    design = ctx.config.precision.design
    source = ("intermediate precision RSD, all components of the design " + "/".join(design) if design else
              "intermediate precision RSD, one-way ANOVA on series")
    prec = tuple(PrecisionInput(lv.level, lv.decisive[1][0], source, lv.decisive[1][2]) for lv in ctx.precision)
    bias = []
    rm = ctx.reference_material
    if "reference_material" in uc.bias_from and rm is not None:
        u_mean = (rm.sd / np.sqrt(rm.n)) if rm.sd is not None else 0.0
        bias.append(BiasEvidence(
            "reference material", rm.bias_pct, 100.0 * float(np.hypot(rm.certified_uncertainty, u_mean))
            / rm.certified_value,
            # from memory: Nordtest TR 537 ed. 4 (one CRM) adds the standard error of the mean of its
            # replicates, s/sqrt(n), to u(Cref) in quadrature
            "bias of the mean against the certified value; u(Cref) = certified standard uncertainty combined "
            f"with the standard error of the mean of the {rm.n} result(s)"))
    if "recovery" in uc.bias_from and ctx.recovery is not None:
        for lv in ctx.recovery.levels:
            bias.append(BiasEvidence(
                f"recovery at added {lv.added:g}", lv.mean_pct - 100.0, uc.spike_standard_uncertainty_pct,
                f"mean recovery - 100 %; u(Cref) = the declared standard uncertainty of the spike "
                f"({uc.spike_standard_uncertainty_pct:g} %)"))
    reported = ctx.detection.reported if ctx.detection is not None else None
    loq = None if reported is None else reported.loq
    profile = ctx.accuracy_profile
    profile_sd = {} if profile is None else {lv.nominal: lv.prediction_sd_pct for lv in profile.levels
                                             if lv.prediction_sd_pct is not None}
    result = assess_uncertainty(prec, tuple(bias), coverage_factor=uc.coverage_factor, loq=loq,
                                loq_reason="" if loq is not None else
                                (getattr(reported, "reason", "") or "no LOQ is reported"),
                                profile_sd_pct=profile_sd,
                                samples=tuple((sr.id, sr.concentration) for sr in ctx.samples))
    return Assessment(result, uncertainty_criteria(result, uc.expanded_max_pct))


def _loq_check(ctx: AnalyteContext) -> Assessment:
    check = verify_loq(ctx.detection.reported.loq, ctx.precision,
                       ctx.recovery.levels if ctx.recovery else (), ctx.config.detection.loq_rsd_max_pct)
    return Assessment(check, (loq_criterion(check),) if check.levels else ())


def _working_range(ctx: AnalyteContext) -> Assessment:
    """The range narrowed by every recovery or precision level that fails its own criteria."""
    reported = ctx.detection.reported
    levels = ctx.recovery.levels if ctx.recovery else ()
    assessed = [lv.added for lv in levels] + [lv.level for lv in ctx.precision]
    failing = ([(lv.added, "recovery") for lv in levels if not lv.passed]
               + [(lv.level, "precision") for lv in ctx.precision
                  if any(c.passed is False for c in _precision_criteria(ctx, lv))])
    wr = working_range(ctx.calibration.back_calculated, reported.loq, reported.method, failing, assessed, ctx.unit)
    return Assessment(wr, (working_range_criterion(wr, "" if reported.loq is not None else
                                                   (reported.reason or "it does not exist for these data")),))


def _comparison(ctx: AnalyteContext) -> Assessment | None:
    cd = ctx.data.comparison
    if cd is None:
        return None
    cc = ctx.config.comparison
    comparison = assess_comparison(cd.samples, cd.reference, cd.test, error_ratio=cc.error_ratio,
                                   slope_limits=cc.slope_limits, intercept_limits=cc.intercept_limits,
                                   percentage=cc.percentage_differences, alpha=ctx.alpha)
    return Assessment(comparison, comparison_criteria(comparison, cc.slope_limits, cc.intercept_limits))


def _revalidation(ctx: AnalyteContext) -> Assessment | None:
    rc = ctx.config.revalidation
    if ctx.data.previous is not None:
        reval = assess_revalidation(RunSummary.from_results(ctx.data.previous),
                                    run_summary(ctx.calibration, ctx.detection, ctx.recovery, ctx.precision),
                                    slope_change_max_pct=rc.slope_change_max_pct,
                                    residual_sd_ratio_max=rc.residual_sd_ratio_max, alpha=ctx.alpha)
        return Assessment(reval, tuple(_revalidation_criteria(reval, rc)))
    if rc is not None:       # a re-validation in which this analyte has no counterpart
        margin = rc.slope_change_max_pct
        return Assessment(None, (Criterion(
            "slope-equivalence", f"slope change inside ±{margin:g} % of the previous validation", None,
            [-margin, margin], None, "not applicable: the previous results have no analyte matching this one "
            "(map renamed analytes with [revalidation] analytes = {new = \"old\"}), so nothing was compared"),))
    return None


_CONTEXT_FIELDS = {f.name for f in fields(AnalyteContext)} - {"data", "config", "unit", "criteria", "others"}

# The characteristics in the order they are assessed: a step may read only the context fields of
# the steps above it. Its criteria appear in results.json in this order too.
REGISTRY: tuple[Characteristic, ...] = (
    Characteristic("calibration", _calibration),
    Characteristic("samples", _samples),
    Characteristic("detection", _detection),
    Characteristic("recovery", _recovery),
    Characteristic("precision", _precision),
    Characteristic("accuracy_profile", _accuracy_profile),
    Characteristic("reference_material", _reference_material),
    Characteristic("uncertainty", _uncertainty),
    Characteristic("loq_check", _loq_check),
    Characteristic("working_range", _working_range),
    Characteristic("comparison", _comparison),
    Characteristic("revalidation", _revalidation),
)


def analyse_analyte(data: AnalyteData, config, concentration_unit: str = "") -> AnalyteResult:
    """Every characteristic of :data:`REGISTRY`, in order, for one analyte."""
    ctx = AnalyteContext(data=data, config=config, unit=concentration_unit)
    for step in REGISTRY:
        done = step.assess(ctx)
        if done is None:
            continue
        criteria = ctx.criteria + tuple(done.criteria)
        if step.name in _CONTEXT_FIELDS:
            ctx = replace(ctx, **{step.name: done.result}, criteria=criteria)
        else:
            ctx = replace(ctx, others=ctx.others + ((step.name, done),), criteria=criteria)
    cal = ctx.calibration
    return AnalyteResult(name=data.name, data=data, calibration=cal, samples=ctx.samples,
                         criteria=ctx.criteria, bands=curve_bands(cal.fit),
                         residual_views=residual_series(cal.fit), detection=ctx.detection,
                         working_range=ctx.working_range, loq_check=ctx.loq_check, recovery=ctx.recovery,
                         precision=ctx.precision, reference_material=ctx.reference_material,
                         revalidation=ctx.revalidation, comparison=ctx.comparison,
                         accuracy_profile=ctx.accuracy_profile, uncertainty=ctx.uncertainty)


def _revalidation_criteria(reval, rc) -> list:
    """Slope (sensitivity) equivalence and residual SD ratio; "not applicable" when no value exists."""
    sl = reval.slope
    what = sl.quantity if sl.sensitivity_range is None else \
        f"{sl.quantity} over {sl.sensitivity_range[0]:g} to {sl.sensitivity_range[1]:g}"
    ci = sl.change_ci_pct
    level = "" if ci is None else f"{ci.label} "
    value = None if ci is None else [ci.low, ci.high]
    margin = [-rc.slope_change_max_pct, rc.slope_change_max_pct]
    slope = Criterion("slope-equivalence",
                      f"{level}CI of the {what} change inside ±{rc.slope_change_max_pct:g} % of the previous "
                      "validation", value, margin, interval_within(value, margin),
                      f"not applicable: {sl.reason}" if ci is None else sl.verdict)
    ratio = reval.residual_sd_ratio
    sd = Criterion("residual-sd-ratio", f"s(y/x) ratio current/previous at most {rc.residual_sd_ratio_max:g}",
                   ratio, rc.residual_sd_ratio_max, at_most(ratio, rc.residual_sd_ratio_max),
                   "not applicable: the previous residual SD is zero, so no ratio exists" if ratio is None else "")
    return [slope, sd]


def analyse_study(loaded: LoadedStudy) -> StudyResult:
    """Analyse every analyte of a loaded study."""
    return StudyResult(loaded=loaded,
                       analytes=tuple(analyse_analyte(a, loaded.config, loaded.config.study.concentration_unit)
                                      for a in loaded.analytes))
