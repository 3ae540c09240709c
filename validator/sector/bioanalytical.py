"""Bioanalytical validation per ICH M10: carry-over, selectivity, stability, dilution integrity,
incurred-sample reanalysis.

Every acceptance limit is a keyword parameter; its default and the section
it comes from are stated beside it. Section numbers and limits are given from
memory of the guideline (marked so), not read from its text in this session.

References
----------
.. [M10] ICH M10, Bioanalytical method validation and study sample analysis,
   final version (24 May 2022). Sec. 3 (chromatography): 3.2.1 selectivity,
   3.2.6 carry-over, 3.2.7 dilution integrity, 3.2.8 stability; sec. 4 (ligand
   binding assays); sec. 5 incurred sample reanalysis (from memory).
.. [Fieller] Fieller, E. C. (1954). J. R. Stat. Soc. B 16, 175-185.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np

from .._common import ConfidenceInterval, between, no_relative_sd, not_above, quiet_numpy
from ._shared import (check_count, labels, MAX_MAGNITUDE, NO_SPREAD_CV, OUT_OF_RANGE, as_float_array, check_fraction, check_level, check_positive, fieller_ratio_interval,
                      mean_sd_cv, t_quantile_two_sided)

__all__ = ["CarryOver", "CarryOverBlank", "carry_over", "SelectivityInjection", "SelectivityLot", "Selectivity", "selectivity", "Stability", "stability",
           "DilutionIntegrity", "dilution_integrity", "ReanalysedSample", "IncurredSampleReanalysis",
           "incurred_sample_reanalysis", "reanalysis_sample_count"]


def _at_least(count: int, total: int, fraction: float) -> bool:
    """count / total >= fraction, exactly (the fraction read as the decimal number it prints as)."""
    return Fraction(count, total) >= Fraction(repr(float(fraction)))


def _reference_mean(values, name: str) -> float:
    m = mean_sd_cv(as_float_array(values, name)).mean
    if m is None or m < 1 / MAX_MAGNITUDE:
        raise ValueError(f"{name}: expected responses with a positive mean of at least {1 / MAX_MAGNITUDE:g}, "
                         f"got mean {m!r}")
    return m


# ----------------------------------------------------------------------------- carry-over
@dataclass(frozen=True)
class CarryOverBlank:
    """One run's blank injected right after its highest calibrator (carry-over read from [[runs]]), or
    the reason the run has none, with the run's references it is compared with.

    ``lloq_response`` is the mean analyte response of the run's calibrators at its lowest level
    (the LLOQ); ``internal_standard_reference`` the mean IS response of the run's calibrators and
    QCs. % = 100 x blank response / reference.
    """

    run: str
    blank: str                            # the blank's sample name ("" when the run has none)
    type: str                             # "blank" (no IS), "zero" (IS only: analyte part only), "" when none
    file: str
    sheet: str | None = field(metadata={"omit_none": True})
    row: int | None                       # the blank's row
    after: str                            # the highest calibrator it follows ("" when none)
    after_row: int | None
    highest_level: float | None
    lloq_level: float | None
    lloq_injections: int
    lloq_response: float | None
    blank_response: float | None
    analyte_percent: float | None
    internal_standard_reference: float | None = field(metadata={"null_reason": "internal_standard_reason"})
    blank_internal_standard: float | None = field(metadata={"null_reason": "internal_standard_reason"})
    internal_standard_percent: float | None = field(metadata={"null_reason": "internal_standard_reason"})
    reason: str = ""
    # why this blank's IS part is not judged while its analyte part is (a zero sample, no IS area given)
    internal_standard_note: str = ""

    @property
    def internal_standard_reason(self) -> str:
        return (self.reason or self.internal_standard_note
                or "no internal standard is mapped, so the IS part is not judged")


@dataclass(frozen=True)
class CarryOver:
    """Blank responses after the highest calibrator, as % of the LLOQ (analyte) and IS responses.

    ``internal_standard_percent`` is ``None`` when no IS responses were given
    (the IS part is then not judged). ``data_from`` says where the responses came from: "file"
    (the [carry_over] data file) or "runs" (the [[runs]] sequences, each blank in ``run_blanks``);
    with no blank at all (runs without a blank right after the highest calibrator) the maxima and
    ``passed`` are ``None`` with ``reason``.
    """

    analyte_percent: tuple[float, ...]    # each blank injection, % of the mean LLOQ analyte response
    internal_standard_percent: tuple[float, ...] | None = field(metadata={"null_reason": "internal_standard_reason"})
    max_analyte_percent: float | None     # the largest of analyte_percent
    max_internal_standard_percent: float | None = field(metadata={"null_reason": "internal_standard_reason"})
    analyte_limit_percent: float = 20.0
    internal_standard_limit_percent: float = 5.0
    passed: bool | None = False
    reason: str = ""
    data_from: str = "file"
    run_blanks: tuple[CarryOverBlank, ...] = ()
    # from runs: why the IS part is not judged although the analyte part is ("" when it is, or no IS)
    internal_standard_note: str = ""

    @property
    def internal_standard_reason(self) -> str:
        return (self.reason or self.internal_standard_note
                or "no internal-standard responses were given, so the IS part is not judged")


def carry_over(blank_after_highest, lloq_response, *, blank_internal_standard=None,
               internal_standard_response=None, analyte_limit_percent: float = 20.0,
               internal_standard_limit_percent: float = 5.0) -> CarryOver:
    """Carry-over (ICH M10 sec. 3.2.6, from memory: analyte <= 20 % of LLOQ, IS <= 5 %).

    Parameters
    ----------
    blank_after_highest : sequence of float
        Analyte responses of the blank injection(s) following the highest calibrator.
    lloq_response : sequence of float
        Analyte responses of the LLOQ sample(s); their mean is the reference.
    blank_internal_standard, internal_standard_response : sequence of float, optional
        IS responses in the same blanks and the reference IS responses; both or neither.

    Notes
    -----
    % = 100 x blank response / mean reference response, per blank injection;
    passed when every blank is at or below its limit.
    """
    a_lim = check_positive(analyte_limit_percent, "analyte_limit_percent")
    i_lim = check_positive(internal_standard_limit_percent, "internal_standard_limit_percent")
    blanks = as_float_array(blank_after_highest, "blank_after_highest")
    if blanks.size == 0:
        raise ValueError("blank_after_highest: at least one blank response is needed, got none")
    ref = _reference_mean(lloq_response, "lloq_response")
    a_pct = tuple(float(v) for v in 100.0 * blanks / ref)
    if (blank_internal_standard is None) != (internal_standard_response is None):
        raise ValueError("blank_internal_standard and internal_standard_response: give both or neither")
    i_pct = None
    if blank_internal_standard is not None:
        ib = as_float_array(blank_internal_standard, "blank_internal_standard")
        if ib.size == 0:
            raise ValueError("blank_internal_standard: at least one IS response is needed, got none")
        iref = _reference_mean(internal_standard_response, "internal_standard_response")
        i_pct = tuple(float(v) for v in 100.0 * ib / iref)
    max_i = None if not i_pct else max(i_pct)
    passed = bool(not_above(max(a_pct), a_lim) and (max_i is None or not_above(max_i, i_lim)))
    return CarryOver(a_pct, i_pct, max(a_pct), max_i, a_lim, i_lim, passed)


# ----------------------------------------------------------------------------- selectivity
@dataclass(frozen=True)
class SelectivityLot:
    lot: str
    analyte_percent: float                # largest blank analyte response of the lot, % of LLOQ response
    internal_standard_percent: float | None = field(metadata={"null_reason": "internal_standard_reason"})
    passed: bool = False

    @property
    def internal_standard_reason(self) -> str:
        return "no internal-standard responses were given, so the IS part is not judged"


@dataclass(frozen=True)
class SelectivityInjection:
    """One matrix-blank injection of [[runs]] against the LLOQ of its own run (selectivity read from runs).

    ``lloq_response`` and ``internal_standard_reference`` are the mean analyte and IS responses of the
    run's calibrators at its lowest level; % = 100 x response / reference.
    """

    run: str
    lot: str
    sample: str
    file: str
    sheet: str | None = field(metadata={"omit_none": True})
    row: int
    response: float                       # the analyte response (area) of the matrix blank
    lloq_response: float
    analyte_percent: float
    internal_standard_response: float | None = field(metadata={"null_reason": "internal_standard_reason"})
    internal_standard_reference: float | None = field(metadata={"null_reason": "internal_standard_reason"})
    internal_standard_percent: float | None = field(metadata={"null_reason": "internal_standard_reason"})

    @property
    def internal_standard_reason(self) -> str:
        return "no internal standard is mapped, so the IS part is not judged"


@dataclass(frozen=True)
class Selectivity:
    """Blank-matrix lots: interference as % of the LLOQ and IS responses, and the fraction of lots passing.

    ``data_from``: "file" (the [selectivity] data file) or "runs" (matrix-blank injections of
    [[runs]], each against its own run's LLOQ, listed in ``injections``).
    """

    lots: tuple[SelectivityLot, ...]
    n_lots: int
    n_lots_passed: int
    fraction_passed: float
    min_fraction: float
    min_lots: int
    passed: bool | None
    reason: str = ""
    data_from: str = "file"
    injections: tuple[SelectivityInjection, ...] = ()


def _run_means(values, groups, own, name: str) -> np.ndarray:
    """For each label of ``own``, the mean of ``values`` whose label in ``groups`` is the same."""
    means = {}
    for g in dict.fromkeys(own):
        mask = groups == g
        if not mask.any():
            raise ValueError(f"{name}: no reference response for run {g!r}")
        means[g] = _reference_mean(values[mask], name)
    return np.array([means[g] for g in own], dtype=float)


def selectivity(blank_response, lot, lloq_response, *, blank_internal_standard=None,
                internal_standard_response=None, analyte_limit_percent: float = 20.0,
                internal_standard_limit_percent: float = 5.0, min_lots: int = 6,
                min_fraction: float = 1.0, run=None, lloq_run=None) -> Selectivity:
    """Selectivity from individual blank-matrix lots (ICH M10 sec. 3.2.1).

    Defaults (from memory: ICH M10 sec. 3.2.1, chromatography): at least 6
    lots; in each lot the response at the analyte's retention is <= 20 % of
    the LLOQ analyte response and at the IS's <= 5 % of the IS response, so
    ``min_fraction`` = 1 (every lot). Ligand-binding assays (sec. 4) use other
    designs (from memory: 10 lots, 80 % of lots); pass their values.

    ``run`` and ``lloq_run`` (both or neither) label the run of each blank and of each LLOQ
    response: each blank is then compared with the mean LLOQ (and IS) response of its own run.

    Notes
    -----
    Per lot the largest blank response is used (the worst injection), as
    100 x response / mean reference response. passed = (n_lots >= min_lots)
    and (lots passing / n_lots >= min_fraction); ``None`` with a reason when
    there are too few lots.
    """
    a_lim = check_positive(analyte_limit_percent, "analyte_limit_percent")
    i_lim = check_positive(internal_standard_limit_percent, "internal_standard_limit_percent")
    min_lots = check_count(min_lots, "min_lots")
    frac = check_fraction(min_fraction, "min_fraction", low_open=True, high_open=False)
    blanks = as_float_array(blank_response, "blank_response")
    if blanks.size == 0:
        raise ValueError("blank_response: at least one blank response is needed, got none")
    lots = labels(lot, blanks.size, "lot")
    if (run is None) != (lloq_run is None):
        raise ValueError("run and lloq_run: give both or neither")
    lloq = as_float_array(lloq_response, "lloq_response")
    if run is None:
        ref = np.full(blanks.size, _reference_mean(lloq, "lloq_response"))
    else:
        own, groups = labels(run, blanks.size, "run"), labels(lloq_run, lloq.size, "lloq_run")
        ref = _run_means(lloq, groups, own, "lloq_response")
    if (blank_internal_standard is None) != (internal_standard_response is None):
        raise ValueError("blank_internal_standard and internal_standard_response: give both or neither")
    ib = iref = None
    if blank_internal_standard is not None:
        ib = as_float_array(blank_internal_standard, "blank_internal_standard")
        if ib.size != blanks.size:
            raise ValueError(f"blank_internal_standard: expected {blanks.size} values, got {ib.size}")
        istd = as_float_array(internal_standard_response, "internal_standard_response")
        iref = (np.full(blanks.size, _reference_mean(istd, "internal_standard_response")) if run is None
                else _run_means(istd, groups, own, "internal_standard_response"))
    rows = []
    for name in dict.fromkeys(lots):
        mask = lots == name
        a_pct = float((100.0 * blanks[mask] / ref[mask]).max())
        i_pct = None if ib is None else float((100.0 * ib[mask] / iref[mask]).max())
        ok = bool(not_above(a_pct, a_lim) and (i_pct is None or not_above(i_pct, i_lim)))
        rows.append(SelectivityLot(str(name), a_pct, i_pct, ok))
    n_pass = sum(r.passed for r in rows)
    fraction = n_pass / len(rows)
    if len(rows) < min_lots:
        return Selectivity(tuple(rows), len(rows), n_pass, fraction, frac, min_lots, None,
                           f"{len(rows)} blank-matrix lots, at least {min_lots} needed")
    return Selectivity(tuple(rows), len(rows), n_pass, fraction, frac, min_lots,
                       _at_least(n_pass, len(rows), frac))


# ----------------------------------------------------------------------------- stability
JUDGEMENTS = ("estimate", "interval")


@dataclass(frozen=True)
class Stability:
    """One stability condition at one QC level: % deviation of the mean from its reference, with a CI.

    ``reference`` is "nominal" or "fresh". ``interval`` is on the % deviation
    scale: a t interval against a nominal value, Fieller's interval for the
    ratio of means against freshly prepared samples. Fields are ``None``
    exactly when ``reason`` says why.
    """

    condition: str
    reference: str
    n: int
    mean: float | None
    reference_mean: float | None
    deviation_percent: float | None
    interval: ConfidenceInterval | None = field(metadata={"interval": "null"})
    df: float | None
    limit_percent: float
    judged_on: str
    passed: bool | None
    reason: str = ""


def stability(stored, *, nominal: float | None = None, fresh=None, condition: str = "",
              limit_percent: float = 15.0, level: float = 0.95, judged_on: str = "estimate",
              min_replicates: int = 3) -> Stability:
    """Stability of one condition (bench-top, freeze-thaw, long-term, processed) at one QC level.

    Parameters
    ----------
    stored : sequence of float
        Concentrations measured after storage.
    nominal : float, optional
        Compare with the nominal concentration ...
    fresh : sequence of float, optional
        ... or with freshly prepared samples (exactly one of the two).
    limit_percent : float
        ICH M10 sec. 3.2.8 (from memory): the mean within +/-15 % of nominal.
    judged_on : {"estimate", "interval"}
        "estimate" (ICH M10 practice): |deviation| <= limit. "interval": the
        whole confidence interval lies within +/-limit (stricter).
    min_replicates : int
        From memory: ICH M10 sec. 3.2.8 asks for at least 3 QCs per level.

    Notes
    -----
    Against nominal: deviation = 100 (mean / nominal - 1), interval
    100 ((mean +/- t(n-1) s / sqrt(n)) / nominal - 1).
    Against fresh: deviation = 100 (R - 1), R = mean_stored / mean_fresh, with
    Fieller's interval for R (variances s^2/n of each mean, covariance 0) and
    the Welch-Satterthwaite df of mean_stored - R mean_fresh at the estimate
    (approximate). Too few results give ``passed = None`` with a reason; so do, on the
    interval basis, identical results (SD exactly 0, stored or fresh): their interval has
    no width because the spread is below the resolution of the values, not because it is small.
    """
    if (nominal is None) == (fresh is None):
        raise ValueError("stability: give exactly one of nominal and fresh")
    lim = check_positive(limit_percent, "limit_percent")
    lv = check_level(level)
    if judged_on not in JUDGEMENTS:
        raise ValueError(f"judged_on must be one of {JUDGEMENTS!r}, got {judged_on!r}")
    min_rep = check_count(min_replicates, "min_replicates", 2)
    x = as_float_array(stored, "stored")
    nom = check_positive(nominal, "nominal") if nominal is not None else None
    fresh_values = as_float_array(fresh, "fresh") if fresh is not None else None
    s = mean_sd_cv(x)
    reference = "nominal" if nominal is not None else "fresh"
    f_summary = mean_sd_cv(fresh_values) if fresh_values is not None else None

    def no_spread() -> str:
        """Why an interval from identical results shows nothing ("" when both sets have spread)."""
        sets = [("stored", s)] + ([("fresh", f_summary)] if f_summary is not None else [])
        flat = [name for name, m in sets if m.sd == 0]
        if not flat:
            return ""
        return (f"the {' and '.join(flat)} results show no spread at all (SD exactly 0): the spread is below the "
                "resolution of the reported values, so a confidence interval of zero width shows nothing")

    def result(ref_mean, dev, ci, df, reason="", interval_reason=""):
        passed = None
        if dev is not None and not math.isfinite(dev):
            dev, ci, reason = None, None, OUT_OF_RANGE
        if ci is not None and not (math.isfinite(ci.low) and math.isfinite(ci.high)):
            ci = None
        if not reason:
            if s.n < min_rep:
                reason = f"{s.n} stored results, at least {min_rep} needed"
            elif judged_on == "estimate":
                passed = bool(not_above(abs(dev), lim))
            elif ci is None:
                reason = interval_reason or "no confidence interval to judge on"
            elif no_spread():
                reason = no_spread()
            else:
                passed = between(ci.low, -lim, lim) and between(ci.high, -lim, lim)
        return Stability(condition, reference, s.n, s.mean, ref_mean, dev, ci, df, lim, judged_on, passed,
                         reason or interval_reason)

    if s.n < 2:
        return result(None, None, None, None, f"{s.n} stored result(s): a mean and its interval need two")
    if s.mean is None or s.sd is None:
        return result(None, None, None, None, OUT_OF_RANGE)
    if nom is not None:
        df = float(s.n - 1)
        half = t_quantile_two_sided(lv, df) * s.sd / math.sqrt(s.n)
        ci = ConfidenceInterval(100 * ((s.mean - half) / nom - 1), 100 * ((s.mean + half) / nom - 1), lv)
        return result(nom, 100 * (s.mean / nom - 1), ci, df)
    f = mean_sd_cv(fresh_values)
    if f.n >= 2 and (f.mean is None or f.sd is None):
        return result(None, None, None, None, OUT_OF_RANGE)
    if f.n < 2:
        return result(f.mean, None, None, None, f"{f.n} fresh result(s): at least two are needed")
    if f.mean <= 0:
        return result(f.mean, None, None, None, "the fresh samples' mean is not positive")
    with quiet_numpy():
        r = s.mean / f.mean
        v1, v2 = np.square(s.sd) / s.n, np.square(f.sd) / f.n
        den = np.square(v1) / (s.n - 1) + np.square(r * r * v2) / (f.n - 1)
        df = float(np.square(v1 + r * r * v2) / den) if den > 0 else float(s.n + f.n - 2)
    if not all(math.isfinite(v) for v in (r, v1, v2, df)):
        return result(f.mean, None, None, None,
                      "the data lie outside the floating-point range this computation can handle")
    ci_r, why = fieller_ratio_interval(s.mean, f.mean, v1, v2, 0.0, t_quantile_two_sided(lv, df), lv)
    ci = None if ci_r is None else ConfidenceInterval(100 * (ci_r.low - 1), 100 * (ci_r.high - 1), lv)
    return result(f.mean, 100 * (r - 1), ci, df, interval_reason=why)


# ----------------------------------------------------------------------------- dilution integrity
@dataclass(frozen=True)
class DilutionIntegrity:
    """Diluted over-range QCs after multiplying by the dilution factor.

    ``accuracy_passed`` and ``cv_passed`` judge the two parts apart: a mean bias beyond its limit
    fails even when the CV cannot be computed. ``passed`` is ``False`` when either part fails,
    ``None`` when neither fails but one is not judged (``reason`` for the whole level,
    ``cv_reason`` for the CV alone), else ``True``.
    """

    dilution_factor: float
    nominal: float
    n: int
    back_calculated: tuple[float, ...]   # measured x dilution factor
    mean: float | None
    accuracy_percent: float | None       # 100 mean / nominal
    bias_percent: float | None
    cv_percent: float | None = field(metadata={"null_reason": "cv_reason"})
    max_bias_percent: float = 15.0
    max_cv_percent: float = 15.0
    passed: bool | None = None
    reason: str = ""
    accuracy_passed: bool | None = None
    cv_passed: bool | None = field(default=None, metadata={"null_reason": "cv_reason"})
    cv_reason: str = ""


def dilution_integrity(measured_in_diluted, dilution_factor: float, nominal: float, *,
                       max_bias_percent: float = 15.0, max_cv_percent: float = 15.0,
                       min_replicates: int = 5) -> DilutionIntegrity:
    """Dilution integrity (ICH M10 sec. 3.2.7, from memory: >= 5 replicates per factor, mean accuracy
    within +/-15 %, CV <= 15 %).

    Parameters
    ----------
    measured_in_diluted : sequence of float
        Concentrations measured in the diluted samples (before the factor).
    dilution_factor : float
        Factor >= 1 applied to the measured value.
    nominal : float
        Nominal concentration of the undiluted over-range QC.

    Notes
    -----
    back-calculated = measured x factor; accuracy = 100 mean / nominal;
    CV = 100 SD / mean. With at least ``min_replicates`` results the accuracy is
    judged whenever the mean exists; the CV is not judged when the mean is zero
    (CV undefined) or the results are identical (SD exactly 0: no spread at all,
    below the resolution of the values, as precision on main).
    """
    factor = check_positive(dilution_factor, "dilution_factor")
    if factor < 1:
        raise ValueError(f"dilution_factor must be >= 1, got {dilution_factor!r}")
    nom = check_positive(nominal, "nominal")
    b_lim = check_positive(max_bias_percent, "max_bias_percent")
    c_lim = check_positive(max_cv_percent, "max_cv_percent")
    min_rep = check_count(min_replicates, "min_replicates", 2)
    with quiet_numpy():
        back = as_float_array(measured_in_diluted, "measured_in_diluted") * factor
    s = mean_sd_cv(back)
    common = dict(dilution_factor=factor, nominal=nom, n=s.n, back_calculated=tuple(float(v) for v in back),
                  max_bias_percent=b_lim, max_cv_percent=c_lim)
    if s.n == 0:
        return DilutionIntegrity(**common, mean=None, accuracy_percent=None, bias_percent=None, cv_percent=None,
                                 reason="no results")
    acc = None if s.mean is None else 100.0 * s.mean / nom
    if acc is None or not math.isfinite(acc):
        return DilutionIntegrity(**common, mean=None, accuracy_percent=None, bias_percent=None, cv_percent=None,
                                 reason=OUT_OF_RANGE)
    values = dict(mean=s.mean, accuracy_percent=acc, bias_percent=acc - 100, cv_percent=s.cv_percent)
    if s.n < min_rep:
        return DilutionIntegrity(**common, **values, reason=f"{s.n} diluted QCs, at least {min_rep} needed")
    acc_ok = bool(not_above(abs(acc - 100), b_lim))
    cv_ok, cv_reason = None, ""
    if s.cv_percent is None:
        cv_reason = "CV undefined: " + ((no_relative_sd(s.mean) if s.sd is not None else "") or OUT_OF_RANGE)
    elif s.sd == 0:
        cv_reason = NO_SPREAD_CV
    else:
        cv_ok = bool(not_above(s.cv_percent, c_lim))
    passed = False if (not acc_ok or cv_ok is False) else (None if cv_ok is None else True)
    return DilutionIntegrity(**common, **values, passed=passed, reason=cv_reason if passed is None else "",
                             accuracy_passed=acc_ok, cv_passed=cv_ok, cv_reason=cv_reason)


# ----------------------------------------------------------------------------- incurred-sample reanalysis
# this tool's choice, no published source: below this many judged samples the fraction within is
# stated as resting on few samples (ICH M10 sec. 5, from memory, sizes ISR as a share of the study's
# samples and sets no absolute minimum)
FEW_REANALYSED_SAMPLES = 20


@dataclass(frozen=True)
class ReanalysedSample:
    """One reanalysed sample. ``within`` is ``None`` (not judged, left out of the fraction) when
    original and repeat agree but their % difference is undefined (both zero); ``reason`` says why
    ``difference_percent`` or ``within`` is missing."""

    original: float
    repeat: float
    difference_percent: float | None     # 100 (repeat - original) / mean of the two
    within: bool | None                  # False also when two different results have no defined difference
    sample: str = ""                     # the study sample's label, when given
    reason: str = ""


@dataclass(frozen=True)
class IncurredSampleReanalysis:
    """Reanalysed samples and the fraction within the limit among the ``n_judged`` judged ones."""

    samples: tuple[ReanalysedSample, ...]
    n: int
    n_judged: int
    n_within: int
    n_undefined: int
    fraction_within: float | None
    limit_percent: float
    min_fraction: float
    passed: bool | None
    notes: tuple[str, ...] = ()
    reason: str = ""
    # the number of study samples, when given, and the reanalysed samples ICH M10 asks for (from memory,
    # sec. 5: 10 % of the first 1000 and 5 % beyond); a verdict needs n_judged >= required_samples
    study_samples: int | None = field(default=None, metadata={"null_reason": "size_reason"})
    required_samples: int | None = field(default=None, metadata={"null_reason": "size_reason"})
    size_rule: str = "none"

    @property
    def size_reason(self) -> str:
        return "the number of study samples ([reanalysis] study_samples) was not given, so the ISR size is not checked"


SIZE_RULES = ("none", "ich-m10")


def incurred_sample_reanalysis(original, repeat, *, limit_percent: float = 20.0,
                               min_fraction: float = 2 / 3, sample=None, study_samples: int | None = None,
                               size_rule: str = "none") -> IncurredSampleReanalysis:
    """Incurred-sample reanalysis (ICH M10 sec. 5, from memory: within +/-20 % for chromatography,
    +/-30 % for ligand-binding assays, in at least two-thirds of the repeats).

    Notes
    -----
    Per sample: % difference = 100 (repeat - original) / ((repeat + original) / 2).
    A pair whose mean is not above zero has no defined difference. If its two
    results are equal (e.g. both 0) it is not judged (``within`` ``None``) and
    left out of the fraction, with a note; if they differ it counts as not
    within (the pair cannot be shown to agree), as does a pair whose
    difference overflows. passed = n_within / n_judged >= min_fraction,
    compared exactly. Fewer than ``FEW_REANALYSED_SAMPLES`` judged samples are
    stated in ``notes`` (the verdict stands).

    ISR size: with ``study_samples`` given, fewer judged samples than
    :func:`reanalysis_sample_count` asks for give no verdict (``passed``
    ``None`` with the reason). ``size_rule = "ich-m10"`` (set by the ICH M10
    preset) makes ``study_samples`` necessary for a verdict: without it the
    reanalysis cannot be shown to be of the size M10 asks for.
    """
    lim = check_positive(limit_percent, "limit_percent")
    frac = check_fraction(min_fraction, "min_fraction", low_open=True, high_open=False)
    if size_rule not in SIZE_RULES:
        raise ValueError(f"size_rule must be one of {SIZE_RULES!r}, got {size_rule!r}")
    required = None if study_samples is None else reanalysis_sample_count(check_count(study_samples, "study_samples"))
    o = as_float_array(original, "original")
    r = as_float_array(repeat, "repeat")
    if o.size != r.size:
        raise ValueError(f"original and repeat must pair up, got {o.size} and {r.size} values")
    names = [""] * o.size if sample is None else list(labels(sample, o.size, "sample"))
    rows = []
    for a, b, name in zip(o.tolist(), r.tolist(), names):
        mean = (a + b) / 2
        with quiet_numpy():
            d = 100.0 * (b - a) / mean if mean > 0 else float("nan")
        if math.isfinite(d):
            rows.append(ReanalysedSample(a, b, d, bool(not_above(abs(d), lim)), name))
        elif mean <= 0 and a == b:
            rows.append(ReanalysedSample(a, b, None, None, name, (
                f"original and repeat are both {a:g}: they agree, but the % difference of a mean that is not "
                "above zero is undefined; not judged and left out of the fraction")))
        elif mean <= 0:
            rows.append(ReanalysedSample(a, b, None, False, name, (
                f"the mean of {a:g} and {b:g} is not above zero, so the % difference is undefined; the results "
                "differ, so the pair counts as not within")))
        else:
            rows.append(ReanalysedSample(a, b, None, False, name, f"{OUT_OF_RANGE}; counted as not within"))
    n = len(rows)
    judged = [x for x in rows if x.within is not None]
    n_judged, n_within = len(judged), sum(bool(x.within) for x in judged)
    n_undef = sum(x.difference_percent is None for x in rows)
    notes = []
    left_out = [x.sample or str(i + 1) for i, x in enumerate(rows) if x.within is None]
    if left_out:
        notes.append(f"{len(left_out)} sample(s) with original and repeat both zero (or equal and not above zero) "
                     f"are not judged and left out of the fraction: {', '.join(left_out)}")
    if 0 < n_judged < FEW_REANALYSED_SAMPLES:
        notes.append(f"the fraction rests on {n_judged} reanalysed sample(s), fewer than {FEW_REANALYSED_SAMPLES} "
                     f"(this tool's threshold, not a guideline value): one sample moves it by "
                     f"{100 / n_judged:.3g} percentage points; ICH M10 sizes ISR as 10 % of the first 1000 study "
                     "samples and 5 % beyond (from memory, sec. 5)")
    common = dict(samples=tuple(rows), n=n, n_judged=n_judged, n_within=n_within, n_undefined=n_undef,
                  limit_percent=lim, min_fraction=frac, notes=tuple(notes), study_samples=study_samples,
                  required_samples=required, size_rule=size_rule)
    if n == 0:
        return IncurredSampleReanalysis(**common, fraction_within=None, passed=None, reason="no reanalysed samples")
    if n_judged == 0:
        return IncurredSampleReanalysis(**common, fraction_within=None, passed=None,
                                        reason="no reanalysed sample can be judged: every pair is equal with a "
                                               "mean not above zero")
    fraction = n_within / n_judged
    if required is not None and n_judged < required:
        return IncurredSampleReanalysis(**common, fraction_within=fraction, passed=None, reason=(
            f"{n_judged} judged reanalysed sample(s), fewer than the {required} ICH M10 asks for with "
            f"{study_samples} study samples (10 % of the first 1000 and 5 % beyond; from memory, sec. 5)"))
    if required is None and size_rule == "ich-m10":
        return IncurredSampleReanalysis(**common, fraction_within=fraction, passed=None, reason=(
            "the ICH M10 preset sizes ISR from the number of study samples (10 % of the first 1000 and 5 % "
            "beyond; from memory, sec. 5), which was not given: set [reanalysis] study_samples"))
    return IncurredSampleReanalysis(**common, fraction_within=fraction, passed=_at_least(n_within, n_judged, frac))


def reanalysis_sample_count(n_study_samples: int) -> int:
    """How many study samples to reanalyse (ICH M10 sec. 5, from memory).

    Notes
    -----
    10 % of the first 1000 study samples plus 5 % of those beyond 1000,
    rounded up to a whole sample (the rounding is this function's choice).
    """
    n = check_count(n_study_samples, "n_study_samples", 0)
    return int(math.ceil(Fraction(min(n, 1000), 10) + Fraction(max(n - 1000, 0), 20)))
