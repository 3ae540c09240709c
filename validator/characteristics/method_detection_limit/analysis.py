"""Method detection limit (40 CFR Part 136 Appendix B, Revision 2), judged against the study's maximum."""

from __future__ import annotations

from ...criteria import Criterion, at_most
from ...sector.mdl import MethodDetectionLimit, method_detection_limit

__all__ = ["MethodDetectionLimit", "mdl", "mdl_criteria"]


def mdl(data, *, confidence: float = 0.99) -> MethodDetectionLimit:
    """MDL = max(MDL_s, MDL_b); see :func:`validator.sector.mdl.method_detection_limit`."""
    return method_detection_limit(data.spiked, data.blanks, confidence=confidence,
                                  spiked_batches=None if data.spiked_batches is None else list(data.spiked_batches),
                                  blank_batches=None if data.blank_batches is None else list(data.blank_batches),
                                  spike_level=data.spike_level)


def mdl_criteria(result: MethodDetectionLimit, mdl_max: float | None) -> tuple[Criterion, ...]:
    """``method-detection-limit``: the MDL at most ``mdl_max`` (only when it is set)."""
    if mdl_max is None:
        return ()
    return (Criterion("method-detection-limit", f"MDL (40 CFR 136 Appendix B) at most {mdl_max:g}", result.value,
                      mdl_max, at_most(result.value, mdl_max),
                      "" if result.value is not None else f"not applicable: {result.reason}"),)
