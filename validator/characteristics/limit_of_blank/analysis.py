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
                            limit_of_detection, limit_of_quantitation)

__all__ = ["DetectionCapability", "detection_capability", "detection_capability_criteria"]


@dataclass(frozen=True)
class DetectionCapability:
    """LoB, LoD and LoQ of one analyte; ``lod``/``loq`` are ``None`` with their reason when not computed."""

    lob: LimitOfBlank
    lod: LimitOfDetection | None = field(metadata={"null_reason": "lod_reason"})
    loq: LimitOfQuantitation | None = field(metadata={"null_reason": "loq_reason"})
    lod_reason: str = ""
    loq_reason: str = ""


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
    return DetectionCapability(lob, lod, loq, lod_reason, loq_reason)


def detection_capability_criteria(result: DetectionCapability, *, lob_max=None, lod_max=None,
                                  loq_max=None) -> tuple[Criterion, ...]:
    """One criterion per declared maximum: ``limit-of-blank``, ``limit-of-detection``,
    ``limit-of-quantitation`` (value at most the maximum; not applicable when the value does not exist)."""
    out = []
    for cid, label, limit, part, reason in (
            ("limit-of-blank", "LoB", lob_max, result.lob, ""),
            ("limit-of-detection", "LoD", lod_max, result.lod, result.lod_reason),
            ("limit-of-quantitation", "LoQ", loq_max, result.loq, result.loq_reason)):
        if limit is None:
            continue
        value = None if part is None else part.value
        why = reason or (part.reason if part is not None else "")
        out.append(Criterion(cid, f"{label} (CLSI EP17-A2) at most {limit:g}", value, limit, at_most(value, limit),
                             "" if value is not None else f"not applicable: {why or 'it does not exist'}"))
    return tuple(out)
