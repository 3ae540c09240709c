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

from ..._common import SourceRow, quiet_numpy
from ...maths.regression import PolynomialFit, fit_polynomial

__all__ = ["RunCalibration", "QuantifiedInjection", "RunsResult", "quantify_runs", "study_qc_found",
           "StudyQcFound", "MatrixFactorResponses", "matrix_factor_responses", "SolventCalibration",
           "solvent_calibration"]

POOLED = "pooled"
# why a blank has no found value when an internal standard is mapped (its chain in results.json says it)
NO_RATIO = ("a blank has neither analyte nor internal standard: with an internal standard its ratio analyte/IS is "
            "undefined (whatever IS area it shows), so nothing is quantified; the injection serves the checks on raw "
            "areas only (carry-over, selectivity); blank matrix with the internal standard is a zero sample")


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
    intercept: float | None = field(metadata={"omit_none": True})
    slope: float
    quadratic: float | None = field(metadata={"omit_none": True})
    residual_sd: float
    low: float
    high: float
    fit: PolynomialFit = field(repr=False, compare=False, metadata={"json": None})


@dataclass(frozen=True)
class QuantifiedInjection:
    """One injection read back through a calibration: response -> calibration -> found.

    ``found`` is None (with ``reason``) when no concentration corresponds to the response
    (beyond the vertex of a quadratic), or for a blank or matrix blank when an internal standard is
    mapped (``response`` None: the ratio is undefined). ``within_range`` is False for an extrapolated value.
    """

    run: str
    day: str
    sample: str
    type: str
    level: float | None = field(metadata={"omit_none": True})
    response: float | None
    analyte_response: float
    internal_standard_response: float | None = field(metadata={"omit_none": True})
    file: str
    sheet: str | None = field(metadata={"omit_none": True})
    row: int
    calibration: str             # the run whose calibration was used, or "pooled"
    found: float | None
    within_range: bool
    reason: str = ""
    matrix: str = field(default="", metadata={"json": None})   # spiked: its unspiked matrix's sample id
    lot: str = field(default="", metadata={"when": lambda i: bool(i.lot)})   # [columns] lot, when given
    position: float = field(default=0.0, metadata={"json": None})             # its place in the run's sequence
    condition: str = field(default="", metadata={"when": lambda i: bool(i.condition)})    # a QC's storage condition
    dilution: float | None = field(default=None, metadata={"omit_none": True})           # a diluted QC's factor
    # the sector table a QC with a lot, condition or dilution feeds instead of precision, as the runs were read
    # (validator.inputs.runs.Injection.role); "" for any other injection
    role: str = field(default="", metadata={"json": None})


@dataclass(frozen=True)
class RunsResult:
    """How one analyte's injections were quantified."""

    quantified_with: str         # "run": each run's own calibration; "pooled": one over all runs
    model: str                   # "linear", "quadratic" or "origin"
    weighting: str
    calibrations: tuple[RunCalibration, ...]
    injections: tuple[QuantifiedInjection, ...]
    # the characteristics that took their data from these injections, in registry order
    feeds: tuple[str, ...] = ()
    # the calibrator injections, read back through their calibration too (not written: the calibration
    # section lists them); with ``injections``, every injection of the sequence
    calibrators: tuple[QuantifiedInjection, ...] = field(default=(), repr=False, metadata={"json": None})

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
    out, calibrators = [], []
    for inj in injections:
        c = used[inj.run]
        if inj.response is None:
            found, inside, reason = None, False, NO_RATIO
        else:
            x0, inside = c.fit.inverse(inj.response)
            reason = ""
            found = float(x0)
            if not np.isfinite(found):
                found, reason = None, ("the response lies beyond the vertex of the quadratic; no concentration "
                                       "corresponds to it")
        with quiet_numpy():
            within = found is not None and bool(inside) and c.low <= found <= c.high
        (calibrators if inj.type == "calibrator" else out).append(QuantifiedInjection(run=inj.run, day=inj.day, sample=inj.sample, type=inj.type, level=inj.level,
                                       response=inj.response, analyte_response=inj.analyte_response,
                                       internal_standard_response=inj.internal_standard_response, file=inj.file,
                                       sheet=inj.sheet, row=inj.row, calibration=c.run, found=found,
                                       within_range=within, reason=reason, matrix=getattr(inj, "matrix", ""),
                                       lot=getattr(inj, "lot", ""), position=getattr(inj, "position", 0.0),
                                       condition=getattr(inj, "condition", ""), dilution=getattr(inj, "dilution", None),
                                       role=getattr(inj, "role", "")))
    return RunsResult(quantified_with=POOLED if pooled else "run", model=model, weighting=weighting,
                      calibrations=calibrations, injections=tuple(out), calibrators=tuple(calibrators))


# --- what the runs give the characteristics downstream ------------------------------------------

@dataclass(frozen=True)
class SpikedFound:
    """Spiked injections as recovery reads them (one entry per spiked injection, run order)."""

    added: np.ndarray = field(repr=False)
    found: np.ndarray = field(repr=False)
    native: np.ndarray = field(repr=False)
    series: tuple[str, ...] = field(repr=False)


@dataclass(frozen=True)
class QcFound:
    """QC injections as precision reads them: nominal level, run as series, found - offset.

    ``found`` is centred on the first result, the subtraction done in decimal arithmetic on the
    shortest text of each float, as for a precision file (``inputs.tables.exact_centre``).
    """

    level: np.ndarray = field(repr=False)
    series: tuple[str, ...] = field(repr=False)
    found: np.ndarray = field(repr=False)
    offset: float = 0.0
    # the labels of each factor of the [precision] design ("day", "run"), outermost first
    factors: tuple[tuple[str, ...], ...] = field(default=(), repr=False)
    # where each QC injection was read (export, sheet, row), for naming flagged results
    sources: tuple[SourceRow, ...] = field(default=(), repr=False)


@dataclass(frozen=True)
class RunSample:
    """A sample's readings in one run, with the run's calibration function that quantifies them."""

    id: str
    responses: tuple[float, ...]
    rows: tuple[int, ...]
    calibration: PolynomialFit = field(repr=False, compare=False)


def _usable(result: RunsResult, kind: str) -> tuple[QuantifiedInjection, ...]:
    """Injections of ``kind`` with a found value (one without is listed with its reason in the result)."""
    return tuple(i for i in result.of_type(kind) if i.found is not None)


def spiked_found(result: RunsResult) -> SpikedFound | None:
    """Recovery's data: added = the spiked injection's level, found, native = the mean found of its
    run's unspiked injections of the same matrix (0 without one), series = the run.

    ``injections`` must carry ``matrix`` (see :func:`validator.inputs.runs.read_runs`).
    """
    spiked = _usable(result, "spiked")
    if not spiked:
        return None
    unspiked = _usable(result, "unspiked")
    native = []
    for inj in spiked:
        matrix = getattr(inj, "matrix", "")
        values = [u.found for u in unspiked if u.run == inj.run and u.sample == matrix]
        native.append(float(np.mean(values)) if values else 0.0)
    return SpikedFound(added=np.array([i.level for i in spiked], float), found=np.array([i.found for i in spiked]),
                       native=np.array(native), series=tuple(i.run for i in spiked))


def qc_found(result: RunsResult, design: tuple = ()) -> QcFound | None:
    """Precision's data: one result per QC injection, the run as its series.

    With a nested ``design`` (factor names "day" and/or "run"), each factor's labels come from
    the injections, and the series is the innermost unit (labels joined, "day / run").
    """
    qc = tuple(i for i in _usable(result, "qc") if not i.role)
    if not qc:
        return None
    from decimal import Decimal

    values = [Decimal(repr(i.found)) for i in qc]
    factors = tuple(tuple(getattr(i, name) for i in qc) for name in design)
    series = tuple(" / ".join(path) for path in zip(*factors)) if design else tuple(i.run for i in qc)
    return QcFound(level=np.array([i.level for i in qc], float), series=series,
                   found=np.array([float(v - values[0]) for v in values]), offset=float(values[0]),
                   factors=factors, sources=tuple(SourceRow(i.file, i.sheet, i.row) for i in qc))


@dataclass(frozen=True)
class StudyQcFound:
    """The found values of the QC injections of one sector study (matrix lots, stability or dilution):
    each QC's label (its lot, condition or dilution factor), nominal level and found value, in run order."""

    labels: tuple[str | float, ...] = field(repr=False)
    nominal: np.ndarray = field(repr=False)
    found: np.ndarray = field(repr=False)


def study_qc_found(result: RunsResult, table: str) -> StudyQcFound | None:
    """The QC injections that feed the sector ``table`` ("matrix_effect", "stability", "dilution_integrity":
    their ``role``, decided when the runs were read) with a found value; ``None`` without any. Such QCs feed
    their sector table only, never precision.

    The found value is the concentration read back through the QC's run calibration, before any dilution
    factor (dilution integrity multiplies it)."""
    qc = [i for i in _usable(result, "qc") if i.role == table]
    if not qc:
        return None
    attribute = {"matrix_effect": "lot", "stability": "condition", "dilution_integrity": "dilution"}[table]
    return StudyQcFound(tuple(getattr(i, attribute) for i in qc), np.array([i.level for i in qc], float),
                        np.array([i.found for i in qc], float))


@dataclass(frozen=True)
class MatrixFactorResponses:
    """The matrix factor's raw responses from the runs: each post_extraction injection's lot, analyte and IS
    areas, and the neat injections' (run order). Areas, never ratios: the factor compares the detector's
    response with and without matrix, for the analyte and the IS each."""

    lots: tuple[str, ...] = field(repr=False)
    analyte: np.ndarray = field(repr=False)
    internal_standard: np.ndarray = field(repr=False)
    neat_analyte: np.ndarray = field(repr=False)
    neat_internal_standard: np.ndarray = field(repr=False)


def matrix_factor_responses(result: RunsResult) -> MatrixFactorResponses | None:
    """The post_extraction and neat injections' areas (:class:`MatrixFactorResponses`); ``None`` without a
    post_extraction injection. Their level was checked when the runs were read (one per analyte, the
    neat injections at it: :func:`validator.inputs.runs.read_runs`)."""
    spiked = result.of_type("post_extraction")
    if not spiked:
        return None
    neat = result.of_type("neat")
    return MatrixFactorResponses(tuple(i.lot for i in spiked), np.array([i.analyte_response for i in spiked], float),
                                 np.array([i.internal_standard_response for i in spiked], float),
                                 np.array([i.analyte_response for i in neat], float),
                                 np.array([i.internal_standard_response for i in neat], float))


@dataclass(frozen=True)
class SolventCalibration:
    """The solvent calibration of the slope ratio from the runs: the solvent_calibrator injections' levels
    and responses (area, or ratio to the IS as for the matrix-matched calibrators), all runs together."""

    concentration: np.ndarray = field(repr=False)
    response: np.ndarray = field(repr=False)


def solvent_calibration(result: RunsResult) -> SolventCalibration | None:
    """The solvent_calibrator injections of every run (:class:`SolventCalibration`); ``None`` without any."""
    solvent = result.of_type("solvent_calibrator")
    if not solvent:
        return None
    return SolventCalibration(np.array([i.level for i in solvent], float), np.array([i.response for i in solvent], float))


def reference_found(result: RunsResult) -> np.ndarray | None:
    """Reference material's data: the found value of each reference-material injection."""
    ref = _usable(result, "reference")
    return np.array([i.found for i in ref]) if ref else None


def run_samples(result: RunsResult) -> tuple[RunSample, ...]:
    """Each sample's readings in a run, to be quantified through that run's calibration.

    A sample's readings in one run are one result (their mean response read back, with s(x0), as
    for the samples file); a sample measured in several runs gives one result per run, labelled
    "id (run)".
    """
    used = {c.run: c for c in result.calibrations}
    groups: dict = {}
    for inj in result.of_type("sample"):
        groups.setdefault((inj.sample, inj.run), []).append(inj)
    runs_of: dict = {}
    for sample, run in groups:
        runs_of.setdefault(sample, []).append(run)
    out = []
    for (sample, run), injections in groups.items():
        label = sample if len(runs_of[sample]) == 1 else f"{sample} ({run})"
        out.append(RunSample(label, tuple(i.response for i in injections), tuple(i.row for i in injections),
                             used[injections[0].calibration].fit))
    return tuple(out)
