"""The analysis engine: loaded study in, judged results out. No I/O.

For every analyte it runs each assessed characteristic, judges the criteria
and precomputes what the dossier plots need (fitted curve and bands), so
that the rendering layer only draws and formats.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import stats
from ._common import quiet_numpy
from .characteristics.calibration import CalibrationResult, SampleResult, analyse_calibration, quantify
from .criteria import (at_most, calibration_criteria, comparison_criteria, interval_within, loq_criterion,
                       overall_verdict, precision_level_criteria, recovery_criteria, reference_material_criterion,
                       working_range_criterion)
from .characteristics.detection import DetectionResult, assess_detection
from .characteristics.precision import PrecisionLevel, assess_precision_level
from .characteristics.recovery import (RecoveryResult, ReferenceMaterialResult, assess_recovery,
                                       assess_reference_material)
from .characteristics.comparison import ComparisonResult, assess_comparison
from .criteria import Criterion
from .characteristics.revalidation import RevalidationResult, RunSummary, assess_revalidation, run_summary
from .characteristics.working_range import LoqCheck, WorkingRange, verify_loq, working_range
from .inputs.loading import AnalyteData, LoadedStudy

__all__ = ["AnalyteResult", "StudyResult", "CurveBands", "ResidualSeries", "StraightLine", "analyse_study", "curve_bands",
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


def analyse_analyte(data: AnalyteData, config, concentration_unit: str = "") -> AnalyteResult:
    cal_cfg, crit, det = config.calibration, config.criteria, config.detection
    alpha = crit.alpha
    cal = analyse_calibration(
        data.calibration.concentration, data.calibration.response,
        model=cal_cfg.model, weighting=cal_cfg.weighting, through_origin=cal_cfg.through_origin,
        alpha=alpha, tolerance_pct=crit.back_calculation_tolerance_pct,
        lowest_tolerance_pct=crit.lowest_level_tolerance_pct)
    samples = tuple(quantify(cal.fit, s.id, s.responses) for s in data.samples)
    criteria = list(calibration_criteria(cal, crit))
    detection = assess_detection(cal, data.blanks, lod_factor=det.lod_factor, loq_factor=det.loq_factor,
                                 readings_per_sample=det.readings_per_sample, beta=det.beta, alpha=alpha,
                                 reporting_method=det.reporting_basis)
    recovery = precision = rm = None
    failing, assessed = [], []
    if data.recovery is not None:
        r = data.recovery
        recovery = assess_recovery(r.added, r.found, r.native, alpha=alpha,
                                   range_for=config.recovery.range_for)
        criteria += recovery_criteria(recovery)
        assessed += [lv.added for lv in recovery.levels]
        failing += [(lv.added, "recovery") for lv in recovery.levels if not lv.passed]
    if data.precision is not None:
        p = data.precision
        precision = tuple(
            assess_precision_level(level, p.found[p.level == level],
                                   [s for s, lv in zip(p.series, p.level) if lv == level],
                                   alpha=alpha, unit=concentration_unit, offset=p.offset)
            for level in np.unique(p.level))
        for lv in precision:
            crits = precision_level_criteria(lv, config.precision.limits_for(lv.level))
            criteria += crits
            assessed.append(lv.level)
            if any(c.passed is False for c in crits):
                failing.append((lv.level, "precision"))
    if data.reference_material is not None:
        rmc = config.reference_material
        rm = assess_reference_material(data.reference_material, rmc.certified_value,
                                       rmc.standard_uncertainty, k=rmc.coverage_factor,
                                       measurement_uncertainty=rmc.measurement_standard_uncertainty)
        criteria.append(reference_material_criterion(rm))
    reported = detection.reported
    loq_check = verify_loq(reported.loq, precision or (), recovery.levels if recovery else (),
                           det.loq_rsd_max_pct)
    if loq_check.levels:
        criteria.append(loq_criterion(loq_check))
    wr = working_range(cal.back_calculated, reported.loq, reported.method, failing, assessed,
                       concentration_unit)
    criteria.append(working_range_criterion(wr, "" if reported.loq is not None else
                                            (reported.reason or "it does not exist for these data")))
    comparison = reval = None
    if data.comparison is not None:
        cc = config.comparison
        cd = data.comparison
        comparison = assess_comparison(cd.samples, cd.reference, cd.test, error_ratio=cc.error_ratio, slope_limits=cc.slope_limits,
                                       intercept_limits=cc.intercept_limits,
                                       percentage=cc.percentage_differences, alpha=alpha)
        criteria += comparison_criteria(comparison, cc.slope_limits, cc.intercept_limits)
    if data.previous is not None:
        rc = config.revalidation
        reval = assess_revalidation(RunSummary.from_results(data.previous),
                                    run_summary(cal, detection, recovery, precision or ()),
                                    slope_change_max_pct=rc.slope_change_max_pct,
                                    residual_sd_ratio_max=rc.residual_sd_ratio_max, alpha=alpha)
        criteria += _revalidation_criteria(reval, rc)
    elif config.revalidation is not None:       # a re-validation in which this analyte has no counterpart
        margin = config.revalidation.slope_change_max_pct
        criteria.append(Criterion(
            "slope-equivalence", f"slope change inside ±{margin:g} % of the previous validation", None,
            [-margin, margin], None, "not applicable: the previous results have no analyte matching this one "
            "(map renamed analytes with [revalidation] analytes = {new = \"old\"}), so nothing was compared"))
    return AnalyteResult(name=data.name, data=data, calibration=cal, samples=samples,
                         criteria=tuple(criteria), bands=curve_bands(cal.fit),
                         residual_views=residual_series(cal.fit), detection=detection,
                         working_range=wr, loq_check=loq_check, recovery=recovery,
                         precision=precision or (), reference_material=rm, revalidation=reval,
                         comparison=comparison)


def _revalidation_criteria(reval, rc) -> list:
    """Slope (sensitivity) equivalence and residual SD ratio; "not applicable" when no value exists."""
    sl = reval.slope
    what = sl.quantity if sl.sensitivity_range is None else \
        f"{sl.quantity} over {sl.sensitivity_range[0]:g} to {sl.sensitivity_range[1]:g}"
    ci = sl.change_ci_pct
    level = "" if ci is None else f"{100 * ci.level:g} % "
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
