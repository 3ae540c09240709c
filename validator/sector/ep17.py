"""Detection capability the CLSI EP17-A2 way: limit of blank, limit of detection, limit of quantitation.

What is implemented
-------------------
* Limit of blank (LoB), non-parametric (rank interpolation) or parametric
  (mean + c_p SD), for each reagent lot. The reported LoB follows the lot rule
  of EP17-A2 (from memory: sec. 5.3.3.1): with two or three reagent lots, the
  largest of the lots' values; with four or more, one estimate from all lots'
  results combined; with one lot, that lot's value.
* Limit of detection (LoD) = LoB + c_p SD_L with SD_L pooled across the
  low-level samples of a lot; per lot, and reported by the same lot rule.
* Limit of quantitation (LoQ): the lowest tested level that meets an accuracy
  goal (a precision goal as CV, or a total-error goal |bias| + 2 SD, or both)
  *and above which every tested level meets it too*; never below the LoD.
* The design minimums are checked and reported as notes, never as errors:
  at least 60 blank and 60 low-level results per reagent lot to establish
  the limits, at least 20 to verify a claim, and at least two reagent lots to
  establish (from memory: EP17-A2 sec. 5.2 and 6). Below the verification
  minimum (20 results from 2 samples, :func:`verification_shortfall`) the
  limits are still computed but cannot be judged against a claim.

References
----------
.. [EP17] CLSI EP17-A2, Evaluation of Detection Capability for Clinical
   Laboratory Measurement Procedures; Approved Guideline, 2nd ed. (2012).
.. [Linnet] Linnet K., Kondratovich M. (2004). Partly nonparametric approach
   for determining the limit of detection. Clin. Chem. 50, 732-740.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np


from .._common import no_relative_sd, not_above, quiet_numpy
from ._shared import OUT_OF_RANGE, as_float_array, check_fraction, check_positive, mean_sd_cv
from ..maths.distributions import binom_ppf

__all__ = ["LotLimit", "LimitOfBlank", "LimitOfDetection", "QuantitationLevel", "LimitOfQuantitation",
           "coverage_factor", "nonparametric_percentile", "limit_of_blank", "limit_of_detection",
           "limit_of_quantitation", "MINIMUM_RESULTS_PER_LOT", "LOB_METHODS", "PURPOSES",
           "COMBINE_LOTS_FROM", "lot_rule", "verification_shortfall", "VERIFICATION_MINIMUM_RESULTS",
           "VERIFICATION_MINIMUM_SAMPLES", "AboveBlank", "above_blank", "minimum_count_above_blank"]

LOB_METHODS = ("nonparametric", "parametric")
PURPOSES = ("establishment", "verification")
# from memory: CLSI EP17-A2 sec. 5 (establishment: >= 60 blank and >= 60 low-level results per
# reagent lot, >= 2 lots) and sec. 6 (verification of a claim: >= 20 results)
MINIMUM_RESULTS_PER_LOT = {"establishment": 60, "verification": 20}
MINIMUM_LOTS = {"establishment": 2, "verification": 1}
# from memory: CLSI EP17-A2 sec. 6 (verification of a LoB or LoD claim): at least 20 results from
# at least 2 samples. Below this no LoB/LoD/LoQ claim can be judged (criteria not applicable).
VERIFICATION_MINIMUM_RESULTS = 20
VERIFICATION_MINIMUM_SAMPLES = 2
# from memory: EP17-A2 5.3.3.1 (and the LoD likewise): with 2 or 3 reagent lots the limit is
# computed per lot and the largest reported; with 4 or more the lots' results are combined into
# one estimate. (The standard's text was not available to check; a secondary summary of the
# section found in this work states the same rule.)
COMBINE_LOTS_FROM = 4
LOT_RULES = ("one lot", "largest lot", "lots combined")
COMBINED = "all lots"
# CLSI EP17-A2 prints 1.645, the standard normal 95th percentile rounded to three decimals
EP17_NORMAL_QUANTILE = 1.645


@dataclass(frozen=True)
class LotLimit:
    """One reagent lot's LoB or LoD.

    ``value`` is ``None`` exactly when ``reason`` says why. ``coverage_factor``
    is c_p (``None`` for the non-parametric LoB, whose ``rank`` is given instead).
    """

    lot: str
    value: float | None
    n_results: int
    n_samples: int
    mean: float | None = field(default=None, metadata={"null_reason": "mean_reason"})
    sd: float | None = None
    coverage_factor: float | None = field(default=None, metadata={"null_reason": "coverage_factor_reason"})
    rank: float | None = field(default=None, metadata={"null_reason": "rank_reason"})
    reason: str = ""
    # "nonparametric" or "parametric" (a LoB), "lod"; says why a statistic of another kind is null
    kind: str = field(default="", metadata={"json": None})

    @property
    def mean_reason(self) -> str:
        return ("the LoD pools the within-sample SDs of the low-level samples (SD_L); it uses no mean"
                if self.kind == "lod" else "")

    @property
    def coverage_factor_reason(self) -> str:
        return ("the non-parametric LoB is a rank-interpolated percentile; it uses no coverage factor"
                if self.kind == "nonparametric" else "")

    @property
    def rank_reason(self) -> str:
        return {"parametric": "the parametric LoB (mean + c_p SD) uses no rank",
                "lod": "the LoD (LoB + c_p SD_L) uses no rank"}.get(self.kind, "")


def _combined_reason(part) -> str:
    return ("" if part.lot_rule == "lots combined" else
            f"{len(part.lots)} reagent lot(s): the lots are combined only from {COMBINE_LOTS_FROM} lots "
            f"(CLSI EP17-A2); the reported value is {'the largest lot value' if len(part.lots) > 1 else 'the lot value'}")


@dataclass(frozen=True)
class LimitOfBlank:
    """The LoB of each lot and the reported value, by ``lot_rule``.

    ``lot_rule``: "one lot"; "largest lot" (2 or 3 lots: the largest lot LoB);
    "lots combined" (4 or more lots: ``combined``, one LoB from all results).
    ``combined`` is ``None`` unless the lots are combined.
    """

    method: str
    value: float | None
    lot_rule: str
    lots: tuple[LotLimit, ...]
    combined: LotLimit | None = field(default=None, metadata={"null_reason": "combined_reason"})
    percentile: float = 0.95
    purpose: str = "establishment"
    notes: tuple[str, ...] = ()
    reason: str = ""

    @property
    def combined_reason(self) -> str:
        return _combined_reason(self)


@dataclass(frozen=True)
class AboveBlank:
    """How many low-level results of one lot (or of all lots combined) lie above the LoB.

    ``minimum_count`` is the fewest results above the LoB consistent with the LoD's definition (95 %
    of a sample at the LoD above the LoB); ``passed`` is ``n_above >= minimum_count``.
    """

    lot: str
    n: int
    n_above: int
    fraction: float
    minimum_count: int
    passed: bool


@dataclass(frozen=True)
class LimitOfDetection:
    """The LoD of each lot and the reported value, by ``lot_rule`` (as for :class:`LimitOfBlank`)."""

    value: float | None
    limit_of_blank: float
    lot_rule: str
    lots: tuple[LotLimit, ...]
    combined: LotLimit | None = field(default=None, metadata={"null_reason": "combined_reason"})
    purpose: str = "establishment"
    notes: tuple[str, ...] = ()
    reason: str = ""
    # the low-level results above the LoB, per lot (all lots combined from COMBINE_LOTS_FROM lots)
    above_blank: tuple[AboveBlank, ...] = ()

    @property
    def combined_reason(self) -> str:
        return _combined_reason(self)

    @property
    def above_blank_passed(self) -> bool:
        """Every lot (or the lots combined) has at least the minimum count of results above the LoB."""
        return all(a.passed for a in self.above_blank)


@dataclass(frozen=True)
class QuantitationLevel:
    """Summary of one low-level sample for the LoQ."""

    sample: str
    nominal: float
    n: int
    mean: float | None
    sd: float | None
    cv_percent: float | None
    bias: float | None                  # mean - nominal
    total_error: float | None           # |bias| + 2 SD
    meets_goal: bool | None             # None when a needed statistic is missing
    reason: str = ""


@dataclass(frozen=True)
class LimitOfQuantitation:
    """The LoQ: the lowest level meeting the goal(s), with every higher level meeting them too."""

    value: float | None
    levels: tuple[QuantitationLevel, ...]
    max_cv_percent: float | None = field(metadata={"null_reason": "max_cv_percent_reason"})
    max_total_error: float | None = field(metadata={"null_reason": "max_total_error_reason"})
    limit_of_detection: float | None = field(metadata={"null_reason": "limit_of_detection_reason"})
    notes: tuple[str, ...] = ()
    reason: str = ""

    @property
    def max_cv_percent_reason(self) -> str:
        return "no precision goal (loq_max_cv_pct) was declared"

    @property
    def max_total_error_reason(self) -> str:
        return "no total-error goal (loq_max_total_error) was declared"

    @property
    def limit_of_detection_reason(self) -> str:
        return "no LoD was available to set the LoQ's floor"


def coverage_factor(n_results: int, n_samples: int, *, normal_quantile: float = EP17_NORMAL_QUANTILE) -> float:
    """c_p = z / (1 - 1 / (4 (N - K))) of CLSI EP17-A2.

    Parameters
    ----------
    n_results : int
        N, all results (blank results B for the LoB, low-level results L for the LoD).
    n_samples : int
        K, the number of samples they come from (J for the LoD).
    normal_quantile : float
        z; EP17-A2 uses 1.645 (beta = 0.05). Pass ``scipy.stats.norm.isf(beta)``
        for another error rate or the unrounded value.

    Notes
    -----
    The factor corrects the 95th percentile of the normal distribution for the
    bias of the SD estimated with N - K degrees of freedom.
    """
    if isinstance(n_results, bool) or not isinstance(n_results, (int, np.integer)) \
            or isinstance(n_samples, bool) or not isinstance(n_samples, (int, np.integer)):
        raise ValueError(f"coverage_factor: n_results and n_samples must be integers, "
                         f"got {n_results!r} and {n_samples!r}")
    if n_samples < 1 or n_results - n_samples < 1:
        raise ValueError(f"coverage_factor: needs n_samples >= 1 and n_results - n_samples >= 1, "
                         f"got n_results = {n_results!r}, n_samples = {n_samples!r}")
    z = check_positive(normal_quantile, "normal_quantile")
    return z / (1.0 - 1.0 / (4.0 * (n_results - n_samples)))


def nonparametric_percentile(values, percentile: float = 0.95) -> tuple[float | None, float, str]:
    """The EP17-A2 rank-interpolated percentile: ``(value, rank, reason)``.

    Notes
    -----
    Sort the N results; rank = 0.5 + p N (1-based); the value is interpolated
    linearly between the order statistics at floor(rank) and floor(rank) + 1.
    For N = 60, p = 0.95 the rank is 57.5: the mean of the 57th and 58th values.
    The value is ``None`` when the rank lies outside [1, N] (too few results).
    """
    p = check_fraction(percentile, "percentile")
    arr = np.sort(as_float_array(values, "values"))
    n = arr.size
    rank = 0.5 + p * n
    if n == 0 or rank < 1 or rank > n:
        need = math.ceil(0.5 / (1 - p))
        return None, rank, (f"rank 0.5 + {p:g} x {n} = {rank:g} lies outside 1..{n}: "
                            f"the non-parametric percentile needs at least {need} results")
    lower = int(math.floor(rank))
    frac = rank - lower
    if lower == n:
        return float(arr[n - 1]), rank, ""
    with quiet_numpy():
        value = float(arr[lower - 1] + frac * (arr[lower] - arr[lower - 1]))
    if not math.isfinite(value):
        return None, rank, OUT_OF_RANGE
    return value, rank, ""


def _labels(values, n: int, name: str, default: str) -> np.ndarray:
    if values is None:
        return np.full(n, default, dtype=object)
    arr = np.asarray([str(v) for v in values], dtype=object)
    if arr.size != n:
        raise ValueError(f"{name}: expected {n} labels (one per result), got {arr.size}")
    return arr


def _check_choice(value, name: str, allowed: tuple) -> str:
    if value not in allowed:
        raise ValueError(f"{name} must be one of {', '.join(map(repr, allowed))}, got {value!r}")
    return value


def _design_notes(kind: str, per_lot_counts: dict, purpose: str) -> list[str]:
    notes = []
    minimum = MINIMUM_RESULTS_PER_LOT[purpose]
    for lot, count in per_lot_counts.items():
        if count < minimum:
            notes.append(f"lot {lot}: {count} {kind} results, fewer than the {minimum} per reagent lot "
                         f"CLSI EP17-A2 asks for {purpose}")
    if len(per_lot_counts) < MINIMUM_LOTS[purpose]:
        notes.append(f"{len(per_lot_counts)} reagent lot(s), fewer than the {MINIMUM_LOTS[purpose]} "
                     f"CLSI EP17-A2 asks for {purpose}")
    return notes


def _pooled_sd(values: np.ndarray, samples: np.ndarray) -> tuple[float | None, int]:
    """Pooled within-sample SD and its degrees of freedom sum(n_i - 1)."""
    ss, df = 0.0, 0
    with quiet_numpy():
        for s in dict.fromkeys(samples):
            v = values[samples == s]
            if v.size >= 2:
                ss += float(np.sum((v - v.mean()) ** 2))
                df += v.size - 1
    return (math.sqrt(ss / df) if df > 0 else None), df


def lot_rule(n_lots: int) -> str:
    """How the lots' limits give the reported one (from memory: CLSI EP17-A2 sec. 5.3.3.1).

    "one lot"; "largest lot" for two or three lots (the largest lot value is reported);
    "lots combined" for four or more (one estimate from all the lots' results).
    """
    n = int(n_lots)
    return "one lot" if n <= 1 else ("largest lot" if n < COMBINE_LOTS_FROM else "lots combined")


def verification_shortfall(sample, lot, kind: str) -> str:
    """Why a design is below the EP17-A2 verification minimum, or "" when it is not.

    Parameters
    ----------
    sample, lot : sequence of labels
        The sample and reagent lot of each result.
    kind : str
        "blank" or "low-level", for the message.

    Notes
    -----
    Each estimate the reported limit is built on must rest on at least
    ``VERIFICATION_MINIMUM_RESULTS`` (20) results from at least
    ``VERIFICATION_MINIMUM_SAMPLES`` (2) samples (from memory: CLSI EP17-A2
    sec. 6): each lot with 1 to 3 lots, all lots together with 4 or more
    (:func:`lot_rule`).
    """
    samples = np.asarray([str(v) for v in sample], dtype=object)
    lots = np.asarray([str(v) for v in lot], dtype=object)
    if samples.size != lots.size:
        raise ValueError(f"sample and lot must pair up, got {samples.size} and {lots.size} labels")
    names = list(dict.fromkeys(lots))
    groups = ([(COMBINED, np.ones(lots.size, dtype=bool))] if lot_rule(len(names)) == "lots combined"
              else [(f"lot {n}", lots == n) for n in names])
    if not groups:
        return f"no {kind} results"
    for name, mask in groups:
        n, k = int(mask.sum()), len(set(samples[mask]))
        if n < VERIFICATION_MINIMUM_RESULTS or k < VERIFICATION_MINIMUM_SAMPLES:
            return (f"{name}: {n} {kind} results from {k} sample(s), below the CLSI EP17-A2 verification minimum "
                    f"of {VERIFICATION_MINIMUM_RESULTS} results from {VERIFICATION_MINIMUM_SAMPLES} samples "
                    "(from memory: EP17-A2 sec. 6)")
    return ""


# the LoD's definition: a sample at the LoD gives results above the LoB with probability 1 - beta = 0.95;
# an observed count is accepted unless it is significantly (one-sided 5 %) below that
ABOVE_BLANK_PROPORTION = 0.95
ABOVE_BLANK_ALPHA = 0.05


def minimum_count_above_blank(n: int) -> int:
    """The fewest of ``n`` low-level results above the LoB that still verify an LoD.

    Notes
    -----
    The smallest k with P(X <= k) >= 0.05 for X ~ Binomial(n, 0.95): fewer results above the LoB
    are significantly (one-sided, 5 %) below the 95 % the LoD's definition requires. This gives
    17 of 20 (85 %), 26 of 30, 36 of 40 and 54 of 60 (from memory: the table of minimum
    proportions of CLSI EP17-A2 for verifying an LoD claim, sec. 6, lists 85 % for 20 results).
    """
    if n < 1:
        raise ValueError(f"minimum_count_above_blank: n must be >= 1, got {n!r}")
    return int(binom_ppf(ABOVE_BLANK_ALPHA, n, ABOVE_BLANK_PROPORTION))


def above_blank(low_level_results, limit_of_blank: float, *, lot=None) -> tuple[AboveBlank, ...]:
    """Count the low-level results strictly above the LoB, per lot (by :func:`lot_rule`: all lots
    combined from four lots), each against :func:`minimum_count_above_blank`."""
    values = as_float_array(low_level_results, "low_level_results")
    lots = _labels(lot, values.size, "lot", "1")
    names = list(dict.fromkeys(lots))
    groups = ([(COMBINED, np.ones(values.size, dtype=bool))] if lot_rule(len(names)) == "lots combined"
              else [(str(n), lots == n) for n in names])
    out = []
    for name, mask in groups:
        n = int(mask.sum())
        k = int(np.sum(values[mask] > limit_of_blank))
        need = minimum_count_above_blank(n)
        out.append(AboveBlank(name, n, k, k / n, need, k >= need))
    return tuple(out)


def _lob_of(name: str, v: np.ndarray, s: np.ndarray, method: str, p: float, normal_quantile: float) -> LotLimit:
    """The LoB of one set of blank results (one lot, or all lots combined)."""
    k = len(set(s))
    summary = mean_sd_cv(v)
    if method == "nonparametric":
        val, rank, why = nonparametric_percentile(v, p)
        return LotLimit(name, val, int(v.size), k, summary.mean, summary.sd, None, rank, why, kind=method)
    if v.size - k < 1 or summary.sd is None:
        return LotLimit(name, None, int(v.size), k, summary.mean, summary.sd, kind=method, reason=(
            f"{v.size} blank results from {k} samples: the parametric LoB needs more results than samples"))
    if summary.sd == 0:
        return LotLimit(name, None, int(v.size), k, summary.mean, summary.sd, kind=method, reason=(
            f"the {v.size} blank results are all {summary.mean:g} (SD 0): such data are censored or identical, "
            "so mean + c_p SD estimates no percentile; the non-parametric LoB is the CLSI EP17-A2 route "
            "(method = \"nonparametric\")"))
    cp = coverage_factor(int(v.size), k, normal_quantile=normal_quantile)
    value = summary.mean + cp * summary.sd
    if not math.isfinite(value):
        return LotLimit(name, None, int(v.size), k, reason=OUT_OF_RANGE, kind=method)
    return LotLimit(name, value, int(v.size), k, summary.mean, summary.sd, cp, kind=method)


def _reported(results: list, combined: LotLimit | None, what: str) -> tuple[float | None, str]:
    """The reported value and its reason: the combined estimate, else the largest lot value."""
    if combined is not None:
        return combined.value, ("" if combined.value is not None else
                                f"no {what} from the lots combined: {combined.reason}")
    missing = [r for r in results if r.value is None]
    if missing:
        return None, f"no {what} for lot {missing[0].lot}: {missing[0].reason}"
    return max(r.value for r in results), ""


def limit_of_blank(blank_results, *, method: str = "nonparametric", sample=None, lot=None,
                   percentile: float = 0.95, normal_quantile: float = EP17_NORMAL_QUANTILE,
                   purpose: str = "establishment") -> LimitOfBlank:
    """Limit of blank per reagent lot and the reported value (CLSI EP17-A2).

    Parameters
    ----------
    blank_results : sequence of float
        Measured results of blank samples (concentration units).
    method : {"nonparametric", "parametric"}
    sample, lot : sequence of labels, optional
        The blank sample and the reagent lot of each result (one sample, one lot if omitted).
    percentile : float
        1 - alpha for the non-parametric rank (0.95 in EP17-A2).
    normal_quantile : float
        z of the parametric c_p (1.645 in EP17-A2).
    purpose : {"establishment", "verification"}
        Only selects the design minimums that are checked.

    Notes
    -----
    Non-parametric: rank = 0.5 + p B over the B sorted results of a lot,
    interpolated between neighbouring order statistics (see
    :func:`nonparametric_percentile`).
    Parametric: LoB = M_B + c_p SD_B with M_B, SD_B the mean and SD of all B
    blank results of the lot and c_p = z / (1 - 1/(4 (B - K))), K the number of
    blank samples (from memory: EP17-A2 sec. 5.3.3.2). Blank results with SD 0
    (all equal, e.g. censored at zero) give no parametric LoB (value ``None``
    with the reason): the non-parametric LoB is the route for such data.
    The reported LoB (see :func:`lot_rule`): with 2 or 3 lots the largest lot
    LoB (``None`` if any lot's is); with 4 or more lots the LoB of all lots'
    results combined (``combined``; K then counts the distinct sample labels
    over all lots, so a sample measured on several lots is one sample).
    """
    _check_choice(method, "method", LOB_METHODS)
    _check_choice(purpose, "purpose", PURPOSES)
    p = check_fraction(percentile, "percentile")
    check_positive(normal_quantile, "normal_quantile")
    values = as_float_array(blank_results, "blank_results")
    samples = _labels(sample, values.size, "sample", "blank")
    lots = _labels(lot, values.size, "lot", "1")
    results, counts = [], {}
    for name in dict.fromkeys(lots):
        mask = lots == name
        counts[name] = int(mask.sum())
        results.append(_lob_of(name, values[mask], samples[mask], method, p, normal_quantile))
    notes = tuple(_design_notes("blank", counts, purpose))
    rule = lot_rule(len(results))
    if not results:
        return LimitOfBlank(method=method, value=None, lot_rule=rule, lots=(), percentile=p, purpose=purpose,
                            notes=notes, reason="no blank results")
    combined = (_lob_of(COMBINED, values, samples, method, p, normal_quantile) if rule == "lots combined"
                else None)
    value, reason = _reported(results, combined, "LoB")
    return LimitOfBlank(method=method, value=value, lot_rule=rule, lots=tuple(results), combined=combined,
                        percentile=p, purpose=purpose, notes=notes, reason=reason)


def _lod_of(name: str, v: np.ndarray, s: np.ndarray, lob: float, normal_quantile: float) -> LotLimit:
    """The LoD of one set of low-level results (one lot, or all lots combined)."""
    j = len(set(s))
    sd, df = _pooled_sd(v, s)
    if sd is None or df < 1:
        return LotLimit(name, None, int(v.size), j, None, None, kind="lod", reason=(
            f"{v.size} low-level results from {j} samples: no sample has two results, so SD_L cannot be pooled"))
    if sd == 0:
        return LotLimit(name, None, int(v.size), j, None, sd, kind="lod", reason=(
            f"the {v.size} low-level results show no spread within any sample (SD_L = 0): identical results are "
            "below the resolution of the reported values, so LoB + c_p SD_L estimates no limit of detection"))
    cp = coverage_factor(int(v.size), j, normal_quantile=normal_quantile)
    value = float(lob) + cp * sd
    if not math.isfinite(value):
        return LotLimit(name, None, int(v.size), j, reason=OUT_OF_RANGE, kind="lod")
    return LotLimit(name, value, int(v.size), j, None, sd, cp, kind="lod")


def limit_of_detection(low_level_results, sample, limit_of_blank: float, *, lot=None,
                       normal_quantile: float = EP17_NORMAL_QUANTILE,
                       purpose: str = "establishment") -> LimitOfDetection:
    """Limit of detection per reagent lot and the reported value (CLSI EP17-A2, classical approach).

    Parameters
    ----------
    low_level_results : sequence of float
        Results of the low-level samples (concentration units).
    sample : sequence of labels
        The low-level sample of each result (J distinct samples).
    limit_of_blank : float
        The reported LoB (the same for every lot).
    lot : sequence of labels, optional

    Notes
    -----
    For each lot: SD_L = sqrt(sum_j (n_j - 1) s_j^2 / sum_j (n_j - 1)) pooled
    over the J low-level samples, c_p = z / (1 - 1/(4 (L - J))) with L the
    lot's number of low-level results, and LoD = LoB + c_p SD_L. The reported
    LoD follows :func:`lot_rule`: the largest lot LoD with 2 or 3 lots; with 4
    or more, SD_L pooled over all lots' results combined (a sample label
    measured on several lots is one sample, so lot-to-lot differences enter
    SD_L), L all results and J the distinct samples. The homogeneity of the
    samples' SDs (which pooling assumes) is not tested here. ``above_blank`` counts the low-level
    results above the LoB (:func:`above_blank`): by the LoD's definition at least 95 % of results of
    a sample at the LoD lie above the LoB, so too few above it means the low-level samples do not
    support an LoD (their SD describes samples indistinguishable from the blanks). Low-level results
    with no spread (SD_L = 0) give no LoD.
    """
    _check_choice(purpose, "purpose", PURPOSES)
    check_positive(normal_quantile, "normal_quantile")
    lob = limit_of_blank
    if isinstance(lob, bool) or not isinstance(lob, (int, float, np.integer, np.floating)) \
            or not math.isfinite(lob):
        raise ValueError(f"limit_of_blank must be a finite number, got {lob!r}")
    values = as_float_array(low_level_results, "low_level_results")
    if sample is None:
        raise ValueError("sample: the low-level sample of each result is required")
    samples = _labels(sample, values.size, "sample", "")
    lots = _labels(lot, values.size, "lot", "1")
    results, counts = [], {}
    for name in dict.fromkeys(lots):
        mask = lots == name
        counts[name] = int(mask.sum())
        results.append(_lod_of(name, values[mask], samples[mask], lob, normal_quantile))
    notes = tuple(_design_notes("low-level", counts, purpose))
    rule = lot_rule(len(results))
    if not results:
        return LimitOfDetection(value=None, limit_of_blank=float(lob), lot_rule=rule, lots=(), purpose=purpose,
                                notes=notes, reason="no low-level results")
    combined = _lod_of(COMBINED, values, samples, lob, normal_quantile) if rule == "lots combined" else None
    value, reason = _reported(results, combined, "LoD")
    return LimitOfDetection(value=value, limit_of_blank=float(lob), lot_rule=rule, lots=tuple(results),
                            combined=combined, purpose=purpose, notes=notes, reason=reason,
                            above_blank=above_blank(values, float(lob), lot=list(lots)))


def limit_of_quantitation(results, sample, nominal, *, max_cv_percent: float | None = None,
                          max_total_error: float | None = None,
                          limit_of_detection: float | None = None) -> LimitOfQuantitation:
    """Limit of quantitation from an accuracy goal (CLSI EP17-A2).

    Parameters
    ----------
    results : sequence of float
        Results of low-level samples (concentration units).
    sample : sequence of labels
        The sample of each result.
    nominal : sequence of float
        The assigned (reference) concentration of each result's sample; one
        value per sample.
    max_cv_percent : float, optional
        Precision goal: a level meets it when CV = 100 SD / mean <= goal (a level whose mean is
        not positive has no meaningful CV and does not meet it).
    max_total_error : float, optional
        Total-error goal in concentration units: |mean - nominal| + 2 SD <= goal.
    limit_of_detection : float, optional
        When given, the LoQ is never reported below it.

    Notes
    -----
    At least one goal is required; with both, a level must meet both. The
    LoQ is the nominal concentration of the lowest level that meets the goal
    and above which every tested level meets it too (a level that fails above
    a passing one is named in the notes). If that level lies below the LoD,
    the LoQ is the LoD (EP17-A2: LoQ >= LoD). A level's CV needs at least two
    results; a level without the needed statistic, or whose results are all
    equal (SD 0: no spread at all), breaks the run of passing levels.
    """
    if max_cv_percent is None and max_total_error is None:
        raise ValueError("limit_of_quantitation: give max_cv_percent, max_total_error or both, got neither")
    if max_cv_percent is not None:
        check_positive(max_cv_percent, "max_cv_percent")
    if max_total_error is not None:
        check_positive(max_total_error, "max_total_error")
    if limit_of_detection is not None and (isinstance(limit_of_detection, bool) or not isinstance(
            limit_of_detection, (int, float, np.integer, np.floating)) or not math.isfinite(limit_of_detection)):
        raise ValueError(f"limit_of_detection must be a finite number or None, got {limit_of_detection!r}")
    values = as_float_array(results, "results")
    nominals = as_float_array(nominal, "nominal")
    if nominals.size != values.size:
        raise ValueError(f"nominal: expected {values.size} values (one per result), got {nominals.size}")
    samples = _labels(sample, values.size, "sample", "")
    levels = []
    for s in dict.fromkeys(samples):
        mask = samples == s
        noms = set(nominals[mask].tolist())
        if len(noms) != 1:
            raise ValueError(f"nominal: sample {s!r} has several nominal values {sorted(noms)!r}; "
                             f"allowed: one per sample")
        nom = noms.pop()
        m = mean_sd_cv(values[mask])
        if m.mean is None:
            levels.append(QuantitationLevel(str(s), nom, m.n, None, None, None, None, None, None, OUT_OF_RANGE))
            continue
        bias = m.mean - nom
        te = None if m.sd is None else abs(bias) + 2.0 * m.sd
        if te is not None and not math.isfinite(te):
            te = None
        verdicts, why = [], []
        if max_cv_percent is not None:
            if m.cv_percent is None:
                why.append("CV needs two results" if m.sd is None else
                           f"CV: {no_relative_sd(m.mean) or OUT_OF_RANGE}")
                verdicts.append(None)
            else:
                verdicts.append(bool(not_above(m.cv_percent, max_cv_percent)))
        if max_total_error is not None:
            if te is None:
                why.append("total error needs two results")
                verdicts.append(None)
            else:
                verdicts.append(bool(not_above(te, max_total_error)))
        meets = None if None in verdicts else all(verdicts)
        if m.sd == 0:
            # identical results: the spread is below the resolution of the reported values, so neither a
            # CV of 0 nor a total error of |bias| shows the goal is met
            meets = None
            why.append(f"the {m.n} results are all {m.mean:g} (SD 0): no spread at all, so the accuracy goal "
                       "is not judged")
        levels.append(QuantitationLevel(str(s), nom, m.n, m.mean, m.sd, m.cv_percent, bias, te, meets,
                                        "; ".join(why)))
    levels.sort(key=lambda lv: lv.nominal)
    notes = []
    # walk down from the highest level while every level meets the goal
    loq_level = None
    for lv in reversed(levels):
        if lv.meets_goal:
            loq_level = lv
        else:
            break
    for lv in levels:
        if lv.meets_goal and (loq_level is None or lv.nominal < loq_level.nominal):
            notes.append(f"sample {lv.sample} (nominal {lv.nominal:g}) meets the goal but a higher "
                         f"level does not, so it does not set the LoQ")
    if loq_level is None:
        return LimitOfQuantitation(None, tuple(levels), max_cv_percent, max_total_error, limit_of_detection,
                                   tuple(notes), "the highest tested level does not meet the accuracy goal"
                                   if levels else "no results")
    value = loq_level.nominal
    if limit_of_detection is not None and value < limit_of_detection:
        notes.append(f"the lowest passing level {value:g} lies below the LoD {limit_of_detection:g}; "
                     f"the LoQ is set to the LoD")
        value = float(limit_of_detection)
    return LimitOfQuantitation(value, tuple(levels), max_cv_percent, max_total_error, limit_of_detection,
                               tuple(notes))
