"""Accuracy profile: relative bias and beta-expectation tolerance intervals per level, the validated range.

Pure: arrays and plain settings values in, frozen dataclasses out (their field metadata give
the results.json form); the acceptance criteria are built here too.

References
----------
.. [Hubert] Hubert, Ph. et al. (2004, 2007). Harmonization of strategies for the validation of
   quantitative analytical procedures: a SFSTP proposal, parts I-III. J. Pharm. Biomed. Anal.
   36, 579-586; 45, 70-81; 45, 82-96.
.. [Mee] Mee, R. W. (1984). Technometrics 26, 251-254 (beta-expectation limits, one-way
   random model).
.. [Howe] Howe, W. G. (1969). J. Am. Stat. Assoc. 64, 610-620.
.. [ICHQ2] ICH Q2(R2) (2023): accuracy and precision judged together by an interval.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ...criteria import Criterion, interval_within
from ...maths.tolerance import accuracy_profile, runs_content_interval

__all__ = ["ContentInterval", "ProfileLevelResult", "ValidatedRange", "AccuracyProfileResult",
           "assess_accuracy_profile", "accuracy_profile_criteria"]


@dataclass(frozen=True)
class ContentInterval:
    """The optional beta-content, gamma-confidence interval at one level, in % relative error.

    ``k`` is the factor on the level's ``intermediate_sd`` s_IP: the limits are mean ± k s_IP,
    k = z_{(1+content)/2} sqrt(1 + 1/n_e) ``sd_upper`` / s_IP (not z sqrt(1 + 1/n_e), which
    multiplies ``sd_upper``); see :func:`validator.maths.tolerance.runs_content_interval`.
    """

    content: float
    confidence: float
    low_pct: float | None
    high_pct: float | None
    k: float | None
    effective_n: float | None
    sd_upper: float | None
    reason: str = ""


@dataclass(frozen=True)
class ProfileLevelResult:
    """One level of the profile; relative values in % of ``nominal``."""

    nominal: float
    runs: int
    results: int
    balanced: bool
    mean_found: float | None
    relative_bias_pct: float | None
    recovery_pct: float | None
    repeatability_sd: float | None
    between_runs_sd: float | None
    between_runs_set_to_zero: bool
    intermediate_sd: float | None
    intermediate_rsd_pct: float | None
    tolerance_factor: float | None
    tolerance_df: float | None
    tolerance_low: float | None
    tolerance_high: float | None
    tolerance_low_pct: float | None
    tolerance_high_pct: float | None
    acceptance_pct: float
    inside: bool | None
    # the standard deviation of the beta-expectation (prediction) interval, sqrt(s_IP^2 + v_m), in % of nominal
    prediction_sd_pct: float | None
    content_interval: ContentInterval | None = field(default=None, metadata={"omit_none": True})
    reason: str = ""


@dataclass(frozen=True)
class ValidatedRange:
    low: float
    high: float


@dataclass(frozen=True)
class AccuracyProfileResult:
    """The profile over the levels and the validated range(s) (``None`` with ``reason`` when a level
    has no interval). ``runs_by`` names the grouping used as runs."""

    beta: float
    runs_by: str
    levels: tuple[ProfileLevelResult, ...]
    validated_ranges: tuple[ValidatedRange, ...] | None = field(metadata={"null_reason": "range_reason"})
    basis: str
    notes: tuple[str, ...] = ()
    reason: str = field(default="", metadata={"json": None})

    @property
    def range_reason(self) -> str:
        return self.reason or "no validated range"


def assess_accuracy_profile(level, found, runs, *, beta: float, acceptance_for, runs_by: str,
                            content: float | None = None, confidence: float | None = None) -> AccuracyProfileResult:
    """The accuracy profile from the precision design (nominal level, found value, run label per result).

    Parameters
    ----------
    level, found : array of float
        Nominal concentration and found (back-calculated) concentration of each result.
    runs : sequence of str
        The run (series, or innermost unit of the nested design) of each result.
    beta : float
        Expected proportion of results inside the beta-expectation interval.
    acceptance_for : callable
        nominal -> acceptance limit lambda in %.
    content, confidence : float, optional
        Adds the beta-content, gamma-confidence interval per level
        (:func:`validator.maths.tolerance.runs_content_interval`).

    Notes
    -----
    Per level c: relative bias 100 (m - c) / c with m the mean of the run means; the
    beta-expectation interval m +/- k s_IP ([Mee], [Hubert]) as relative errors; inside when
    both limits lie within +/- lambda. The validated range joins each limit (and lambda)
    linearly between adjacent levels (:func:`validator.maths.tolerance.accuracy_profile`).
    Levels with nominal 0 have no relative error and are left out (``notes``).
    ``prediction_sd_pct`` = 100 sqrt(s_IP^2 + v_m) / c, the standard deviation the
    interval is built on (half-width / t).
    """
    level = np.asarray(level, dtype=float)
    found = np.asarray(found, dtype=float)
    runs = list(runs)
    notes = []
    groups = []
    for c in np.unique(level):
        idx = np.flatnonzero(level == c)
        if not c > 0:
            notes.append(f"level {c:g} has no relative error (nominal not > 0) and is not in the profile")
            continue
        order, by_run = [], {}
        for i in idx:
            if runs[i] not in by_run:
                by_run[runs[i]] = []
                order.append(runs[i])
            by_run[runs[i]].append(found[i])
        groups.append((float(c), [by_run[r] for r in order]))
    if not groups:
        return AccuracyProfileResult(beta, runs_by, (), None, "", tuple(notes), "no level with a nominal value > 0")
    lams = {c: float(acceptance_for(c)) for c, _ in groups}
    single = len(set(lams.values())) == 1
    profile = accuracy_profile(groups, beta=beta,
                               acceptance_percent=next(iter(lams.values())) if single else lams.__getitem__)
    out = []
    for pl, (c, grouped) in zip(profile.levels, sorted(groups, key=lambda g: g[0])):
        iv = pl.interval
        lam = pl.acceptance_percent
        rel = (lambda v: None if v is None else 100.0 * v / c)
        pred = None if iv.centre_variance is None else 100.0 * float(np.sqrt(iv.sd_intermediate ** 2
                                                                              + iv.centre_variance)) / c
        ci = None
        if content is not None and confidence is not None:
            ti = runs_content_interval(grouped, content, confidence)
            ci = ContentInterval(content, confidence, None if ti.low is None else 100.0 * (ti.low - c) / c,
                                 None if ti.high is None else 100.0 * (ti.high - c) / c, ti.k,
                                 ti.effective_n, ti.sd_upper, ti.reason)
        out.append(ProfileLevelResult(
            nominal=c, runs=iv.runs, results=iv.results, balanced=iv.balanced, mean_found=pl.mean_found,
            relative_bias_pct=pl.relative_bias_percent, recovery_pct=pl.recovery_percent,
            repeatability_sd=iv.sd_repeatability, between_runs_sd=iv.sd_between_runs,
            between_runs_set_to_zero=iv.between_runs_set_to_zero, intermediate_sd=iv.sd_intermediate,
            intermediate_rsd_pct=rel(iv.sd_intermediate), tolerance_factor=iv.k, tolerance_df=iv.df,
            tolerance_low=iv.low, tolerance_high=iv.high, tolerance_low_pct=pl.low_percent,
            tolerance_high_pct=pl.high_percent, acceptance_pct=lam if lam is not None else profile.acceptance_percent,
            inside=pl.inside, prediction_sd_pct=pred, content_interval=ci, reason=iv.reason))
        if iv.between_runs_set_to_zero:
            notes.append(f"level {c:g}: the between-run variance estimate is negative and set to 0")
    ranges = None if profile.validated_ranges is None else tuple(ValidatedRange(a, b)
                                                                  for a, b in profile.validated_ranges)
    reason = profile.reason or ("" if ranges else "at no concentration do both tolerance limits lie within the "
                                                  "acceptance limits")
    return AccuracyProfileResult(beta, runs_by, tuple(out), ranges or None, profile.basis, tuple(notes), reason)


def accuracy_profile_criteria(result: AccuracyProfileResult) -> tuple:
    """Per level: the beta-expectation interval (relative error) inside +/- lambda ([Hubert])."""
    out = []
    for lv in result.levels:
        value = None if lv.tolerance_low_pct is None else [lv.tolerance_low_pct, lv.tolerance_high_pct]
        limit = [-lv.acceptance_pct, lv.acceptance_pct]
        out.append(Criterion(
            f"accuracy-profile-{lv.nominal:g}",
            f"beta-expectation tolerance interval (beta = {result.beta:g}) at level {lv.nominal:g} within "
            f"±{lv.acceptance_pct:g} % of the nominal value", value, limit, interval_within(value, limit),
            "" if value is not None else f"not applicable: {lv.reason}"))
    return tuple(out)
