"""Method detection limit, 40 CFR Part 136 Appendix B, Revision 2 (2017).

The initial MDL is the higher of MDL_s (from spiked samples) and MDL_b (from
method blanks). Section numbers below refer to Appendix B, Revision 2,
"II. Procedure", step (2) "Determine the initial MDL". Sections I and II(1)
were read in this session; the wording of the MDL_b rules in II(2) (none /
some / all blanks numerical, the 100-blank threshold, rank round(0.99 n),
"a negative mean is taken as zero") and the three-batch requirement are
implemented from memory of the rule and should be checked against the
Federal Register text before release.

References
----------
.. [MDL] 40 CFR Part 136, Appendix B - Definition and Procedure for the
   Determination of the Method Detection Limit - Revision 2. Federal Register
   82 FR 40836 (28 August 2017); EPA 821-R-16-006 (December 2016).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ._shared import OUT_OF_RANGE, as_float_array, check_fraction, check_positive, mean_sd_cv
from ..maths.distributions import t_ppf

__all__ = ["MethodDetectionLimit", "method_detection_limit", "MINIMUM_SPIKED", "BLANK_RANK_THRESHOLD"]

# Appendix B Rev. 2, II(2): "a minimum of seven spiked samples and seven method blank samples"
MINIMUM_SPIKED = 7
MINIMUM_BLANKS = 7
# from memory: Appendix B Rev. 2, II(2): spiked samples and blanks in at least three batches
MINIMUM_BATCHES = 3
# Appendix B Rev. 2, II(2) (MDL_b, some blanks numerical): the highest method blank, unless more
# than 100 method blanks are available, then the blank at rank round(0.99 n)
BLANK_RANK_THRESHOLD = 100
# At exactly 100 blanks the rule's text can be read two ways (an independent check of this module
# found both "more than 100" and "n >= 100" in II(2); the text was not read in this work). The
# reading kept gives the larger MDL_b (the highest blank is at least the blank of rank 99).
BLANK_RULE_READING = ("40 CFR 136 Appendix B Rev. 2, II(2), read as: the highest method blank unless "
                      f"more than {BLANK_RANK_THRESHOLD} method blanks are available, then the blank at rank "
                      "round(0.99 n)")


@dataclass(frozen=True)
class MethodDetectionLimit:
    """MDL_s, MDL_b and the reported MDL (their maximum).

    ``blank_rule`` says which MDL_b rule applied: "none numerical" (MDL_b does
    not apply), "highest blank", "ranked blank" (more than 100 blanks) or
    "mean + t s" (all blanks numerical). ``value`` is ``None`` exactly when
    ``reason`` says why.
    """

    value: float | None
    spiked: float | None               # MDL_s
    blank: float | None = field(metadata={"null_reason": "blank_reason"})               # MDL_b
    blank_rule: str = "none numerical"
    n_spiked: int = 0
    n_blanks: int = 0
    n_blanks_numerical: int = 0
    spiked_sd: float | None = None     # S_s
    spiked_t: float | None = None      # t(n_s - 1, 1 - alpha)
    # X-bar of the blanks (before the "negative means zero" rule), S_b, t: only for the rule "mean + t s"
    blank_mean: float | None = field(default=None, metadata={"null_reason": "blank_statistics_reason"})
    blank_sd: float | None = field(default=None, metadata={"null_reason": "blank_statistics_reason"})
    blank_t: float | None = field(default=None, metadata={"null_reason": "blank_statistics_reason"})
    # the rank used by the "ranked blank" rule (1-based, ascending)
    blank_rank: int | None = field(default=None, metadata={"null_reason": "blank_rank_reason"})
    confidence: float = 0.99
    notes: tuple[str, ...] = ()
    reason: str = ""
    # which reading of the 100-blank threshold was used ("" unless some but not all blanks are
    # numerical); at exactly 100 blanks it also gives the value of the other reading
    blank_rule_reading: str = ""
    # the concentration the samples were spiked at, when given (the MDL is checked against it)
    spike_level: float | None = field(default=None, metadata={"null_reason": "spike_level_reason"})
    # where the results came from: "file" (the spiked and blanks files) or "runs" (the low_level and
    # blank injections of [[runs]], each found through its run's calibration, the run as batch)
    data_from: str = "file"
    # the results themselves, for the dossier's figure: every spiked result, and the method blanks
    # that gave a numerical result (the others are counted in n_blanks - n_blanks_numerical)
    spiked_results: tuple[float, ...] = ()
    blank_numerical_results: tuple[float, ...] = ()

    @property
    def blank_reason(self) -> str:
        if self.n_blanks == 0:
            return "no method blank was analysed: MDL_b is unknown"
        if self.blank_rule == "none numerical":
            return "no method blank gave a numerical result: MDL_b does not apply"
        why = [n for n in self.notes if "MDL_b does not apply" in n]
        return why[0] if why else ""

    @property
    def blank_statistics_reason(self) -> str:
        if self.blank_rule != "mean + t s":
            return (f"not every method blank gave a numerical result (rule: {self.blank_rule}): the mean, SD and t "
                    "of the blanks are used only when all are numerical")
        return self.blank_reason

    @property
    def blank_rank_reason(self) -> str:
        return (f"the rank is used only when some of more than {BLANK_RANK_THRESHOLD} method blanks are numerical "
                f"(rule here: {self.blank_rule})")

    @property
    def spike_level_reason(self) -> str:
        return "no spike level was given (optional column spike_level of the spiked-sample file)"


def method_detection_limit(spiked_results, blank_results, *, confidence: float = 0.99,
                           spiked_batches=None, blank_batches=None,
                           spike_level: float | None = None) -> MethodDetectionLimit:
    """Initial MDL by 40 CFR Part 136 Appendix B, Revision 2.

    Parameters
    ----------
    spiked_results : sequence of float
        Results (concentration) of the spiked samples; each must be a number.
    blank_results : sequence of float or NaN
        Results of the method blanks; NaN marks a blank with no numerical
        result (e.g. "not detected", no peak). Negative results and results
        below the current MDL are numerical results and must be given as numbers.
    confidence : float
        1 - alpha of the one-sided t quantile; the rule fixes 0.99.
    spiked_batches, blank_batches : sequence of labels, optional
        The preparation batch of each result; when given, fewer than three
        distinct batches is stated in ``notes`` (from memory: II(2) asks for
        samples prepared and analysed in at least three batches on separate dates).
    spike_level : float, optional
        The concentration the samples were spiked at; an MDL above it gives no MDL.

    Notes
    -----
    * MDL_s = t(n_s - 1, 1 - alpha) S_s, S_s the SD of the n_s >= 7 spiked results.
    * MDL_b:
      - no blank gives a numerical result: MDL_b does not apply;
      - some but not all do: MDL_b is the highest method blank result; with
        more than 100 blanks, the blank of rank round(0.99 n) in ascending
        order (rounded to the nearest whole number; blanks with no numerical
        result ranked lowest and counted in n). At exactly 100 blanks the
        highest blank is used (the reading "more than 100", which gives the
        larger MDL_b); ``blank_rule_reading`` states this with the value of
        the other reading;
      - all do: MDL_b = X_b + t(n_b - 1, 1 - alpha) S_b, with X_b taken as 0
        when it is negative.
    * MDL = max(MDL_s, MDL_b), or MDL_s when MDL_b does not apply.
    Fewer than seven spiked samples give no MDL (value ``None``); so does the
    absence of any method blank (MDL_b, and so the MDL, is then unknown); so does a
    spiked result that is not a numerical result above zero (from memory:
    Appendix B Rev. 2, II(2): such a result means the spiked samples are to be
    repeated at a higher concentration, so they do not determine an MDL), and
    an MDL above the spike level, when it is given (from memory: Appendix B,
    the spike level must lie above the MDL it determines, else the spiked
    samples are repeated at a higher level). Fewer than seven blanks are
    stated in ``notes``.
    """
    conf = check_fraction(confidence, "confidence", low=0.5, high=1.0)
    spiked = as_float_array(spiked_results, "spiked_results")
    blanks = as_float_array(blank_results, "blank_results", allow_nan=True)
    numerical = blanks[np.isfinite(blanks)]
    n_s, n_b, n_num = int(spiked.size), int(blanks.size), int(numerical.size)
    notes = []
    if n_b < MINIMUM_BLANKS:
        notes.append(f"{n_b} method blanks, fewer than the {MINIMUM_BLANKS} Appendix B requires")
    for kind, labels, n in (("spiked", spiked_batches, n_s), ("blank", blank_batches, n_b)):
        if labels is None:
            continue
        labels = [str(v) for v in labels]
        if len(labels) != n:
            raise ValueError(f"{kind}_batches: expected {n} labels (one per result), got {len(labels)}")
        if len(set(labels)) < MINIMUM_BATCHES:
            notes.append(f"{kind} samples from {len(set(labels))} batch(es), fewer than the "
                         f"{MINIMUM_BATCHES} Appendix B asks for")
    if spike_level is not None:
        spike_level = check_positive(spike_level, "spike_level")
    not_positive = int(np.sum(spiked <= 0))

    # MDL_s
    s = mean_sd_cv(spiked)
    mdl_s = t_s = None
    reason_s = ""
    if n_s < MINIMUM_SPIKED:
        reason_s = f"{n_s} spiked samples, fewer than the {MINIMUM_SPIKED} Appendix B requires"
    elif s.sd is None:
        reason_s = OUT_OF_RANGE
    elif s.sd == 0:
        reason_s = "the spiked results have no spread (S_s = 0): MDL_s would be zero"
    else:
        t_s = float(t_ppf(conf, n_s - 1))
        mdl_s = t_s * s.sd

    # MDL_b
    mdl_b = t_b = rank = b_mean = b_sd = None
    reading = ""
    if n_num == 0:
        rule = "none numerical"
    elif n_num < n_b:
        reading = BLANK_RULE_READING
        ordered = np.concatenate([np.full(n_b - n_num, -np.inf), np.sort(numerical)])
        if n_b <= BLANK_RANK_THRESHOLD:
            rule = "highest blank"
            mdl_b = float(numerical.max())
            if n_b == BLANK_RANK_THRESHOLD:
                other = ordered[int(math.floor(0.99 * n_b + 0.5)) - 1]
                reading += (f"; at exactly {n_b} method blanks the text can also be read as {n_b} or more (the "
                            f"blank at rank 99, {'with no numerical result' if not np.isfinite(other) else f'{float(other):g}'}"
                            "); the reading giving the larger MDL_b, the highest blank, is used")
        else:
            rule = "ranked blank"
            rank = int(math.floor(0.99 * n_b + 0.5))
            value = ordered[rank - 1]
            if not np.isfinite(value):
                notes.append(f"the blank of rank {rank} of {n_b} has no numerical result; MDL_b does not apply")
            else:
                mdl_b = float(value)
    else:
        rule = "mean + t s"
        b = mean_sd_cv(numerical)
        b_mean, b_sd = b.mean, b.sd
        if n_b < 2:
            notes.append("one method blank: S_b cannot be computed, MDL_b does not apply")
        elif b.sd is None:
            notes.append(f"MDL_b does not apply: {OUT_OF_RANGE}")
        else:
            t_b = float(t_ppf(conf, n_b - 1))
            mdl_b = max(b.mean, 0.0) + t_b * b.sd

    if mdl_s is None:
        value, reason = None, f"MDL_s not available: {reason_s}"
    elif n_b == 0:
        # Appendix B Rev. 2, II(2): MDL = the higher of MDL_s and MDL_b; without a single method blank MDL_b
        # is unknown (not "does not apply", which needs blanks that gave no numerical result), so the MDL is too
        value, reason = None, (f"no method blank was analysed: MDL_b is unknown, so the MDL (the higher of MDL_s, "
                               f"{mdl_s:.4g}, and MDL_b) is not known; 40 CFR 136 Appendix B requires at least "
                               f"{MINIMUM_BLANKS} method blanks")
    else:
        value, reason = (mdl_s if mdl_b is None else max(mdl_s, mdl_b)), ""
    if n_s >= MINIMUM_SPIKED and not_positive:
        # from memory: Appendix B Rev. 2, II(2): every spiked result must be a numerical result above zero,
        # else the spiked samples are repeated at a higher concentration
        value, reason = None, (f"{not_positive} of {n_s} spiked results are not above zero (mean "
                               f"{s.mean:.4g}): the spiked samples are not distinguished from zero, and 40 CFR 136 "
                               "Appendix B asks to repeat them at a higher concentration (from memory: II(2))")
    elif value is not None and spike_level is not None and value > spike_level:
        value, reason = None, (f"the MDL, {value:.4g}, lies above the spike level {spike_level:g}: the spiked "
                               "samples do not determine it; 40 CFR 136 Appendix B asks to repeat them at a higher "
                               "concentration (from memory)")
    return MethodDetectionLimit(value, mdl_s, mdl_b, rule, n_s, n_b, n_num, s.sd, t_s, b_mean, b_sd, t_b,
                                rank, conf, tuple(notes), reason, reading, spike_level,
                                spiked_results=tuple(float(v) for v in spiked),
                                blank_numerical_results=tuple(float(v) for v in numerical))
