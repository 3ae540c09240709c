"""Quantifying the injections of analytical runs through their run's calibration (pure).

Each run has its own calibration: its calibrator injections (level = nominal concentration,
response = area or area ratio to the internal standard) are fitted with the study's model and
weighting, and every other injection of the run (QC, spiked, unspiked, reference material,
sample, blank) is read back through that run's function. With ``pooled``, one function
fitted to the calibrators of every run quantifies every injection instead.

What a reviewer follows from here: each injection's response, the calibration it went
through (its coefficients are in :class:`RunCalibration`) and the concentration found.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..._common import quiet_numpy
from ...maths.regression import PolynomialFit, fit_polynomial

__all__ = ["RunCalibration", "QuantifiedInjection", "RunsResult", "quantify_runs"]

POOLED = "pooled"


@dataclass(frozen=True)
class RunCalibration:
    """The calibration function of one run (or of all runs pooled).

    ``intercept`` (None through the origin), ``slope`` and ``quadratic`` (None for a straight
    line) are the coefficients of y = intercept + slope x + quadratic x^2 in the data's units;
    ``low`` and ``high`` bound the calibrated range.
    """

    run: str                     # the run's label, or "pooled"
    calibrators: int
    levels: int
    intercept: float | None
    slope: float
    quadratic: float | None
    residual_sd: float
    low: float
    high: float
    fit: PolynomialFit = field(repr=False, compare=False, metadata={"json": None})


@dataclass(frozen=True)
class QuantifiedInjection:
    """One injection read back through a calibration: response -> calibration -> found.

    ``found`` is None (with ``reason``) when no concentration corresponds to the response
    (beyond the vertex of a quadratic). ``within_range`` is False for an extrapolated value.
    """

    run: str
    day: str
    sample: str
    type: str
    level: float | None
    response: float
    analyte_response: float
    internal_standard_response: float | None
    file: str
    sheet: str | None
    row: int
    calibration: str             # the run whose calibration was used, or "pooled"
    found: float | None
    within_range: bool
    reason: str = ""


@dataclass(frozen=True)
class RunsResult:
    """How one analyte's injections were quantified."""

    quantified_with: str         # "run": each run's own calibration; "pooled": one over all runs
    model: str                   # "linear", "quadratic" or "origin"
    weighting: str
    calibrations: tuple[RunCalibration, ...]
    injections: tuple[QuantifiedInjection, ...]

    def of_type(self, kind: str) -> tuple[QuantifiedInjection, ...]:
        return tuple(i for i in self.injections if i.type == kind)


def _coefficients(fit: PolynomialFit) -> tuple:
    c = fit.coefficients
    return (c["intercept"].estimate if "intercept" in c else None, c["slope"].estimate,
            c["quadratic"].estimate if "quadratic" in c else None)


def _calibration(label: str, x, y, model: str, weighting: str, alpha: float) -> RunCalibration:
    fit = fit_polynomial(x, y, model=model, weighting=weighting, alpha=alpha)
    intercept, slope, quadratic = _coefficients(fit)
    return RunCalibration(run=label, calibrators=int(x.size), levels=int(np.unique(x).size), intercept=intercept,
                          slope=slope, quadratic=quadratic, residual_sd=fit.residual_sd,
                          low=float(x.min()), high=float(x.max()), fit=fit)


def quantify_runs(injections, *, model: str, weighting: str, alpha: float, pooled: bool = False) -> RunsResult:
    """Fit each run's calibration and read every other injection back through it.

    Parameters
    ----------
    injections : sequence
        One analyte's injections, objects with the attributes of
        :class:`validator.inputs.runs.Injection` (run, day, sample, type, level, response,
        analyte_response, internal_standard_response, file, sheet, row).
    model : {"linear", "quadratic", "origin"}
        The calibration function (as chosen for the analyte's calibration).
    weighting : str
        Its weighting ("none", "1/x", "1/x^2", "1/y", "1/y^2").
    alpha : float
        The study's alpha (the fits' interval level).
    pooled : bool
        One calibration over all runs' calibrators instead of one per run.

    Notes
    -----
    For each run r, the calibrators (x = level, y = response) give f_r by (weighted) least
    squares (:func:`validator.maths.regression.fit_polynomial`); an injection of run r with
    response y0 is found at x0 with f_r(x0) = y0 (:meth:`PolynomialFit.inverse`: the straight
    line x0 = (y0 - a)/b; the quadratic's root inside the calibrated range). This is the
    usual quantification of a chromatographic run against its own bracketing calibration
    [ISO8466-1] sec. 6 (inverse prediction).

    References
    ----------
    .. [ISO8466-1] ISO 8466-1:2021, Water quality - Calibration and evaluation of analytical
       methods - Part 1: Linear calibration function.
    """
    cal = [i for i in injections if i.type == "calibrator"]
    if pooled:
        x = np.array([i.level for i in cal], float)
        y = np.array([i.response for i in cal], float)
        calibrations = (_calibration(POOLED, x, y, model, weighting, alpha),)
        used = {i.run: calibrations[0] for i in injections}
    else:
        order = list(dict.fromkeys(i.run for i in cal))
        calibrations = []
        for run in order:
            x = np.array([i.level for i in cal if i.run == run], float)
            y = np.array([i.response for i in cal if i.run == run], float)
            calibrations.append(_calibration(run, x, y, model, weighting, alpha))
        calibrations = tuple(calibrations)
        used = {c.run: c for c in calibrations}
    out = []
    for inj in injections:
        if inj.type == "calibrator":
            continue
        c = used[inj.run]
        x0, inside = c.fit.inverse(inj.response)
        reason = ""
        found = float(x0)
        if not np.isfinite(found):
            found, reason = None, ("the response lies beyond the vertex of the quadratic; no concentration "
                                   "corresponds to it")
        with quiet_numpy():
            within = found is not None and bool(inside) and c.low <= found <= c.high
        out.append(QuantifiedInjection(run=inj.run, day=inj.day, sample=inj.sample, type=inj.type, level=inj.level,
                                       response=inj.response, analyte_response=inj.analyte_response,
                                       internal_standard_response=inj.internal_standard_response, file=inj.file,
                                       sheet=inj.sheet, row=inj.row, calibration=c.run, found=found,
                                       within_range=within, reason=reason))
    return RunsResult(quantified_with=POOLED if pooled else "run", model=model, weighting=weighting,
                      calibrations=calibrations, injections=tuple(out))
