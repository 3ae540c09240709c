"""Acceptance criteria: results judged against limits declared in the study file.

A criterion is judged ``True`` (met), ``False`` (not met) or ``None`` (not
applicable to these data, with the reason in ``note``). Not-applicable
criteria never fail a study, but they are listed so a reviewer sees them.

No verdict from nothing: a criterion whose value (a number, or an interval
``[low, high]``) does not exist or is not finite, or whose limit is missing,
is not applicable, whatever verdict its caller computed. :class:`Criterion`
enforces this when it is constructed, so no statistic can bypass it; the
helpers :func:`at_least`, :func:`at_most` and :func:`interval_within` judge a
value only when it exists.

A value within a relative 1e-9 of its limit counts as on the limit (``_common.not_above``,
``not_below``, ``between``: the one rule, used here and by the sector statistics' own
verdicts), so that a value exactly on its limit in decimal arithmetic is not judged beyond
it through binary floating point (100 x 0.14 / 0.7 = 20.000000000000004).

The limits are the study's own; validator's defaults are examples taken
from common practice, not regulatory limits.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from ._common import between, not_above, not_below

__all__ = ["Criterion", "overall_verdict", "at_least", "at_most", "interval_within",
           "missing"]


def _finite(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def missing(value) -> str:
    """Why ``value`` (a number or a ``[low, high]`` pair) cannot be judged, or "" when it can."""
    if value is None:
        return "does not exist"
    if isinstance(value, (list, tuple)):
        if len(value) != 2:
            return f"is not a [low, high] pair ({value!r})"
        bad = [v for v in value if not _finite(_as_float(v))]
        return "" if not bad else ("does not exist" if all(v is None for v in bad) else f"is not finite ({value!r})")
    v = _as_float(value)
    return "" if _finite(v) else f"is not finite ({value!r})"


def _as_float(v):
    if v is None or isinstance(v, bool):
        return v
    try:
        return float(v)
    except (TypeError, ValueError):
        return None


@dataclass(frozen=True)
class Criterion:
    """One acceptance criterion and its verdict.

    ``value`` is the judged number, or the judged interval as ``[low, high]``;
    ``limit`` a maximum/minimum or a ``[low, high]`` range. When the value or
    the limit is missing or not finite, ``passed`` is forced to ``None`` and
    ``note`` gives the reason (the caller's, or one naming what is missing),
    whatever verdict was passed in.
    """

    id: str
    description: str
    value: float | list | None = field(metadata={"as_float": True})
    # a maximum/minimum, or [low, high] for a range
    limit: float | list | None = field(metadata={"as_float": True})
    passed: bool | None = field(metadata={"json": "pass"})
    note: str = ""

    @property
    def null_reason(self) -> str:
        """Why the value, limit or verdict is missing (results.json ``not_applicable``)."""
        return self.note

    def __post_init__(self):
        if isinstance(self.value, tuple):
            object.__setattr__(self, "value", list(self.value))
        if isinstance(self.limit, tuple):
            object.__setattr__(self, "limit", list(self.limit))
        why = []
        if (m := missing(self.value)):
            why.append(f"the value {m}")
        if (m := missing(self.limit)):
            why.append(f"the limit {m}")
        if why:
            object.__setattr__(self, "passed", None)
        elif self.passed is not None:
            object.__setattr__(self, "passed", bool(self.passed))
        if self.passed is None and not self.note.startswith("not applicable"):
            reason = "; ".join(why) if why else "no verdict was reached"
            note = f"not applicable: {reason}" + (f" ({self.note})" if self.note else "")
            object.__setattr__(self, "note", note)


def at_least(value, limit) -> bool | None:
    """value >= limit (within the tolerance of ``_common.not_below``), or None when either does not
    exist (see :func:`missing`)."""
    return None if missing(value) or missing(limit) else bool(not_below(value, limit))


def at_most(value, limit) -> bool | None:
    """value <= limit (within the tolerance of ``_common.not_above``), or None when either does not exist."""
    return None if missing(value) or missing(limit) else bool(not_above(value, limit))


def interval_within(interval, limits) -> bool | None:
    """The interval [low, high] lies inside ``limits`` (a [low, high] range, or one value it must
    contain); None when either does not exist."""
    if missing(interval) or missing(limits):
        return None
    low, high = interval
    if isinstance(limits, (list, tuple)):
        return bool(not_below(low, limits[0]) and not_above(high, limits[1]))
    return between(limits, low, high)


def overall_verdict(criteria) -> str:
    """"pass" only when every criterion was evaluated and met.

    "fail" when any criterion is not met; "incomplete" when none failed but at
    least one could not be evaluated on these data (not applicable), or there
    is no criterion at all: what was not shown is not passed.
    """
    if any(c.passed is False for c in criteria):
        return "fail"
    if not criteria or any(c.passed is None for c in criteria):
        return "incomplete"
    return "pass"
