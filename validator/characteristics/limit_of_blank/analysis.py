"""Limit of blank, limit of detection and limit of quantitation (CLSI EP17-A2), judged.

Thin wrappers over :mod:`validator.sector.ep17`: the LoB from the blank results, the LoD from
the low-level results when given, the LoQ when an accuracy goal and nominal values are given;
criteria compare each with the highest value the study allows (``lob_max``, ...), when set.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ...criteria import Criterion, at_most
from ...sector.ep17 import (LimitOfBlank, LimitOfDetection, LimitOfQuantitation, limit_of_blank,
                            limit_of_detection, limit_of_quantitation, verification_shortfall)

__all__ = ["DetectionCapability", "detection_capability", "detection_capability_criteria"]


@dataclass(frozen=True)
class DetectionCapability:
    """LoB, LoD and LoQ of one analyte; ``lod``/``loq`` are ``None`` with their reason when not computed."""

    lob: LimitOfBlank
    lod: LimitOfDetection | None = field(metadata={"null_reason": "lod_reason"})
    loq: LimitOfQuantitation | None = field(metadata={"null_reason": "loq_reason"})
    lod_reason: str = ""
    loq_reason: str = ""
    # why the blank / low-level design is below the EP17-A2 verification minimum ("" when it is not);
    # stated in the criteria's notes, which results.json writes
    blank_design_shortfall: str = field(default="", metadata={"json": None})
    low_design_shortfall: str = field(default="", metadata={"json": None})
    # where the results came from: "file" ([limit_of_blank] blanks and low_samples) or "runs" (the blank
    # and low_level injections of [[runs]], each found through its run's calibration: runs.injections)
    data_from: str = "file"
    # the results themselves, for the dossier's figure (in the order of their files; empty: none given)
    blank_results: tuple[float, ...] = ()
    low_results: tuple[float, ...] = ()


def detection_capability(blanks, blank_samples, blank_lots, low=None, low_samples=(), low_lots=(),
                         low_nominal=None, *, method: str = "nonparametric", purpose: str = "establishment",
                         percentile: float = 0.95, loq_max_cv_pct: float | None = None,
                         loq_max_total_error: float | None = None) -> DetectionCapability:
    """EP17-A2 LoB (per lot, reported maximum), LoD = LoB + c_p SD_L, LoQ from an accuracy goal.

    Notes
    -----
    See :func:`validator.sector.ep17.limit_of_blank`, :func:`~validator.sector.ep17.limit_of_detection`
    and :func:`~validator.sector.ep17.limit_of_quantitation` for the formulas. The LoD needs the
    LoB; the LoQ needs nominal values of the low-level samples and at least one goal, and is
    never reported below the LoD.
    """
    lob = limit_of_blank(blanks, method=method, sample=list(blank_samples), lot=list(blank_lots),
                         percentile=percentile, purpose=purpose)
    lod = loq = None
    lod_reason = loq_reason = ""
    if low is None:
        lod_reason = "no low-level results (low_samples) were given"
    elif lob.value is None:
        lod_reason = f"the LoB does not exist: {lob.reason}"
    else:
        lod = limit_of_detection(low, list(low_samples), lob.value, lot=list(low_lots), purpose=purpose)
    if low is None:
        loq_reason = "no low-level results (low_samples) were given"
    elif low_nominal is None:
        loq_reason = "the low-level results have no nominal column"
    elif loq_max_cv_pct is None and loq_max_total_error is None:
        loq_reason = "no accuracy goal (loq_max_cv_pct or loq_max_total_error) was declared"
    else:
        loq = limit_of_quantitation(low, list(low_samples), np.asarray(low_nominal, dtype=float),
                                    max_cv_percent=loq_max_cv_pct, max_total_error=loq_max_total_error,
                                    limit_of_detection=None if lod is None else lod.value)
    blank_short = verification_shortfall(list(blank_samples), list(blank_lots), "blank")
    low_short = "" if low is None else verification_shortfall(list(low_samples), list(low_lots), "low-level")
    return DetectionCapability(lob, lod, loq, lod_reason, loq_reason, blank_short, low_short,
                               blank_results=tuple(float(v) for v in np.asarray(blanks, dtype=float)),
                               low_results=() if low is None else tuple(float(v) for v in np.asarray(low, dtype=float)))


def detection_capability_criteria(result: DetectionCapability, *, lob_max=None, lod_max=None,
                                  loq_max=None) -> tuple[Criterion, ...]:
    """One criterion per declared maximum: ``limit-of-blank``, ``limit-of-detection``,
    ``limit-of-quantitation`` (value at most the maximum).

    Not applicable when the value does not exist, when it is not above zero (no detection
    capability), when the LoQ's floor, the LoD, does not exist, or when the results it rests on are below the
    EP17-A2 verification minimum (:func:`validator.sector.ep17.verification_shortfall`: the LoB
    on the blank results, the LoD on both, the LoQ on the low-level results). Shortfalls from the
    establishment design (``notes``) are stated beside a verdict, in the criterion's note. The LoD
    fails, whatever its value, when too few low-level results lie above the LoB
    (:func:`validator.sector.ep17.above_blank`, from memory: CLSI EP17-A2 sec. 6, verification of
    an LoD claim by the proportion of low-level results above the LoB).
    """
    lob, lod, loq = result.lob, result.lod, result.loq
    blank_short, low_short = result.blank_design_shortfall, result.low_design_shortfall
    remarks = {"limit-of-blank": list(lob.notes),
               "limit-of-detection": list(lob.notes) + (list(lod.notes) if lod else []),
               "limit-of-quantitation": (list(lod.notes) if lod else []) + (list(loq.notes) if loq else [])}
    shortfall = {"limit-of-blank": blank_short, "limit-of-detection": blank_short or low_short,
                 "limit-of-quantitation": low_short}
    lod_value = None if lod is None else lod.value
    out = []
    for cid, label, limit, part, reason in (
            ("limit-of-blank", "LoB", lob_max, lob, ""),
            ("limit-of-detection", "LoD", lod_max, lod, result.lod_reason),
            ("limit-of-quantitation", "LoQ", loq_max, loq, result.loq_reason)):
        if limit is None:
            continue
        value = None if part is None else part.value
        why = reason or (part.reason if part is not None else "")
        description = f"{label} (CLSI EP17-A2) at most {limit:g}"
        if cid == "limit-of-detection":
            description += (", with at least the binomial minimum of low-level results above the LoB "
                            "(95 % by the LoD's definition, one-sided 5 %)")
        if value is None:
            out.append(Criterion(cid, description, value, limit, None,
                                 f"not applicable: {why or 'it does not exist'}"))
        elif not value > 0:
            # a limit at or below zero separates nothing from a blank: it is no detection capability
            out.append(Criterion(cid, description, value, limit, None,
                                 f"not applicable: the {label} is {value:g}, not above zero: a limit at or below "
                                 "zero is not a detection capability (blank results centred at or below zero, or "
                                 "censored at zero)"))
        elif shortfall[cid]:
            out.append(Criterion(cid, description, value, limit, None, f"not applicable: {shortfall[cid]}"))
        elif cid == "limit-of-quantitation" and not (lod_value is not None and lod_value > 0):
            # the LoQ is never below the LoD (EP17-A2); without an LoD that floor cannot be checked
            floor = (f"the LoD does not exist ({result.lod_reason or lod.reason})" if lod_value is None
                     else f"the LoD, {lod_value:g}, is not above zero")
            out.append(Criterion(cid, description, value, limit, None,
                                 f"not applicable: the LoQ is never below the LoD, and {floor}"))
        else:
            remark = "; ".join(dict.fromkeys(remarks[cid]))
            verdict = at_most(value, limit)
            if cid == "limit-of-detection" and not lod.above_blank_passed:
                failing = [a for a in lod.above_blank if not a.passed]
                remark = "; ".join([f"lot {a.lot}: {a.n_above} of {a.n} low-level results above the LoB "
                                    f"{lod.limit_of_blank:g}, fewer than the {a.minimum_count} needed" for a in failing]
                                   + ([f"design: {remark}"] if remark else []))
                out.append(Criterion(cid, description, value, limit, False, remark))
                continue
            out.append(Criterion(cid, description, value, limit, verdict,
                                 f"design: {remark}" if remark else ""))
    return tuple(out)
