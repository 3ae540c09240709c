"""Trueness: recovery of spiked analyte, and bias against a certified reference material.

References
----------
.. [Eurachem] Eurachem Guide, The Fitness for Purpose of Analytical Methods,
   2nd ed. (2014), sec. 6.5 (trueness, recovery).
.. [ICH-Q2] ICH Q2(R2) (2023), accuracy.
.. [ERM] Linsinger, T. (2010). ERM Application Note 1: Comparison of a
   measurement result with the certified value. European Commission JRC-IRMM.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from .._common import ConfidenceInterval

__all__ = ["RecoveryLevel", "RecoveryResult", "ReferenceMaterialResult", "assess_recovery",
           "assess_reference_material"]


@dataclass(frozen=True)
class RecoveryLevel:
    """One spiking level. Field order and ``metadata`` give its results.json form."""

    added: float
    n: int
    mean_pct: float
    sd_pct: float | None
    rsd_pct: float | None
    ci_pct: ConfidenceInterval | None = field(metadata={"interval": "pair"})
    t_statistic: float | None
    pvalue: float | None = field(metadata={"json": "p_value"})
    range_pct: tuple[float, float]
    passed: bool = field(metadata={"json": "pass"})
    recoveries_pct: tuple[float, ...]
    reason: str = ""          # why sd/rsd/ci/t/p are missing, when they are

    @property
    def null_reason(self) -> str:
        """Why a value of this level is missing (results.json ``not_applicable``)."""
        if self.reason:
            return self.reason
        return (f"{self.n} result(s) at added {self.added:g}: the SD, CI and t test need at least 2" if self.n < 2
                else "the results are identical (zero SD): no t test")


@dataclass(frozen=True)
class RecoveryResult:
    n: int
    overall_mean_pct: float
    levels: tuple[RecoveryLevel, ...]


def assess_recovery(added, found, native=None, *, alpha=0.05, range_for=lambda added: (90.0, 110.0)):
    """Recovery per spiking level.

    Notes
    -----
    R_i = 100 (found_i - native_i) / added_i. Per level (same ``added``):
    mean, SD (n - 1), RSD = 100 SD/mean, CI mean +/- t(1 - alpha/2, n - 1) SD/sqrt(n),
    one-sample t = (mean - 100)/(SD/sqrt(n)) on n - 1 df. The level passes
    when the mean lies inside its acceptance range.
    """
    added = np.asarray(added, float)
    found = np.asarray(found, float)
    native = np.zeros_like(added) if native is None else np.asarray(native, float)
    rec = 100.0 * (found - native) / added
    levels = []
    for a in np.unique(added):
        r = rec[added == a]
        n = r.size
        mean = float(r.mean())
        lo_hi = tuple(float(v) for v in range_for(float(a)))
        if n >= 2:
            sd = float(np.std(r - mean, ddof=1))
            se = sd / np.sqrt(n)
            tq = float(stats.t.ppf(1 - alpha / 2, n - 1))
            ci = ConfidenceInterval(mean - tq * se, mean + tq * se, 1 - alpha)
            t = (mean - 100.0) / se if se > 0 else None
            p = float(2 * stats.t.sf(abs(t), n - 1)) if t is not None else None
            rsd = 100 * sd / mean if mean != 0 else None
            reasons = (["every recovery at this level is identical, so the t test is not applicable"] if t is None
                       else []) + (["the mean recovery is zero, so no RSD"] if rsd is None else [])
            reason = "; ".join(reasons)
        else:
            sd = rsd = t = p = None
            ci = None
            reason = "one result at this level: SD, RSD, CI and t test need at least 2"
        levels.append(RecoveryLevel(added=float(a), n=n, mean_pct=mean, sd_pct=sd, rsd_pct=rsd, ci_pct=ci,
                                    t_statistic=t, pvalue=p, range_pct=lo_hi,
                                    passed=bool(lo_hi[0] <= mean <= lo_hi[1]),
                                    recoveries_pct=tuple(map(float, r)), reason=reason))
    return RecoveryResult(n=int(rec.size), overall_mean_pct=float(rec.mean()), levels=tuple(levels))


@dataclass(frozen=True)
class ReferenceMaterialResult:
    n: int
    mean: float
    sd: float | None
    certified_value: float
    certified_uncertainty: float = field(metadata={"json": "certified_standard_uncertainty"})
    bias: float
    bias_pct: float
    u_mean: float | None                 # u_m, the standard uncertainty of the laboratory's result
    expanded_uncertainty: float | None   # k sqrt(u_mean^2 + u_crm^2)
    coverage_factor: float
    significant: bool | None
    u_mean_basis: str = ""               # which u_m: s/sqrt(n) or the laboratory's stated uncertainty
    reason: str = ""                     # why the test is not applicable, when significant is None

    @property
    def null_reason(self) -> str:
        """Why a value is missing (results.json ``not_applicable``)."""
        return self.reason or (f"{self.n} result(s): the SD and the uncertainty of the mean need at least 2"
                               if self.n < 2 else "the value does not exist for these results")


def assess_reference_material(found, certified_value, standard_uncertainty, *, k=2.0,
                              measurement_uncertainty=None):
    """Bias against a certified value, judged as in ERM Application Note 1.

    Parameters
    ----------
    measurement_uncertainty : float, optional
        The laboratory's combined standard uncertainty of its result (u_m in
        ERM Application Note 1), when the study states one.

    Notes
    -----
    Delta_m = |mean - c_CRM|; u_Delta = sqrt(u_m^2 + u_CRM^2); the bias is
    significant when Delta_m > k u_Delta (k = 2) [ERM]. ERM Application
    Note 1 takes u_m as the combined standard uncertainty of the laboratory's
    result. When the study gives it, it is used; otherwise u_m = s/sqrt(n),
    the standard error of the mean of the n results, which holds only the
    repeatability of these results (no between-run or calibration
    contributions), so it is usually smaller and finds a bias significant more
    readily. ``u_mean_basis`` says which was used.
    """
    x = np.asarray(found, float)
    n = x.size
    mean = float(x.mean())
    bias = mean - certified_value
    sd = float(np.std(x - mean, ddof=1)) if n >= 2 else None
    reason = ""
    if measurement_uncertainty is not None:
        u_mean = float(measurement_uncertainty)
        basis = ("u_m = the laboratory's combined standard uncertainty of its result, as stated in the study "
                 "(ERM Application Note 1)")
    elif n >= 2:
        u_mean = sd / np.sqrt(n)
        basis = (f"u_m = s/√n = standard error of the mean of the {n} results (repeatability only; ERM "
                 "Application Note 1 asks for the combined standard uncertainty of the laboratory's result, which "
                 "the study can give as measurement_standard_uncertainty)")
    else:
        u_mean = None
        basis = "u_m = s/√n needs at least 2 results"
        reason = ("one result and no measurement_standard_uncertainty in the study, so u_m (and the bias test) "
                  "cannot be estimated")
    if u_mean is None:
        U = significant = None
    else:
        U = k * float(np.sqrt(u_mean**2 + standard_uncertainty**2))
        significant = bool(abs(bias) > U)
    return ReferenceMaterialResult(n=n, mean=mean, sd=sd, certified_value=float(certified_value),
                                   certified_uncertainty=float(standard_uncertainty), bias=bias,
                                   bias_pct=100 * bias / certified_value, u_mean=u_mean, expanded_uncertainty=U,
                                   coverage_factor=k, significant=significant, u_mean_basis=basis, reason=reason)
