"""Trueness by recovery of spiked analyte: per-level statistics and the acceptance criteria.

References
----------
.. [Eurachem] Eurachem Guide, The Fitness for Purpose of Analytical Methods,
   2nd ed. (2014), sec. 6.5 (trueness, recovery).
.. [ICH-Q2] ICH Q2(R2) (2023), accuracy.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..._common import ConfidenceInterval, between, no_relative_sd
from ...criteria import Criterion
from ...maths.distributions import t_ppf, t_sf

__all__ = ["RecoveryLevel", "RecoveryResult", "assess_recovery", "recovery_criteria"]


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
            tq = float(t_ppf(1 - alpha / 2, n - 1))
            ci = ConfidenceInterval(mean - tq * se, mean + tq * se, 1 - alpha)
            t = (mean - 100.0) / se if se > 0 else None
            p = float(2 * t_sf(abs(t), n - 1)) if t is not None else None
            rsd = None if no_relative_sd(mean) else 100 * sd / mean
            reasons = (["every recovery at this level is identical, so the t test is not applicable"] if t is None
                       else []) + ([no_relative_sd(mean, "the mean recovery")] if rsd is None else [])
            reason = "; ".join(reasons)
        else:
            sd = rsd = t = p = None
            ci = None
            reason = "one result at this level: SD, RSD, CI and t test need at least 2"
        levels.append(RecoveryLevel(added=float(a), n=n, mean_pct=mean, sd_pct=sd, rsd_pct=rsd, ci_pct=ci,
                                    t_statistic=t, pvalue=p, range_pct=lo_hi,
                                    passed=between(mean, lo_hi[0], lo_hi[1]),
                                    recoveries_pct=tuple(map(float, r)), reason=reason))
    return RecoveryResult(n=int(rec.size), overall_mean_pct=float(rec.mean()), levels=tuple(levels))


def recovery_criteria(recovery: RecoveryResult) -> tuple[Criterion, ...]:
    """One criterion per spiking level: mean recovery inside its range."""
    return tuple(Criterion(
        f"recovery-{lv.added:g}",
        f"mean recovery at added {lv.added:g} within {lv.range_pct[0]:g} to {lv.range_pct[1]:g} %",
        lv.mean_pct, list(lv.range_pct), lv.passed) for lv in recovery.levels)
