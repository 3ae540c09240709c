"""Precision: repeatability and intermediate precision by one-way ANOVA per level.

References
----------
.. [ISO5725-2] ISO 5725-2:2019, Accuracy (trueness and precision) of
   measurement methods and results - Part 2: Basic method for the
   determination of repeatability and reproducibility (one-way ANOVA,
   n0 for unbalanced designs, Cochran's and Grubbs' tests).
.. [Satterthwaite] Satterthwaite, F. E. (1946). An approximate distribution
   of estimates of variance components. Biometrics Bulletin 2, 110-114.
.. [Horwitz] Horwitz, W. and Albert, R. (2006). The Horwitz ratio (HorRat).
   J. AOAC Int. 89, 1095-1109: PRSD_R = 2 C^-0.1505, C a mass fraction.
.. [Thompson] Thompson, M. (2000). Analyst 125, 385-386: PRSD_R = 22 % below
   a mass fraction of 1.2e-7, Horwitz up to 0.138, C^-0.5 % above.
.. [NIST-ANOVA] NIST StRD one-way ANOVA datasets (SiRstv, AtmWtAg, SmLs01-09).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from .._common import ConfidenceInterval
from ..maths.anova import OneWayAnova, one_way_anova
from ..maths.outliers import OutlierTest, cochran_c, grubbs_double, grubbs_means, grubbs_within_series

__all__ = ["PrecisionLevel", "assess_precision_level", "mass_fraction_factor", "horwitz_prsd"]


_MASS_FRACTION = {
    "%": (1e-2, ""), "g/100g": (1e-2, ""), "g/100 g": (1e-2, ""), "g/kg": (1e-3, ""), "mg/g": (1e-3, ""),
    "mg/kg": (1e-6, ""), "µg/g": (1e-6, ""), "ug/g": (1e-6, ""), "ppm": (1e-6, ""),
    "µg/kg": (1e-9, ""), "ug/kg": (1e-9, ""), "ng/g": (1e-9, ""), "ppb": (1e-9, ""),
    "ng/kg": (1e-12, ""), "ppt": (1e-12, ""),
    "g/l": (1e-3, "density 1 kg/L assumed"), "mg/l": (1e-6, "density 1 kg/L assumed"),
    "µg/l": (1e-9, "density 1 kg/L assumed"), "ug/l": (1e-9, "density 1 kg/L assumed"),
    "ng/l": (1e-12, "density 1 kg/L assumed"), "mg/ml": (1e-3, "density 1 kg/L assumed"),
    "µg/ml": (1e-6, "density 1 kg/L assumed"), "ug/ml": (1e-6, "density 1 kg/L assumed"),
}


def mass_fraction_factor(unit: str):
    """(factor, assumption) converting ``unit`` to a mass fraction, or None."""
    key = re.sub(r"\s+", "", unit.strip()).lower().replace("μ", "µ")
    for k, v in _MASS_FRACTION.items():
        if re.sub(r"\s+", "", k) == key:
            return v
    return None


THOMPSON_LOW = 1.2e-7      # mass fraction below which PRSD_R is 22 % [Thompson]
THOMPSON_HIGH = 0.138      # mass fraction above which PRSD_R = C^-0.5 % [Thompson]


def horwitz_prsd(mass_fraction: float) -> float:
    """Predicted reproducibility RSD (%), the Horwitz function with Thompson's modification.

    Notes
    -----
    PRSD_R = 22 % for C < 1.2e-7; 2 C^-0.1505 % for 1.2e-7 <= C <= 0.138
    (Horwitz); C^-0.5 % for C > 0.138 (sigma_R = 0.01 C^0.5), C a mass
    fraction [Thompson], [Horwitz]. The pieces meet (to rounding) at both
    boundaries.
    """
    c = float(mass_fraction)
    if not np.isfinite(c) or c <= 0:
        raise ValueError(f"mass fraction must be a positive finite number, got {mass_fraction!r}")
    if c < THOMPSON_LOW:
        return 22.0
    if c > THOMPSON_HIGH:
        return 100.0 * 0.01 * c ** -0.5
    return 2.0 * c ** (-0.1505)


def horwitz_band(mass_fraction: float) -> str:
    """Which piece of the Thompson-modified Horwitz function applies."""
    if mass_fraction < THOMPSON_LOW:
        return "22 % (mass fraction below 1.2e-7)"
    if mass_fraction > THOMPSON_HIGH:
        return "C^-0.5 % (mass fraction above 0.138)"
    return "2 C^-0.1505 % (mass fraction 1.2e-7 to 0.138)"


# the one-way ANOVA's values, written flat into the level's results.json object: (json name, attribute(s))
_ANOVA_JSON = (("ms_between", "ms_between"), ("ms_within", "ms_within"), ("df", ("df_between", "df_within")),
               ("n0", "n0"), ("f_statistic", "statistic"), ("p_value", "pvalue"))


@dataclass(frozen=True)
class PrecisionLevel:
    """One concentration level. Field order and ``metadata`` give its results.json form."""

    level: float
    series: int
    n: int
    mean: float
    anova: OneWayAnova = field(metadata={"flatten": _ANOVA_JSON})
    repeatability_sd: float
    repeatability_rsd_pct: float | None
    between_series_sd: float
    between_clamped: bool = field(metadata={"json": "between_series_set_to_zero"})
    intermediate_sd: float
    intermediate_rsd_pct: float | None
    repeatability_sd_ci: ConfidenceInterval | None = field(metadata={"interval": "pair"})
    intermediate_sd_ci: ConfidenceInterval | None = field(metadata={"interval": "pair"})
    intermediate_df: float | None
    cochran: OutlierTest
    grubbs: OutlierTest
    grubbs_double: OutlierTest | None
    grubbs_within: tuple[OutlierTest, ...] = field(metadata={"json": "grubbs_within_series"})   # one per series
    horrat: float | None = field(metadata={"null_reason": "horwitz_reason"})
    horwitz_prsd_pct: float | None = field(metadata={"null_reason": "horwitz_reason"})
    horwitz_note: str
    reason: str = field(default="", metadata={"json": "notes"})   # why some estimates are missing

    @property
    def horwitz_reason(self) -> str:
        """Why the Horwitz ratio is missing (results.json ``not_applicable``)."""
        return self.horwitz_note or "the Horwitz ratio needs a positive mean"

    @property
    def null_reason(self) -> str:
        """Why a value of this level is missing (results.json ``not_applicable``)."""
        an = self.anova
        if self.reason:
            return self.reason
        if an.df_within > 0 and not an.ms_within > 0:
            return ("the results within every series are identical (zero repeatability variance): the F test "
                    "and the intervals built on it do not exist")
        return "the value does not exist for these results (see the level's notes)"


def _sd_ci(sd, df, alpha):
    if df is None or not np.isfinite(df) or df <= 0:
        return None
    lo = sd * np.sqrt(df / stats.chi2.ppf(1 - alpha / 2, df))
    hi = sd * np.sqrt(df / stats.chi2.ppf(alpha / 2, df))
    return ConfidenceInterval(float(lo), float(hi), 1 - alpha)


def assess_precision_level(level, values, series, *, alpha=0.05, unit="", offset=0.0) -> PrecisionLevel:
    """Repeatability, between-series and intermediate precision at one level.

    Notes
    -----
    s_r^2 = MS_within; s_L^2 = (MS_between - MS_within)/n0, set to 0 when
    negative; s_I^2 = s_r^2 + s_L^2. RSDs relative to the grand mean.
    CI of s_r from chi^2 with N - p df; CI of s_I from chi^2 with
    Satterthwaite's effective df
    nu = (s_I^2)^2 / [ (MS_b/n0)^2/(p-1) + ((1 - 1/n0) MS_w)^2/(N-p) ]
    [ISO5725-2], [Satterthwaite].
    """
    a = one_way_anova(values, series, offset)
    notes = []
    nan = float("nan")
    sr2 = a.ms_within if a.df_within > 0 else nan
    if a.df_within == 0:
        notes.append("every series has a single result, so repeatability cannot be estimated")
    if a.df_between == 0:
        notes.append("only one series, so between-series variance cannot be estimated "
                     "(intermediate precision is not assessed)")
        sl2 = nan
    else:
        sl2 = (a.ms_between - a.ms_within) / a.n0
    clamped = bool(sl2 < 0)
    if clamped:
        sl2 = 0.0
    si2 = sr2 + sl2
    sr, sl, si = (float(np.sqrt(v)) for v in (sr2, sl2, si2))
    mean = a.grand_mean
    if mean == 0:
        notes.append("the mean is zero, so no relative standard deviation exists")
    rsd = (lambda sd: 100 * sd / mean if mean != 0 and np.isfinite(sd) else None)
    df_i = None
    if np.isfinite(si2):
        if clamped:
            df_i = float(a.df_within)
        else:
            den = ((a.ms_between / a.n0) ** 2 / a.df_between
                   + ((1 - 1 / a.n0) * a.ms_within) ** 2 / a.df_within)
            df_i = float(si2**2 / den) if den > 0 else None
    horrat = prsd = None
    note = ""
    conv = mass_fraction_factor(unit) if unit else None
    if conv is None:
        note = f'the concentration unit "{unit}" does not convert to a mass fraction'
    elif mean <= 0:
        note = "the mean is not positive"
    elif rsd(si) is None:
        note = "intermediate precision was not estimated"
    else:
        factor, assumption = conv
        fraction = mean * factor
        prsd = horwitz_prsd(fraction)
        horrat = rsd(si) / prsd
        note = ("HorRat = intermediate RSD / PRSD_R (intermediate precision in place of reproducibility); "
                f"PRSD_R from the Horwitz function with Thompson's (2000) modification, here {horwitz_band(fraction)}"
                + (f"; {assumption}" if assumption else ""))
    return PrecisionLevel(
        level=float(level), series=a.groups, n=a.n, mean=mean, anova=a, repeatability_sd=sr,
        repeatability_rsd_pct=rsd(sr), between_series_sd=sl, between_clamped=clamped, intermediate_sd=si,
        intermediate_rsd_pct=rsd(si),
        repeatability_sd_ci=_sd_ci(sr, a.df_within, alpha) if np.isfinite(sr) else None,
        intermediate_sd_ci=_sd_ci(si, df_i, alpha) if np.isfinite(si) else None, intermediate_df=df_i,
        cochran=cochran_c(values, series, alpha), grubbs=grubbs_means(values, series, alpha),
        grubbs_double=grubbs_double(values, series, alpha),
        grubbs_within=grubbs_within_series(values, series, alpha, offset), horrat=horrat, horwitz_prsd_pct=prsd,
        horwitz_note=note, reason="; ".join(notes))
