"""Dilution integrity judged (ICH M10): diluted over-range QCs, accuracy and CV after the factor."""

from __future__ import annotations

from dataclasses import dataclass

from ...criteria import Criterion
from ...sector._shared import number_id
from ...sector.bioanalytical import DilutionIntegrity, dilution_integrity

__all__ = ["DilutionResult", "assess_dilution", "dilution_criteria"]


@dataclass(frozen=True)
class DilutionResult:
    levels: tuple[DilutionIntegrity, ...]       # one per (factor, nominal), in order of appearance
    # "file" (the [dilution_integrity] data file) or "runs" (the QC injections of [[runs]] with a dilution
    # factor; found = read back through the run's calibration, before the factor)
    data_from: str = "file"


def assess_dilution(data, *, max_bias_pct: float, max_cv_pct: float, min_replicates: int) -> DilutionResult:
    """One :func:`validator.sector.bioanalytical.dilution_integrity` per (dilution factor, nominal)."""
    pairs = dict.fromkeys(zip(data.factor.tolist(), data.nominal.tolist()))
    return DilutionResult(tuple(
        dilution_integrity(data.found[(data.factor == f) & (data.nominal == nom)], f, nom, max_bias_percent=max_bias_pct,
                           max_cv_percent=max_cv_pct, min_replicates=min_replicates) for f, nom in pairs))


def dilution_criteria(result: DilutionResult) -> tuple[Criterion, ...]:
    """Per factor and nominal: ``dilution-accuracy-<factor>x-<nominal>`` (bias within ±max_bias_pct) and
    ``dilution-cv-<factor>x-<nominal>`` (CV at most max_cv_pct), judged apart: both not applicable with too
    few replicates; the CV alone when it is undefined (zero mean) or shows no spread (SD 0)."""
    out = []
    for lv in result.levels:
        tag = f"{number_id(lv.dilution_factor)}x-{number_id(lv.nominal)}"
        level_note = f"not applicable: {lv.reason}" if lv.accuracy_passed is None else ""
        cv_note = level_note or (f"not applicable: {lv.cv_reason}" if lv.cv_passed is None else "")
        out.append(Criterion(f"dilution-accuracy-{tag}",
                             f"dilution ×{lv.dilution_factor:g} of nominal {lv.nominal:g}: mean bias after the factor "
                             f"within ±{lv.max_bias_percent:g} %", lv.bias_percent,
                             [-lv.max_bias_percent, lv.max_bias_percent], lv.accuracy_passed, level_note))
        out.append(Criterion(f"dilution-cv-{tag}", f"dilution ×{lv.dilution_factor:g} of nominal {lv.nominal:g}: CV at "
                             f"most {lv.max_cv_percent:g} %", lv.cv_percent, lv.max_cv_percent, lv.cv_passed, cv_note))
    return tuple(out)
