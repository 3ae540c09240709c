"""Stability judged (ICH M10): each storage condition's mean against nominal or fresh samples, with a CI."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..._common import name_slug
from ...criteria import Criterion
from ...sector._shared import number_id
from ...sector.bioanalytical import Stability, stability

__all__ = ["StabilityCondition", "StabilityResult", "assess_stability", "stability_criteria"]

FRESH = "fresh"


@dataclass(frozen=True)
class StabilityCondition:
    condition: str
    nominal: float
    result: Stability


@dataclass(frozen=True)
class StabilityResult:
    conditions: tuple[StabilityCondition, ...]
    # "file" (the [stability] data file) or "runs" (the QC injections of [[runs]] with a condition, each
    # found through its run's calibration, as listed in the runs' chain)
    data_from: str = "file"


def assess_stability(data, *, reference: str, limit_pct: float, judged_on: str, min_replicates: int,
                     level: float) -> StabilityResult:
    """One :func:`validator.sector.bioanalytical.stability` per (condition, nominal level), in order of appearance.

    Notes
    -----
    Against nominal: deviation = 100 (mean/nominal − 1) with a t interval; against fresh samples
    (the rows of condition "fresh" at the same nominal): deviation = 100 (mean/mean_fresh − 1) with
    Fieller's interval.
    """
    out = []
    fresh = np.array([c.casefold() == FRESH for c in data.conditions])
    for condition, nominal in dict.fromkeys(zip(data.conditions, data.nominal.tolist())):
        if reference == "fresh" and condition.casefold() == FRESH:
            continue
        mask = np.array([c == condition for c in data.conditions]) & (data.nominal == nominal)
        kwargs = ({"nominal": float(nominal)} if reference == "nominal"
                  else {"fresh": data.found[fresh & (data.nominal == nominal)]})
        out.append(StabilityCondition(condition, float(nominal), stability(
            data.found[mask], condition=condition, limit_percent=limit_pct, level=level, judged_on=judged_on,
            min_replicates=min_replicates, **kwargs)))
    return StabilityResult(tuple(out))


def stability_criteria(result: StabilityResult) -> tuple[Criterion, ...]:
    """``stability-<condition>-<nominal>`` (the condition case-folded, its letters and digits joined by
    hyphens; the nominal by :func:`validator.sector._shared.number_id`): the deviation (or its whole CI, when judged on the interval)
    within ±limit."""
    out = []
    for c in result.conditions:
        s = c.result
        on_interval = s.judged_on == "interval"
        value = ([s.interval.low, s.interval.high] if s.interval is not None else None) if on_interval \
            else s.deviation_percent
        what = f"{s.interval.label} CI of the deviation" if on_interval and s.interval is not None else \
            ("CI of the deviation" if on_interval else "deviation")
        # the same rule as validator.inputs.sector_names.slug, which refuses two conditions of one slug
        slug = name_slug(c.condition)
        out.append(Criterion(f"stability-{slug}-{number_id(c.nominal)}",
                             f"stability, {c.condition} at nominal {c.nominal:g}: {what} of the mean from "
                             f"{s.reference} within ±{s.limit_percent:g} %", value, [-s.limit_percent, s.limit_percent],
                             s.passed, "" if s.passed is not None else f"not applicable: {s.reason}"))
    return tuple(out)
