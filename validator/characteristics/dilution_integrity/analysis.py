"""Dilution integrity judged (ICH M10): diluted over-range QCs, accuracy and CV after the factor."""

from __future__ import annotations

from dataclasses import dataclass

from ...criteria import Criterion
from ...sector.bioanalytical import DilutionIntegrity, dilution_integrity

__all__ = ["DilutionResult", "assess_dilution", "dilution_criteria"]


@dataclass(frozen=True)
class DilutionResult:
    levels: tuple[DilutionIntegrity, ...]       # one per (factor, nominal), in order of appearance


def assess_dilution(data, *, max_bias_pct: float, max_cv_pct: float, min_replicates: int) -> DilutionResult:
    """One :func:`validator.sector.bioanalytical.dilution_integrity` per (dilution factor, nominal)."""
    pairs = dict.fromkeys(zip(data.factor.tolist(), data.nominal.tolist()))
    return DilutionResult(tuple(
        dilution_integrity(data.found[(data.factor == f) & (data.nominal == nom)], f, nom, max_bias_percent=max_bias_pct,
                           max_cv_percent=max_cv_pct, min_replicates=min_replicates) for f, nom in pairs))


def dilution_criteria(result: DilutionResult) -> tuple[Criterion, ...]:
    """Per factor and nominal: ``dilution-accuracy-<factor>x-<nominal>`` (bias within ±max_bias_pct) and
    ``dilution-cv-<factor>x-<nominal>`` (CV at most max_cv_pct); not applicable with too few replicates."""
    out = []
    for lv in result.levels:
        tag = f"{lv.dilution_factor:g}x-{lv.nominal:g}"
        judged = lv.passed is not None
        note = "" if judged else f"not applicable: {lv.reason}"
        out.append(Criterion(f"dilution-accuracy-{tag}",
                             f"dilution ×{lv.dilution_factor:g} of nominal {lv.nominal:g}: mean bias after the factor "
                             f"within ±{lv.max_bias_percent:g} %", lv.bias_percent,
                             [-lv.max_bias_percent, lv.max_bias_percent],
                             None if not judged else abs(lv.bias_percent) <= lv.max_bias_percent, note))
        out.append(Criterion(f"dilution-cv-{tag}", f"dilution ×{lv.dilution_factor:g} of nominal {lv.nominal:g}: CV at "
                             f"most {lv.max_cv_percent:g} %", lv.cv_percent, lv.max_cv_percent,
                             None if not judged else lv.cv_percent <= lv.max_cv_percent, note))
    return tuple(out)
