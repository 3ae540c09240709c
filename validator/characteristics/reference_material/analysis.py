"""Trueness against a certified reference material: bias judged with the uncertainties.

References
----------
.. [ERM] Linsinger, T. (2010). ERM Application Note 1: Comparison of a
   measurement result with the certified value. European Commission JRC-IRMM.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ...criteria import Criterion, at_most

__all__ = ["ReferenceMaterialResult", "assess_reference_material", "reference_material_criterion"]


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
        significant = not at_most(abs(bias), U)
    return ReferenceMaterialResult(n=n, mean=mean, sd=sd, certified_value=float(certified_value),
                                   certified_uncertainty=float(standard_uncertainty), bias=bias,
                                   bias_pct=100 * bias / certified_value, u_mean=u_mean, expanded_uncertainty=U,
                                   coverage_factor=k, significant=significant, u_mean_basis=basis, reason=reason)


def reference_material_criterion(rm: ReferenceMaterialResult) -> Criterion:
    return Criterion("reference-material-bias",
                     f"|bias| against the certified value at most k·sqrt(u_mean² + u_CRM²), k = {rm.coverage_factor:g}",
                     None if rm.bias is None else abs(rm.bias), rm.expanded_uncertainty,
                     None if rm.significant is None else not rm.significant,
                     "" if rm.significant is not None else "not applicable: needs at least 2 results")
