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
from .calibration import CalibrationResult, SampleResult, analyse_calibration, quantify
from .criteria import Criterion, calibration_criteria, overall_verdict
from .loading import AnalyteData, LoadedStudy

__all__ = ["AnalyteResult", "StudyResult", "CurveBands", "ResidualSeries", "analyse_study", "curve_bands",
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
class ResidualSeries:
    """Residual views for the dossier plots.

    Relative residual = 100 e_i / yhat_i (undefined where yhat_i = 0).
    Q-Q: ordered weight-scaled residuals against normal quantiles with
    Filliben's plotting positions, and the least-squares line through them,
    as scipy.stats.probplot computes them.
    """

    relative_x: tuple
    relative_pct: tuple
    qq_theoretical: tuple
    qq_ordered: tuple
    qq_line: tuple | None      # (intercept, slope)


def residual_series(fit) -> ResidualSeries:
    yhat = fit.predict(fit.x)
    keep = np.abs(yhat) > 0
    rel = 100.0 * fit.residuals[keep] / yhat[keep]
    with quiet_numpy():
        (osm, osr), (slope, intercept, _) = stats.probplot(fit.weighted_residuals, dist="norm")
    line = (float(intercept), float(slope)) if np.isfinite(slope) and not fit.exact else None
    return ResidualSeries(tuple(map(float, fit.x[keep])), tuple(map(float, rel)),
                          tuple(map(float, osm)), tuple(map(float, osr)), line)


@dataclass(frozen=True)
class AnalyteResult:
    name: str
    data: AnalyteData = field(repr=False)
    calibration: CalibrationResult = field(repr=False)
    samples: tuple               # SampleResult
    criteria: tuple              # Criterion
    bands: CurveBands = field(repr=False)
    residual_views: ResidualSeries = field(repr=False)

    @property
    def verdict(self) -> str:
        return overall_verdict(self.criteria)


@dataclass(frozen=True)
class StudyResult:
    loaded: LoadedStudy = field(repr=False)
    analytes: tuple

    @property
    def criteria(self):
        return tuple(c for a in self.analytes for c in a.criteria)

    @property
    def verdict(self) -> str:
        return overall_verdict(self.criteria)


def analyse_analyte(data: AnalyteData, config) -> AnalyteResult:
    cal_cfg, crit = config.calibration, config.criteria
    cal = analyse_calibration(
        data.calibration.concentration, data.calibration.response,
        model=cal_cfg.model, weighting=cal_cfg.weighting, through_origin=cal_cfg.through_origin,
        alpha=crit.alpha, tolerance_pct=crit.back_calculation_tolerance_pct,
        lowest_tolerance_pct=crit.lowest_level_tolerance_pct)
    samples = tuple(quantify(cal.fit, s.id, s.responses) for s in data.samples)
    return AnalyteResult(name=data.name, data=data, calibration=cal, samples=samples,
                         criteria=calibration_criteria(cal, crit), bands=curve_bands(cal.fit),
                         residual_views=residual_series(cal.fit))


def analyse_study(loaded: LoadedStudy) -> StudyResult:
    """Analyse every analyte of a loaded study."""
    return StudyResult(loaded=loaded,
                       analytes=tuple(analyse_analyte(a, loaded.config) for a in loaded.analytes))
