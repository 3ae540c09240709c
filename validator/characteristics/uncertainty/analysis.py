"""Measurement uncertainty, top-down from the validation data (Nordtest TR 537 ed. 4).

u(Rw) per level from the intermediate precision, u(bias) from the reference material and/or
the recovery levels, combined and expanded with the stated coverage factor, relative and
absolute; beside it, when the accuracy profile is computed, the standard deviation its
tolerance intervals are built on. Pure: plain values in, frozen dataclasses out.

References
----------
.. [Nordtest] Magnusson, B., Naeykki, T., Hovind, H., Krysell, M. and Sahlin, E. (2017).
   Handbook for calculation of measurement uncertainty in environmental laboratories,
   Nordtest TR 537 ed. 4: u(Rw); u(bias) = sqrt(RMS_bias^2 + u(Cref)^2);
   u_c = sqrt(u(Rw)^2 + u(bias)^2); U = k u_c.
.. [Eurachem] Eurachem/CITAC Guide CG 4, Quantifying Uncertainty in Analytical Measurement,
   3rd ed. (2012), use of validation data.
.. [Feinberg] Feinberg, M., Boulanger, B., Dewe, W. and Hubert, Ph. (2004). New advances in
   method validation and measurement uncertainty aimed at improving the quality of chemical
   data. Anal. Bioanal. Chem. 380, 502-514 (uncertainty from the accuracy profile).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from ...criteria import Criterion, at_most
from ...maths.uncertainty import UncertaintyComponent, bias_uncertainty, combined_uncertainty

__all__ = ["BiasEvidence", "PrecisionInput", "BudgetLevel", "SampleUncertainty", "UncertaintyResult",
           "assess_uncertainty", "sample_uncertainty", "uncertainty_criteria"]


@dataclass(frozen=True)
class BiasEvidence:
    """One bias estimate entering RMS_bias, relative to its reference value (%)."""

    source: str
    bias_pct: float
    reference_uncertainty_pct: float
    basis: str


@dataclass(frozen=True)
class PrecisionInput:
    """What the budget takes from one precision level (not written to results.json)."""

    level: float
    rsd_pct: float | None
    source: str
    reason: str = ""


@dataclass(frozen=True)
class BudgetLevel:
    """The budget at one concentration (a precision level, or the LOQ). Relative values in %."""

    concentration: float
    basis: str
    u_rw_pct: float | None
    u_rw_source: str
    u_bias_pct: float | None
    combined_pct: float | None
    expanded_pct: float | None
    combined: float | None
    expanded: float | None
    # the accuracy profile's standard deviation of the tolerance interval at this level, and k times it
    profile_standard_pct: float | None = field(default=None, metadata={"omit_none": True})
    profile_expanded_pct: float | None = field(default=None, metadata={"omit_none": True})
    reason: str = ""


@dataclass(frozen=True)
class SampleUncertainty:
    """A sample result reported as x ± U, U relative from the budget levels (``basis`` says how)."""

    id: str
    concentration: float | None
    expanded_pct: float | None
    expanded: float | None
    basis: str
    reason: str = ""


@dataclass(frozen=True)
class UncertaintyResult:
    coverage_factor: float
    bias_evidence: tuple[BiasEvidence, ...]
    rms_bias_pct: float | None
    reference_uncertainty_pct: float | None
    u_bias_pct: float | None
    levels: tuple[BudgetLevel, ...]
    at_loq: BudgetLevel | None = field(metadata={"null_reason": "loq_reason"})
    basis: str
    samples: tuple[SampleUncertainty, ...] = ()
    loq_reason: str = field(default="", metadata={"json": None})
    reason: str = ""


def sample_uncertainty(sample_id: str, concentration, levels: tuple[BudgetLevel, ...]) -> SampleUncertainty:
    """U of one sample result: the relative U joined linearly between the two budget levels around it,
    or the nearest level's outside them (no extrapolation); absolute U = relative U × concentration."""
    usable = sorted((lv.concentration, lv.expanded_pct) for lv in levels if lv.expanded_pct is not None
                    and lv.concentration > 0)
    if concentration is None or not math.isfinite(concentration):
        return SampleUncertainty(sample_id, None, None, None, "", "the sample has no concentration")
    if not usable:
        return SampleUncertainty(sample_id, float(concentration), None, None, "",
                                 "no budget level has an expanded uncertainty")
    xs = [c for c, _ in usable]
    if concentration <= xs[0] or concentration >= xs[-1] or len(usable) == 1:
        c, u = min(usable, key=lambda item: (abs(item[0] - concentration), item[0]))
        basis = f"relative U of the nearest level ({c:g})"
    else:
        j = next(i for i in range(1, len(xs)) if concentration <= xs[i])
        (c0, u0), (c1, u1) = usable[j - 1], usable[j]
        u = u0 + (u1 - u0) * (concentration - c0) / (c1 - c0)
        basis = f"relative U interpolated linearly between the levels {c0:g} and {c1:g}"
    return SampleUncertainty(sample_id, float(concentration), u, u * abs(concentration) / 100.0, basis)


BASIS = ("u_c = √(u(Rw)² + u(bias)²), U = k·u_c (Nordtest TR 537 ed. 4); u(Rw) = the intermediate "
         "precision RSD at the level; u(bias) = √(RMS_bias² + u(Cref)²) over every bias estimate, "
         "u(Cref) the mean of their reference uncertainties; absolute values = relative × concentration")


def _line(concentration, basis, prec: PrecisionInput | None, u_bias, k, profile_sd) -> BudgetLevel:
    reasons = []
    u_rw = None if prec is None else prec.rsd_pct
    if u_rw is None:
        reasons.append("u(Rw) does not exist" + (f" ({prec.reason})" if prec is not None and prec.reason else ""))
    if u_bias is None:
        reasons.append("u(bias) does not exist: no reference material or recovery result to estimate it from")
    comb = exp = comb_abs = exp_abs = None
    if not reasons:
        budget = combined_uncertainty(
            [UncertaintyComponent("u(Rw)", float(u_rw), True, prec.source),
             UncertaintyComponent("u(bias)", float(u_bias), True, "RMS of biases and u(Cref)")],
            coverage_factor=k, value=concentration if concentration else None)
        comb, exp = budget.combined_relative, budget.expanded_relative
        comb_abs, exp_abs = budget.combined_absolute, budget.expanded_absolute
        if not concentration:
            reasons.append("the concentration is 0: no absolute value follows from a relative uncertainty")
    p_std = p_exp = None
    if profile_sd is not None:
        p_std, p_exp = profile_sd, k * profile_sd
    return BudgetLevel(concentration, basis, u_rw, "" if prec is None else prec.source, u_bias, comb, exp,
                       comb_abs, exp_abs, p_std, p_exp, "; ".join(reasons))


def assess_uncertainty(precision: tuple[PrecisionInput, ...], bias: tuple[BiasEvidence, ...], *,
                       coverage_factor: float, loq: float | None = None, loq_reason: str = "",
                       profile_sd_pct: dict | None = None, samples: tuple = ()) -> UncertaintyResult:
    """Top-down budget per precision level and at the LOQ ([Nordtest]).

    Parameters
    ----------
    precision : PrecisionInput per level
        The intermediate precision RSD (%) of each level and where it comes from.
    bias : BiasEvidence per reference material or recovery level
        Relative biases and the relative standard uncertainty of their reference values.
    coverage_factor : float
        k of U = k u_c.
    loq : float, optional
        The reported LOQ; its budget takes u(Rw) from the precision level nearest to it.
    profile_sd_pct : dict, optional
        nominal -> the accuracy profile's standard deviation of the tolerance interval (%),
        sqrt(s_IP^2 + v_m) ([Feinberg]), shown beside the budget with k times it.
    samples : sequence of (id, concentration), optional
        Sample results to report as x ± U (:func:`sample_uncertainty`).

    Notes
    -----
    RMS_bias = sqrt(sum b_i^2 / n); u(Cref) = mean of u(Cref_i); u(bias) = sqrt(RMS_bias^2 +
    u(Cref)^2) ([Nordtest] section 6). u_c = sqrt(u(Rw)^2 + u(bias)^2), U = k u_c.
    """
    profile_sd_pct = profile_sd_pct or {}
    u_bias = rms = u_ref = None
    if bias:
        b = bias_uncertainty([e.bias_pct for e in bias], [e.reference_uncertainty_pct for e in bias], relative=True)
        u_bias, rms, u_ref = b.component.standard_uncertainty, b.rms_bias, b.reference_uncertainty
    k = float(coverage_factor)
    levels = tuple(_line(p.level, "precision level", p, u_bias, k, profile_sd_pct.get(p.level)) for p in precision)
    at_loq = None
    if loq is not None and precision:
        nearest = min(precision, key=lambda p: (abs(p.level - loq), p.level))
        at_loq = _line(loq, f"LOQ; u(Rw) from the precision level nearest to it ({nearest.level:g})", nearest,
                       u_bias, k, None)
    elif loq is None:
        loq_reason = loq_reason or "no LOQ is reported"
    else:
        loq_reason = "no precision level to take u(Rw) from"
    per_sample = tuple(sample_uncertainty(i, c, levels) for i, c in samples)
    return UncertaintyResult(k, tuple(bias), rms, u_ref, u_bias, levels, at_loq, BASIS, per_sample, loq_reason,
                             "" if bias else "no reference material or recovery result: u(bias) and the "
                                             "combined uncertainty cannot be estimated")


def uncertainty_criteria(result: UncertaintyResult, expanded_max_pct: float | None) -> tuple:
    """Per level: the relative expanded uncertainty at most the study's target (when it gives one)."""
    if expanded_max_pct is None:
        return ()
    return tuple(Criterion(
        f"expanded-uncertainty-{lv.concentration:g}",
        f"relative expanded uncertainty (k = {result.coverage_factor:g}) at {lv.concentration:g} at most "
        f"{expanded_max_pct:g} %", lv.expanded_pct, expanded_max_pct, at_most(lv.expanded_pct, expanded_max_pct),
        "" if lv.expanded_pct is not None else f"not applicable: {lv.reason}") for lv in result.levels)
