"""The analysis engine: loaded study in, judged results out. No I/O.

For every analyte it runs each assessed characteristic, judges the criteria
and precomputes what the dossier plots need (fitted curve and bands), so
that the rendering layer only draws and formats.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Any, TypeVar

import numpy as np

from . import registry
from ._common import quiet_numpy
from .characteristics import calibration
from .characteristics._entry import Assessment, Characteristic
from .characteristics.calibration import CalibrationResult
from .characteristics.precision import PrecisionLevel, PrecisionResult
from .characteristics.runs import SECTOR_READS, RunsResult
from .criteria import Criterion, overall_verdict
from .inputs.loading import AnalyteData, LoadedStudy
from .maths.normality import probability_plot
from .sector.presets import missing_requirements, requirement_criterion_note

if TYPE_CHECKING:
    from .inputs.study import StudyConfig

__all__ = ["AnalyteResult", "StudyResult", "CurveBands", "ResidualSeries", "StraightLine", "AnalyteContext",
           "Assessment", "Characteristic", "analyse_analyte", "analyse_study", "curve_bands", "residual_series"]

R = TypeVar("R")


def __getattr__(name):
    if name == "REGISTRY":       # the registry lives in validator.registry
        return registry.REGISTRY
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


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
    as scipy.stats.probplot computes them (:func:`validator.maths.normality.probability_plot`).
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
        plot = probability_plot(fit.weighted_residuals)
    line = StraightLine(plot.intercept, plot.slope) if np.isfinite(plot.slope) and not fit.exact else None
    return ResidualSeries(tuple(map(float, fit.x[keep])), tuple(map(float, rel)),
                          tuple(map(float, plot.theoretical)), tuple(map(float, plot.ordered)), line)


@dataclass(frozen=True)
class AnalyteResult:
    name: str
    data: AnalyteData = field(repr=False)
    calibration: CalibrationResult = field(repr=False)       # the result of the registry's first entry
    criteria: tuple[Criterion, ...]
    bands: CurveBands = field(repr=False)
    residual_views: ResidualSeries = field(repr=False)
    # (name, result) of every assessed characteristic, in registry order
    results: tuple[tuple[str, Any], ...] = ()

    def result_of(self, entry: Characteristic[R]) -> R | None:
        """The result of ``entry`` for this analyte, or ``None`` when it was not assessed."""
        return _result(self, entry.name)

    @property
    def precision(self) -> tuple[PrecisionLevel, ...]:
        """The precision levels (empty when precision was not assessed)."""
        return _precision_levels(self)

    @property
    def characteristics(self) -> tuple:
        """The names of the characteristics assessed (results.json ``characteristics_assessed``): those
        results.json always listed, in its order, then the others in registry order."""
        out = ["calibration", "detection", "working_range"]
        out += [name for name in _LISTED_WHEN_ASSESSED if _result(self, name)]
        inside = {e.name for e in registry.REGISTRY if e.json_path}      # listed with the section holding it
        return tuple(out) + tuple(name for name, _ in self.results
                                  if name not in out and name not in _LISTED_WHEN_ASSESSED and name not in inside)

    @property
    def verdict(self) -> str:
        return overall_verdict(self.criteria)


# results.json's characteristics_assessed: calibration, detection and working range always, then these
# (in this order) when they have a result for the analyte, then any other characteristic in registry order
_LISTED_WHEN_ASSESSED = ("samples", "recovery", "precision", "reference_material", "revalidation", "comparison")


def _precision_levels(holder) -> tuple[PrecisionLevel, ...]:
    found: PrecisionResult | None = _result(holder, "precision")
    return () if found is None else found.levels


def _result(holder, name: str):
    for entry, result in holder.results:
        if entry == name:
            return result
    return None


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

    A characteristic reads its own data with ``ctx.data_of(ENTRY)``, its own study-file
    table with ``ctx.settings_of(ENTRY)`` and the result of one above it in the registry with
    ``ctx.result_of(OTHER_ENTRY)`` (``None`` when that one was not assessed). ``config`` is the
    configuration this analyte is judged with: the study's, with its ``[analyte_settings.<analyte>]``
    tables applied (:mod:`validator.inputs.analyte_settings`), so ``settings_of`` and
    ``config.criteria`` give the analyte's own values; ``alpha`` is the study's. ``unit`` is the
    analyte's concentration unit (``[study] concentration_unit``, or its own in
    ``[analyte_settings.<analyte>.study]``).
    """

    data: AnalyteData
    config: StudyConfig
    unit: str = ""
    criteria: tuple[Criterion, ...] = ()
    # (name, result) of every assessed characteristic, in registry order
    results: tuple[tuple[str, Any], ...] = ()

    @property
    def alpha(self) -> float:
        return self.config.criteria.alpha

    @property
    def precision(self) -> tuple[PrecisionLevel, ...]:
        """The precision levels assessed so far (empty before precision or without it)."""
        return _precision_levels(self)

    def result_of(self, entry: Characteristic[R]) -> R | None:
        """The result of ``entry`` (assessed above this step), or ``None`` when it was not assessed."""
        return _result(self, entry.name)

    def data_of(self, entry: Characteristic) -> Any:
        """This analyte's data as ``entry.load`` read them (``None``: the analyte has none)."""
        return self.data.of(entry.name)

    def settings_of(self, entry: Characteristic) -> Any:
        """``entry``'s table of the study file (``None`` when the study has none)."""
        return getattr(self.config, entry.name, None)

    def with_result(self, name: str, done: Assessment) -> "AnalyteContext":
        """This context with ``done``'s result held under ``name`` and its criteria added."""
        criteria = self.criteria + tuple(done.criteria)
        return replace(self, results=self.results + ((name, done.result),), criteria=criteria)


def _declared_without_data(step: Characteristic, ctx: AnalyteContext) -> Criterion | None:
    """A not-applicable criterion when the study declares ``step``'s table but this analyte has
    no data for it: the analyte's validation is then incomplete, never silently shorter."""
    settings = ctx.settings_of(step)
    if not step.judges or step.load is None or settings is None:
        return None
    if getattr(settings, "analyte", None) not in (None, ctx.data.name):
        return None             # the table is for another analyte (a reference material certified for one)
    data = ctx.data_of(step)
    reads_runs = (bool(step.runs_reads) and step.name in SECTOR_READS
                  and getattr(settings, SECTOR_READS[step.name][0], None) is None)
    if data is not None and not (reads_runs and isinstance(data, RunsResult)):
        return None
    if reads_runs:          # no file of its own: the runs gave none of what it reads (or nothing with a found value)
        return Criterion(f"{step.name}-data", f"{step.title}: data for this analyte", None, None, None,
                         f"not applicable: the study declares [{step.name}] to read the runs, but the runs of "
                         f'analyte "{ctx.data.name}" have no {step.runs_reads}, so it was not assessed for this '
                         "analyte")
    return Criterion(f"{step.name}-data", f"{step.title}: data for this analyte", None, None, None,
                     f"not applicable: the study declares [{step.name}], but its data have no rows for "
                     f'analyte "{ctx.data.name}", so it was not assessed for this analyte')


def analyse_analyte(data: AnalyteData, config, concentration_unit: str = "") -> AnalyteResult:
    """Every characteristic of :data:`validator.registry.REGISTRY`, in order, for one analyte."""
    ctx = AnalyteContext(data=data, config=config, unit=concentration_unit)
    for step in registry.REGISTRY:
        done = step.assess(ctx)
        if done is not None:
            ctx = ctx.with_result(step.name, done)
            if done.provides:
                ctx = replace(ctx, data=ctx.data.with_entries(done.provides))
        elif (gap := _declared_without_data(step, ctx)) is not None:
            ctx = replace(ctx, criteria=ctx.criteria + (gap,))
    # what the guideline preset requires and this analyte does not show: not applicable, never passed
    guideline = config.study.guideline
    for req in missing_requirements(guideline, (name for name, result in ctx.results if result is not None)):
        ctx = replace(ctx, criteria=ctx.criteria + (Criterion(
            f"guideline-requires-{req.characteristic.replace('_', '-')}",
            f"{req.what}: required by the guideline preset {guideline}", None, None, None,
            requirement_criterion_note(guideline, req)),))
    cal = ctx.result_of(calibration.ENTRY)
    return AnalyteResult(name=data.name, data=ctx.data, calibration=cal,
                         criteria=ctx.criteria, bands=curve_bands(cal.fit),
                         residual_views=residual_series(cal.fit), results=ctx.results)


def analyse_study(loaded: LoadedStudy, on_analyte=None) -> StudyResult:
    """Analyse every analyte of a loaded study, each with its own settings ([analyte_settings]);
    ``on_analyte(done, total)``, if given, after each one (the command line's progress display)."""
    analytes = []
    for a in loaded.analytes:
        config = loaded.study.config_for(a.name)       # its units too: [analyte_settings.<analyte>.study]
        analytes.append(analyse_analyte(a, config, config.study.concentration_unit))
        if on_analyte is not None:
            on_analyte(len(analytes), len(loaded.analytes))
    return StudyResult(loaded=loaded, analytes=tuple(analytes))
