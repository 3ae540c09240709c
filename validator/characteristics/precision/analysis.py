"""Precision: repeatability and intermediate precision per level (one-way ANOVA, or the nested design).

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
.. [ISO5725-3] ISO 5725-3:2023, intermediate precision, fully nested designs.
.. [BG] Burdick, R. K. and Graybill, F. A. (1992). Confidence Intervals on
   Variance Components. Marcel Dekker (modified large-sample method).
.. [EP15] CLSI EP15-A3 (2014), upper verification limit of a claimed SD.
.. [USP1210] USP <1210>: judging a precision by the upper confidence bound of its RSD.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np

from ..._common import ConfidenceInterval, SourceRow, level_label, no_relative_sd, quiet_numpy
from ...criteria import Criterion, at_least, at_most
from ...maths.anova import OneWayAnova, one_way_anova
from ...maths.distributions import chi2_ppf
from ...maths.outliers import OutlierTest, cochran_c, grubbs_double, grubbs_means, grubbs_within_series
from ...maths.variance_components import (mls_upper_bound, nested_variance_components, one_way_mean_standard_error,
                                          verify_bias, verify_precision_claim)

__all__ = ["PrecisionResult", "PrecisionLevel", "FlaggedResult", "NestedPrecision", "VarianceEstimate", "PrecisionConditionEstimate",
           "ClaimCheck", "TruenessCheck", "RsdUpperBounds", "assess_precision_level", "precision_criteria",
           "design_criteria", "levels_criterion", "mass_fraction_factor", "horwitz_prsd"]


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


def _upper_rsd(sd, df, mean, alpha):
    """One-sided upper (1 - alpha) bound on an RSD: 100 sd sqrt(df / chi2_{alpha; df}) / mean (mean > 0)."""
    if sd is None or df is None or not (np.isfinite(sd) and np.isfinite(df) and df > 0) or no_relative_sd(mean):
        return None
    with quiet_numpy():
        return float(100.0 * sd * np.sqrt(df / chi2_ppf(alpha, df)) / mean)


def _rsd_of_variance(variance, mean):
    if variance is None or not np.isfinite(variance) or no_relative_sd(mean):
        return None
    return float(100.0 * np.sqrt(variance) / mean)


def _intermediate_upper_rsd(a: OneWayAnova, si2, repeatability_upper, mean, alpha):
    """One-sided upper (1 - alpha) bound on the one-way intermediate RSD by the MLS method ([BG]):
    s_I^2 = MS_B / n0 + (1 - 1/n0) MS_W, at least the estimate and the repeatability bound."""
    if not (np.isfinite(si2) and a.df_between > 0 and a.df_within > 0) or no_relative_sd(mean):
        return None
    c, ms, df = [1.0 / a.n0], [a.ms_between], [a.df_between]
    if a.n0 > 1.0:
        c.append(1.0 - 1.0 / a.n0)
        ms.append(a.ms_within)
        df.append(a.df_within)
    with quiet_numpy():
        upper = max(mls_upper_bound(c, ms, df, 1.0 - alpha), float(si2))
    bound = _rsd_of_variance(upper, mean)
    return bound if repeatability_upper is None else max(bound, repeatability_upper)


@dataclass(frozen=True)
class RsdUpperBounds:
    """One-sided upper confidence bounds on the one-way RSDs ([USP1210]).

    Repeatability: 100 s_r sqrt(df / chi2_{alpha; df}) / mean with the within-series df
    (exact). Intermediate precision: 100 sqrt(U) / mean, U the one-sided modified
    large-sample bound on s_I^2 = MS_B / n0 + (1 - 1/n0) MS_W ([BG]; Graybill and Wang 1980;
    the Satterthwaite chi-square bound covered about 0.88 at a stated 0.95 for 3 series x 3
    with the between-series variance 4 times the repeatability variance), at least the
    estimate and the repeatability bound.
    """

    repeatability_rsd_upper_pct: float | None
    intermediate_rsd_upper_pct: float | None
    confidence: float
    reason: str = ""


@dataclass(frozen=True)
class VarianceEstimate:
    """One variance component of the nested design (``raw_estimate``: the ANOVA value before a
    negative one is set to 0; absent for REML, whose estimates are constrained to >= 0)."""

    source: str
    variance: float
    sd: float
    rsd_pct: float | None = field(metadata={"null_reason": "rsd_reason"})
    set_to_zero: bool
    raw_estimate: float | None = field(default=None, metadata={"omit_none": True})

    @property
    def rsd_reason(self) -> str:
        return "the mean is zero, so no relative standard deviation exists"


@dataclass(frozen=True)
class PrecisionConditionEstimate:
    """A precision condition: the components from the replicate out to a factor, as an SD.

    ``sd_ci`` is the two-sided interval (chi-square for repeatability, the modified
    large-sample method for sums [BG]; in an unbalanced design, where REML is used, the
    Satterthwaite interval with df from the REML information); ``sd_ci_satterthwaite`` the
    Satterthwaite interval;
    ``rsd_upper_pct`` the one-sided upper bound at the same confidence: chi-square for
    repeatability, the one-sided modified large-sample bound for sums of components in a
    balanced design, Satterthwaite's chi-square bound with the REML df in an unbalanced one
    (``variance_upper`` of :class:`validator.maths.variance_components.PrecisionCondition`).
    """

    name: str
    sources: tuple[str, ...]
    sd: float | None
    rsd_pct: float | None
    df: float | None
    sd_ci: ConfidenceInterval | None = field(metadata={"interval": "pair"})
    sd_ci_satterthwaite: ConfidenceInterval | None = field(metadata={"interval": "pair"})
    rsd_upper_pct: float | None
    reason: str = ""


@dataclass(frozen=True)
class NestedPrecision:
    """Variance components of the declared nested design at one level ([ISO5725-3])."""

    design: tuple[str, ...]
    method: str
    balanced: bool
    components: tuple[VarianceEstimate, ...]
    conditions: tuple[PrecisionConditionEstimate, ...]
    notes: tuple[str, ...]
    reason: str = ""

    @property
    def repeatability(self) -> PrecisionConditionEstimate:
        return self.conditions[0]

    @property
    def intermediate(self) -> PrecisionConditionEstimate:
        return self.conditions[-1]


@dataclass(frozen=True)
class ClaimCheck:
    """Verification of a claimed repeatability or within-laboratory RSD at one level ([EP15]).

    A claim as an RSD is converted to an SD at the level's mean (a claim as an SD is used as it is, and
    shown as an RSD of the mean when the mean is not zero); it is verified when the observed SD is
    at most the upper verification limit claimed SD sqrt(chi2_{1-alpha/L; df} / df), L the number
    of levels with that claim (EP15-A3's Bonferroni division) and ``df`` the observed SD's df
    rounded to the nearest integer (:func:`validator.maths.variance_components.verify_precision_claim`).
    """

    quantity: str
    claimed_as: str                 # "RSD" (a % of the level mean) or "SD" (in the concentration unit)
    claimed_rsd_pct: float | None = field(metadata={"omit_none": True})     # an SD claim: as % of the mean
    claimed_sd: float | None
    observed_sd: float | None
    df: float | None
    upper_verification_limit: float | None
    verified: bool | None
    basis: str
    reason: str = ""


@dataclass(frozen=True)
class TruenessCheck:
    """Verification of the bias at one level against a target value ([EP15]).

    The mean's standard error comes from the one-way ANOVA by series (by the outermost factor of a
    declared design: its means are independent), se_c = sqrt(se_mean^2 + u_TV^2) with
    Welch-Satterthwaite df, m the t quantile 1 - alpha/(2 L) (L levels with a target value), and the
    bias is verified when the mean lies in TV +/- m se_c
    (:func:`validator.maths.variance_components.verify_bias`).
    """

    reference_value: float
    reference_standard_uncertainty: float
    reference_df: float | None = field(metadata={"omit_none": True})      # None: taken as infinite
    mean: float
    bias: float
    bias_pct: float | None = field(metadata={"null_reason": "bias_pct_reason"})
    mean_standard_error: float | None
    mean_standard_error_df: float | None
    combined_standard_error: float | None
    df: float | None = field(metadata={"null_reason": "df_reason"})
    multiplier: float | None
    verification_interval: ConfidenceInterval | None = field(metadata={"interval": "pair"})
    verified: bool | None
    basis: str
    reason: str = ""

    @property
    def bias_pct_reason(self) -> str:
        return self.reason or "the reference value is zero, so no relative bias exists"

    @property
    def df_reason(self) -> str:
        return self.reason or ("infinite: the mean's standard error is zero and the reference value's degrees of "
                               "freedom are not given (normal quantile)")


def _trueness(values, groups, mean, reference, alpha, levels, offset=0.0) -> TruenessCheck:
    target, u_target, df_target = reference
    bias = float(mean - target)
    bias_pct = 100.0 * bias / abs(target) if target else None
    common = dict(reference_value=float(target), reference_standard_uncertainty=float(u_target),
                  reference_df=None if df_target is None else float(df_target), mean=float(mean), bias=bias,
                  bias_pct=bias_pct)
    a = one_way_anova(values, groups, offset)
    if a.n < 2 or a.df_within < 1:
        return TruenessCheck(**common, mean_standard_error=None, mean_standard_error_df=None,
                             combined_standard_error=None, df=None, multiplier=None, verification_interval=None,
                             verified=None, basis="not verified",
                             reason="the mean's standard error needs a series with at least two results")
    with quiet_numpy():
        se = one_way_mean_standard_error(a.ms_between, a.ms_within, a.df_between, a.df_within, a.n, a.n0)
    if se.se == 0 and u_target == 0:
        return TruenessCheck(**common, mean_standard_error=0.0, mean_standard_error_df=se.df,
                             combined_standard_error=0.0, df=None, multiplier=None, verification_interval=None,
                             verified=None, basis="not verified",
                             reason=("the results show no spread at all (SD exactly 0) and the reference value has no "
                                     "uncertainty: the verification interval has no width"))
    v = verify_bias(mean, se.se, se.df, target, u_target, df_target, alpha=alpha, levels=max(1, int(levels)))
    basis = (f"mean's standard error {se.basis} on {se.df:.4g} df; se_c = sqrt(se_mean² + u_ref²)"
             + (f", Welch-Satterthwaite df {v.df:.4g}" if v.df is not None else ", normal quantile")
             + f"; m = t quantile 1 - {v.alpha:g}/(2·{v.levels}) (Bonferroni over the {v.levels} level(s) with a "
               "reference value)")
    return TruenessCheck(**common, mean_standard_error=se.se, mean_standard_error_df=se.df,
                         combined_standard_error=v.standard_error, df=v.df, multiplier=v.multiplier,
                         verification_interval=ConfidenceInterval(v.low, v.high, 1.0 - v.alpha / v.levels),
                         verified=v.verified, basis=basis)


def _nested(values, mean, factors, design, alpha) -> NestedPrecision:
    conf = 1.0 - alpha
    rel = (lambda sd: None if sd is None or no_relative_sd(mean) else 100.0 * sd / mean)
    with quiet_numpy():
        res = nested_variance_components(values, factors, names=design, confidence=conf)
    if res.reason:
        empty = PrecisionConditionEstimate("repeatability", ("replicate",), None, None, None, None, None, None,
                                           res.reason)
        last = PrecisionConditionEstimate("intermediate precision", tuple(design) + ("replicate",), None, None,
                                          None, None, None, None, res.reason)
        return NestedPrecision(tuple(design), res.method, res.balanced, (), (empty, last), res.notes, res.reason)
    comps = tuple(VarianceEstimate(c.source, c.variance, c.sd, rel(c.sd), c.set_to_zero, c.raw_estimate)
                  for c in res.components)
    conds = []
    for c in res.conditions:
        conds.append(PrecisionConditionEstimate(
            c.name, c.sources, c.sd, rel(c.sd), c.df, c.ci_mls or c.ci_satterthwaite, c.ci_satterthwaite,
            _upper_rsd(c.sd, c.df, mean, alpha) if c.upper_basis == "chi-square"     # repeatability, exact
            else _rsd_of_variance(c.variance_upper, mean), c.reason))
    return NestedPrecision(tuple(design), res.method, res.balanced, comps, tuple(conds), res.notes)


def _claims(claims, mean, rep_sd, rep_df, ip_sd, ip_df, ip_reason, alpha, claim_levels=(1, 1),
            sd_claims=(None, None)) -> tuple:
    out = []
    for quantity, claimed, sd_claim, sd, df, why, levels in (
            ("repeatability", claims[0], sd_claims[0], rep_sd, rep_df, "", claim_levels[0]),
            ("within-laboratory", claims[1], sd_claims[1], ip_sd, ip_df, ip_reason, claim_levels[1])):
        if claimed is None and sd_claim is None:
            continue
        if sd_claim is not None:          # a level's SD claim takes precedence over an RSD claim
            claimed_as, claimed_sd = "SD", float(sd_claim)
            claimed = None if no_relative_sd(mean) else 100.0 * claimed_sd / mean
        else:
            claimed_as, claimed_sd = "RSD", (None if no_relative_sd(mean) else mean * claimed / 100.0)
        observed = None if sd is None or not np.isfinite(sd) else sd
        if claimed_sd is None or sd is None or df is None or not np.isfinite(sd) or not df > 0:
            reason = (f"{no_relative_sd(mean)}, so an RSD claim gives no SD" if not claimed_sd else
                      f"the observed {quantity} SD or its degrees of freedom do not exist"
                      + (f" ({why})" if why else ""))
            out.append(ClaimCheck(quantity=quantity, claimed_as=claimed_as, claimed_rsd_pct=claimed,
                                  claimed_sd=claimed_sd, observed_sd=observed, df=None, upper_verification_limit=None,
                                  verified=None, basis="not verified", reason=reason))
            continue
        levels = max(1, int(levels))
        v = verify_precision_claim(sd, claimed_sd, df, alpha=alpha, levels=levels)
        how = (f"upper verification limit at chi-square quantile 1 - {v.alpha:g}/{levels} (Bonferroni over the "
               f"{levels} levels with this claim)" if levels > 1 else
               f"upper verification limit at chi-square quantile 1 - {v.alpha:g} (one level with this claim)")
        if v.df != float(df):
            how += f", df {v.df:g} (the estimated {float(df):.4g} rounded)"
        out.append(ClaimCheck(quantity=quantity, claimed_as=claimed_as, claimed_rsd_pct=claimed, claimed_sd=claimed_sd,
                              observed_sd=sd, df=v.df, upper_verification_limit=v.uvl, verified=v.verified,
                              basis=f"{v.basis}; {how}"))
    return tuple(out)


@dataclass(frozen=True)
class FlaggedResult:
    """One result that an outlier test of its level flags (p below alpha), with where it was read.

    ``tests`` names the flagging tests by their results.json keys: ``cochran`` and ``grubbs`` (the
    result's series has the largest variance or the most extreme mean), ``grubbs_double`` (its series
    is one of the pair), ``grubbs_within_series`` (the result itself). ``source`` is the file, sheet
    and row the result was read from (a precision file's row or a run export's QC injection), absent
    when the caller gave none. The result stays in every estimate.
    """

    value: float
    series: str
    tests: tuple[str, ...]
    source: SourceRow | None = field(default=None, metadata={"omit_none": True})


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
    # every result a test above flags, in input order, with its file, sheet and row
    flagged: tuple[FlaggedResult, ...] = field(metadata={"json": "flagged_results"})
    horrat: float | None = field(metadata={"null_reason": "horwitz_reason"})
    horwitz_prsd_pct: float | None = field(metadata={"null_reason": "horwitz_reason"})
    horwitz_note: str
    reason: str = field(default="", metadata={"json": "notes"})   # why some estimates are missing
    # written only when the study declares them ([precision] design, claims, judge_on = "interval")
    rsd_upper_bounds: RsdUpperBounds | None = field(default=None, metadata={"omit_none": True})
    nested: NestedPrecision | None = field(default=None, metadata={"omit_none": True})
    claims: tuple[ClaimCheck, ...] | None = field(default=None, metadata={"omit_none": True})
    trueness: TruenessCheck | None = field(default=None, metadata={"omit_none": True})
    fewest_results_per_series: int = 0

    @property
    def decisive(self) -> tuple:
        """((RSD, its upper bound, why missing) for repeatability, the same for intermediate precision):
        from the nested design when declared, else from the one-way analysis."""
        if self.nested is not None:
            r, i = self.nested.repeatability, self.nested.intermediate
            mean_why = no_relative_sd(self.mean)
            return ((r.rsd_pct, r.rsd_upper_pct, mean_why or self.nested.reason or r.reason),
                    (i.rsd_pct, i.rsd_upper_pct, mean_why or self.nested.reason or i.reason))
        b = self.rsd_upper_bounds
        return ((self.repeatability_rsd_pct, None if b is None else b.repeatability_rsd_upper_pct, self.reason),
                (self.intermediate_rsd_pct, None if b is None else b.intermediate_rsd_upper_pct, self.reason))

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


@dataclass(frozen=True)
class PrecisionResult:
    """The precision of one analyte: one entry per level, in increasing order (results.json ``precision``)."""

    levels: tuple[PrecisionLevel, ...]


def _sd_ci(sd, df, alpha):
    if df is None or not np.isfinite(df) or df <= 0:
        return None
    lo = sd * np.sqrt(df / chi2_ppf(1 - alpha / 2, df))
    hi = sd * np.sqrt(df / chi2_ppf(alpha / 2, df))
    return ConfidenceInterval(float(lo), float(hi), 1 - alpha)


def assess_precision_level(level, values, series, *, alpha=0.05, unit="", offset=0.0, design=None,
                           factors=(), claims=(None, None), bounds=False, claim_levels=(1, 1),
                           sd_claims=(None, None), reference=None, reference_levels=1, sources=()) -> PrecisionLevel:
    """Repeatability, between-series and intermediate precision at one level.

    Notes
    -----
    s_r^2 = MS_within; s_L^2 = (MS_between - MS_within)/n0, set to 0 when
    negative; s_I^2 = s_r^2 + s_L^2. RSDs relative to the grand mean.
    CI of s_r from chi^2 with N - p df; CI of s_I from chi^2 with
    Satterthwaite's effective df
    nu = (s_I^2)^2 / [ (MS_b/n0)^2/(p-1) + ((1 - 1/n0) MS_w)^2/(N-p) ]
    [ISO5725-2], [Satterthwaite].

    With ``design`` (factor names, outermost first) and ``factors`` (their labels per
    result), the nested variance components of
    :func:`validator.maths.variance_components.nested_variance_components` are added
    (``nested``): ANOVA for balanced designs, REML otherwise; intervals on repeatability
    (chi-square) and on sums of components (modified large-sample [BG] and Satterthwaite);
    one-sided upper RSD bounds. ``claims`` (claimed repeatability and within-laboratory
    RSD, %) are verified by the upper verification limit [EP15], from the nested estimates
    when declared, else the one-way ones; ``claim_levels`` is the number of levels with a
    repeatability and with a within-laboratory claim (the Bonferroni division of alpha).
    ``bounds`` adds the one-way upper RSD bounds. ``sd_claims`` are claims as SDs (a level's SD
    claim takes precedence over an RSD claim of the same quantity). ``reference`` (target value,
    its standard uncertainty, its df or None) adds the EP15 verification of the bias
    (:class:`TruenessCheck`), ``reference_levels`` being the number of levels with a target value.
    ``sources`` (one :class:`~validator._common.SourceRow` per value, or empty) name where each
    result flagged by an outlier test was read (``flagged``).
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
    if no_relative_sd(mean):
        notes.append(no_relative_sd(mean))
    rsd = (lambda sd: 100 * sd / mean if not no_relative_sd(mean) and np.isfinite(sd) else None)
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
    nested = None
    if design:
        nested = _nested(np.asarray(values, dtype=float) + offset, mean, [list(f) for f in factors], design, alpha)
    upper = None
    if bounds and nested is None:
        r_upper = _upper_rsd(sr, a.df_within if a.df_within > 0 else None, mean, alpha)
        upper = RsdUpperBounds(r_upper, _intermediate_upper_rsd(a, si2, r_upper, mean, alpha), 1.0 - alpha,
                               "; ".join(notes))
    checks = None
    if any(c is not None for c in tuple(claims) + tuple(sd_claims)):
        if nested is not None:
            r, i = nested.repeatability, nested.intermediate
            checks = _claims(claims, mean, r.sd, r.df, i.sd, i.df, i.reason, alpha, claim_levels, sd_claims)
        else:
            checks = _claims(claims, mean, sr if np.isfinite(sr) else None, a.df_within or None,
                             si if np.isfinite(si) else None, df_i, "; ".join(notes), alpha, claim_levels, sd_claims)
    trueness = None
    if reference is not None:
        # the grand mean's standard error from the series, or from the outermost factor of a declared design
        groups = list(factors[0]) if design and len(factors) else list(series)
        trueness = _trueness(values, groups, mean, reference, alpha, reference_levels, offset)
    counts = {}
    for label in series:
        counts[label] = counts.get(label, 0) + 1
    tests = {"cochran": cochran_c(values, series, alpha), "grubbs": grubbs_means(values, series, alpha),
             "grubbs_double": grubbs_double(values, series, alpha)}
    within = grubbs_within_series(values, series, alpha, offset)
    return PrecisionLevel(
        level=float(level), series=a.groups, n=a.n, mean=mean, anova=a, repeatability_sd=sr,
        repeatability_rsd_pct=rsd(sr), between_series_sd=sl, between_clamped=clamped, intermediate_sd=si,
        intermediate_rsd_pct=rsd(si),
        repeatability_sd_ci=_sd_ci(sr, a.df_within, alpha) if np.isfinite(sr) else None,
        intermediate_sd_ci=_sd_ci(si, df_i, alpha) if np.isfinite(si) else None, intermediate_df=df_i,
        cochran=tests["cochran"], grubbs=tests["grubbs"], grubbs_double=tests["grubbs_double"], grubbs_within=within,
        flagged=_flagged(values, series, offset, sources, alpha,
                         list(tests.items()) + [("grubbs_within_series", t) for t in within]),
        horrat=horrat, horwitz_prsd_pct=prsd,
        horwitz_note=note, reason="; ".join(notes), rsd_upper_bounds=upper, nested=nested, claims=checks,
        trueness=trueness, fewest_results_per_series=min(counts.values()) if counts else 0)


def _flagged(values, series, offset, sources, alpha, tests) -> tuple[FlaggedResult, ...]:
    """Each result that a test of ``tests`` ((results.json key, OutlierTest) pairs) flags at p < alpha,
    in input order, with the keys of the tests that flag it and its source (``sources[i]``, when given).
    The value is the centred result plus ``offset`` to 12 significant digits (as the suspect's text)."""
    by_position: dict[int, list[str]] = {}
    for key, t in tests:
        if t is not None and t.pvalue is not None and t.pvalue < alpha:
            for i in t.positions:
                names = by_position.setdefault(i, [])
                if key not in names:
                    names.append(key)
    y = np.asarray(values, dtype=float)
    return tuple(FlaggedResult(value=float(f"{y[i] + offset:.12g}"), series=str(series[i]), tests=tuple(by_position[i]),
                               source=sources[i] if len(sources) == len(y) else None)
                 for i in sorted(by_position))


NO_SPREAD = ("the results show no spread at all (SD exactly 0): the spread is below the resolution of the "
             "reported values, so precision is not shown; report the results with more digits")


def precision_criteria(lv: PrecisionLevel, limits: tuple, *, on_intervals: bool = False, alpha: float = 0.05) -> tuple:
    """Repeatability and intermediate RSD of one level against their maxima, and claim verifications.

    On the estimate basis (default) the RSDs themselves are judged; on the interval basis
    ([criteria] judge_on = "interval") their one-sided upper (1 - alpha) confidence bounds.
    The other basis is stated in the criterion's note whenever it was computed. With a
    declared nested design the RSDs are the design's repeatability and intermediate
    precision (all components).
    """
    (r_rsd, r_up, r_why), (i_rsd, i_up, i_why) = lv.decisive
    # an RSD of exactly 0 shows no precision: the spread is below the resolution of the reported
    # results (rounded or censored values), so it is not judged (not shown is not passed)
    if r_rsd == 0:
        r_rsd, r_up, r_why = None, None, NO_SPREAD
    if i_rsd == 0:
        i_rsd, i_up, i_why = None, None, NO_SPREAD
    out = []
    r_max, i_max = limits
    conf = level_label(1 - alpha)
    shown_both = on_intervals or lv.nested is not None
    for kind, label, value, bound, why, limit in (
            ("repeatability", "repeatability RSD", r_rsd, r_up, r_why, r_max),
            ("intermediate", "intermediate precision RSD", i_rsd, i_up, i_why, i_max)):
        if limit is None:
            continue
        if not shown_both:     # the criterion as written before interval judging existed
            out.append(Criterion(f"{kind}-rsd-{lv.level:g}", f"{label} at level {lv.level:g} at most {limit:g} %",
                                 value, limit, at_most(value, limit),
                                 "" if value is not None else f"not applicable: {why or 'the RSD does not exist'}"))
            continue
        judged = bound if on_intervals else value
        other = value if on_intervals else bound
        other_text = ("does not exist" if other is None else
                      f"is {other:.4g} % ({'met' if at_most(other, limit) else 'not met'} on that basis)")
        note = (f"judged on the {'upper confidence bound' if on_intervals else 'point estimate'}; the "
                f"{'point estimate' if on_intervals else f'upper {conf} bound'} {other_text}")
        if judged is None:
            note = f"not applicable: {why or 'the value does not exist'}; " + note
        description = (f"upper {conf} confidence bound of the {label} at level {lv.level:g} at most {limit:g} %"
                       if on_intervals else f"{label} at level {lv.level:g} at most {limit:g} %")
        out.append(Criterion(f"{kind}-rsd-{lv.level:g}", description, judged, limit, at_most(judged, limit), note))
    for c in lv.claims or ():
        claimed = (f"{c.claimed_rsd_pct:g} % RSD" if c.claimed_as == "RSD" else f"SD {c.claimed_sd:g}")
        description = (f"{c.quantity} SD at level {lv.level:g} at most the upper verification limit of the claimed "
                       f"{claimed} (CLSI EP15)")
        cid = f"{'repeatability' if c.quantity == 'repeatability' else 'within-laboratory'}-claim-{lv.level:g}"
        if c.observed_sd == 0:
            out.append(Criterion(cid, description, None, c.upper_verification_limit, None,
                                 f"not applicable: {NO_SPREAD}"))
            continue
        out.append(Criterion(cid, description, c.observed_sd, c.upper_verification_limit, c.verified,
                             c.basis if c.verified is not None else f"not applicable: {c.reason}"))
    t = lv.trueness
    if t is not None:
        half = None if t.verification_interval is None else t.multiplier * t.combined_standard_error
        out.append(Criterion(
            f"trueness-{lv.level:g}", f"|mean - reference value {t.reference_value:g}| at level {lv.level:g} at most "
            "the half-width of the verification interval (CLSI EP15)", abs(t.bias), half,
            None if t.verified is None else at_most(abs(t.bias), half),
            t.basis if t.verified is not None else f"not applicable: {t.reason}"))
    return tuple(out)


def design_criteria(lv: PrecisionLevel, min_series: int | None, min_replicates: int | None) -> tuple:
    """The precision design at one level against its declared minimums (CLSI EP15-A3's 5 x 5, by its
    preset): ``precision-series-<level>`` (series at least ``min_series``) and
    ``precision-replicates-<level>`` (the fewest results in a series at least ``min_replicates``)."""
    out = []
    if min_series is not None:
        out.append(Criterion(f"precision-series-{lv.level:g}", f"precision design at level {lv.level:g}: at least "
                             f"{min_series} series (days or runs)", lv.series, min_series, at_least(lv.series, min_series)))
    if min_replicates is not None:
        out.append(Criterion(f"precision-replicates-{lv.level:g}", f"precision design at level {lv.level:g}: at "
                             f"least {min_replicates} results in every series", lv.fewest_results_per_series,
                             min_replicates, at_least(lv.fewest_results_per_series, min_replicates)))
    return tuple(out)


def levels_criterion(result: PrecisionResult, min_levels: int | None) -> tuple:
    """``precision-levels``: the levels (samples) of the precision experiment at least ``min_levels``."""
    if min_levels is None:
        return ()
    n = len(result.levels)
    return (Criterion("precision-levels", f"precision design: at least {min_levels} levels (samples)", n,
                      min_levels, at_least(n, min_levels)),)
