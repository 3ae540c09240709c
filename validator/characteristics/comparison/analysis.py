"""Method comparison on shared samples: the three comparisons of
:mod:`validator.maths.method_comparison` and the verdict on the Passing-Bablok intervals.

The ``[comparison]`` section of a study runs :func:`assess_comparison` per analyte.

References
----------
.. [EP09] CLSI EP09c, Measurement procedure comparison and bias estimation
   using patient samples, 3rd ed. (2018). The statistics' own references are in
   :mod:`validator.maths.method_comparison`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ...criteria import Criterion, interval_within, missing
from ...maths.method_comparison import BlandAltman, Deming, PassingBablok, bland_altman, deming, passing_bablok

__all__ = ["ComparisonPoint", "ComparisonResult", "assess_comparison", "comparison_criteria"]


def _rule(limits, ideal, name):
    if limits is not None:
        return f"{name} CI inside [{limits[0]:g}, {limits[1]:g}]"
    return f"{name} CI contains {ideal:g}"


def _judge(ci, limits, ideal, name):
    """CI inside the limits where given, else the CI contains the ideal value."""
    if limits is not None:
        return interval_within([ci.low, ci.high], limits), _rule(limits, ideal, name)
    return interval_within([ci.low, ci.high], ideal), _rule(limits, ideal, name)


@dataclass(frozen=True)
class ComparisonPoint:
    """One shared sample: its reference and test results."""

    sample: str
    reference: float
    test: float


_VERDICT = {True: "pass", False: "fail", None: "not applicable"}


@dataclass(frozen=True)
class ComparisonResult:
    """The three comparisons and the verdict; ``passed`` is ``None`` (with ``reason``) when
    the Passing-Bablok intervals it is judged on do not exist. Field order and ``metadata``
    give its results.json form."""

    n: int
    level: float
    passing_bablok: PassingBablok
    deming: Deming
    bland_altman: BlandAltman
    passed: bool | None = field(metadata={"json": None})
    verdict: str = field(init=False)                      # "pass", "fail" or "not applicable"
    basis: str
    reason: str
    data: tuple[ComparisonPoint, ...] = field(init=False)
    samples: tuple[str, ...] = field(metadata={"json": None})
    reference: tuple[float, ...] = field(metadata={"json": None})
    test: tuple[float, ...] = field(metadata={"json": None})

    def __post_init__(self):
        object.__setattr__(self, "verdict", _VERDICT[self.passed])
        object.__setattr__(self, "data", tuple(ComparisonPoint(s, x, y)
                                               for s, x, y in zip(self.samples, self.reference, self.test)))

    @property
    def null_reason(self) -> str:
        """Why a value is missing (results.json ``not_applicable``)."""
        return self.reason or "the value does not exist for these data (see the comparison basis)"


def assess_comparison(samples, reference, test, *, error_ratio=1.0, slope_limits=None,
                      intercept_limits=None, percentage=False, alpha=0.05) -> ComparisonResult:
    """All three comparisons and the verdict on the Passing-Bablok intervals.

    Verdict: the slope CI contains 1 and the intercept CI contains 0; where limits
    are given, the CIs must lie inside them instead [EP09]. When an interval does not
    exist (see :func:`passing_bablok`) the verdict is not applicable (``passed = None``)
    with the reason: "not shown is not passed".
    """
    x = np.asarray(reference, float)
    y = np.asarray(test, float)
    pb = passing_bablok(x, y, alpha)
    dm = deming(x, y, error_ratio, alpha)
    ba = bland_altman(x, y, alpha, percentage, samples=tuple(samples))
    common = dict(n=x.size, level=1 - alpha, passing_bablok=pb, deming=dm, bland_altman=ba, samples=tuple(samples),
                  reference=tuple(map(float, x)), test=tuple(map(float, y)))
    if pb.slope_ci is None or pb.intercept_ci is None:
        rule = (f"Passing-Bablok: {_rule(slope_limits, 1.0, 'slope')} and "
                f"{_rule(intercept_limits, 0.0, 'intercept')}")
        return ComparisonResult(**common, passed=None, basis=rule, reason=f"Passing-Bablok: {pb.reason or pb.ci_reason}")
    ok_slope, slope_basis = _judge(pb.slope_ci, slope_limits, 1.0, "slope")
    ok_icpt, icpt_basis = _judge(pb.intercept_ci, intercept_limits, 0.0, "intercept")
    return ComparisonResult(**common, passed=bool(ok_slope and ok_icpt),
                            basis=f"Passing-Bablok: {slope_basis} and {icpt_basis}", reason="")


def _interval(ci):
    """[low, high] of a confidence interval, or None when it does not exist."""
    if ci is None:
        return None
    pair = [getattr(ci, "low", None), getattr(ci, "high", None)]
    return None if missing(pair) else pair


def comparison_criteria(comparison, slope_limits=None, intercept_limits=None) -> tuple:
    """Method comparison: the Passing-Bablok slope and intercept CIs, each judged on its own.

    Each CI must lie inside its limits where the study gives them, else contain the ideal
    value (slope 1, intercept 0); together they are the comparison's verdict [EP09].
    A CI that does not exist gives a not-applicable criterion with the comparison's reason.
    """
    pb = comparison.passing_bablok
    reason = getattr(comparison, "reason", "") or "the Passing-Bablok interval does not exist"
    out = []
    for name, ci, limits, ideal in (("slope", pb.slope_ci, slope_limits, 1.0),
                                    ("intercept", pb.intercept_ci, intercept_limits, 0.0)):
        value = _interval(ci)
        limit = list(limits) if limits is not None else ideal
        rule = f"inside [{limits[0]:g}, {limits[1]:g}]" if limits is not None else f"contains {ideal:g}"
        out.append(Criterion(f"method-comparison-{name}", f"Passing-Bablok {name} CI {rule}", value, limit,
                             interval_within(value, limit),
                             "" if value is not None else f"not applicable: {reason}"))
    return tuple(out)
