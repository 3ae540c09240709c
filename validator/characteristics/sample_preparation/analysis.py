"""Results in the reporting unit: the concentration found, times the preparation factor (pure)."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from ..._common import ConfidenceInterval

__all__ = ["ReportedSample", "ReportingResult", "report_samples"]


@dataclass(frozen=True)
class ReportedSample:
    """One sample's result in the reporting unit, with the factor chain that gives it.

    ``factor`` = dilution_factor x final_volume / aliquot (x 1 without aliquot and final volume);
    ``value``, ``std_error`` and ``ci`` are the measured concentration's x0, s(x0) and interval
    times ``factor``. ``chain`` writes the multiplication out for the audit trail.
    """

    id: str
    measured: float | None
    dilution_factor: float
    aliquot: float | None = field(metadata={"omit_none": True})
    final_volume: float | None = field(metadata={"omit_none": True})
    factor: float
    value: float | None
    std_error: float | None
    ci: ConfidenceInterval = field(metadata={"interval": "pair"})
    within_range: bool
    chain: str
    reason: str = ""


@dataclass(frozen=True)
class ReportingResult:
    """Every sample of an analyte in the reporting unit."""

    unit: str
    samples: tuple[ReportedSample, ...]


def _finite(v) -> float | None:
    return float(v) if v is not None and math.isfinite(v) else None


def report_samples(samples, *, unit: str, measured_unit: str, preparation_of) -> ReportingResult:
    """Each sample result (x0, s(x0), interval) times its preparation factor.

    Parameters
    ----------
    samples : sequence of SampleResult
        The analyte's samples as quantified (id, concentration, std_error, ci, within_range, reason).
    unit, measured_unit : str
        The reporting unit and the calibration's concentration unit (for the chain's text).
    preparation_of : callable
        Sample id -> (dilution_factor, aliquot or None, final_volume or None).

    Notes
    -----
    w = x0 · D · V / m with D the dilution factor, V the final volume and m the aliquot. The
    factor c = D · V / m is taken as exact, so Var(c x0) = c² Var(x0): s(w) = c · s(x0), and the
    interval's bounds scale by c. The uncertainties of D, V and m themselves are not propagated
    here; they belong to the laboratory's uncertainty budget.
    """
    out = []
    for s in samples:
        dilution, aliquot, final_volume = preparation_of(s.id)
        factor = dilution * (final_volume / aliquot if aliquot is not None else 1.0)
        x0 = _finite(s.concentration)
        value = None if x0 is None else x0 * factor
        se = _finite(s.std_error)
        ci = ConfidenceInterval(s.ci.low * factor, s.ci.high * factor, s.ci.level)
        steps = [f"dilution factor {dilution:g}"]
        if aliquot is not None:
            steps.append(f"final volume {final_volume:g} / aliquot {aliquot:g}")
        chain = (f"{'n/a' if x0 is None else format(x0, '.6g')} {measured_unit} × " + " × ".join(steps)
                 + f" = {'n/a' if value is None else format(value, '.6g')} {unit}")
        out.append(ReportedSample(id=s.id, measured=x0, dilution_factor=float(dilution), aliquot=aliquot,
                                  final_volume=final_volume, factor=float(factor), value=value,
                                  std_error=None if se is None else se * factor, ci=ci,
                                  within_range=s.within_range, chain=chain, reason=s.reason))
    return ReportingResult(unit=unit, samples=tuple(out))
