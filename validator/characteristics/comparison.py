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

from dataclasses import dataclass

import numpy as np

from ..maths.method_comparison import BlandAltman, Deming, PassingBablok, bland_altman, deming, passing_bablok

__all__ = ["ComparisonResult", "assess_comparison"]


def _rule(limits, ideal, name):
    if limits is not None:
        return f"{name} CI inside [{limits[0]:g}, {limits[1]:g}]"
    return f"{name} CI contains {ideal:g}"


def _judge(ci, limits, ideal, name):
    """CI inside the limits where given, else the CI contains the ideal value."""
    if limits is not None:
        return limits[0] <= ci.low and ci.high <= limits[1], _rule(limits, ideal, name)
    return ci.contains(ideal), _rule(limits, ideal, name)


@dataclass(frozen=True)
class ComparisonResult:
    """The three comparisons and the verdict; ``passed`` is ``None`` (with ``reason``) when
    the Passing-Bablok intervals it is judged on do not exist."""

    n: int
    samples: tuple[str, ...]
    reference: tuple[float, ...]
    test: tuple[float, ...]
    passing_bablok: PassingBablok
    deming: Deming
    bland_altman: BlandAltman
    passed: bool | None
    basis: str
    reason: str = ""
    level: float = 0.95


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
    ba = bland_altman(x, y, alpha, percentage)
    common = (x.size, tuple(samples), tuple(map(float, x)), tuple(map(float, y)), pb, dm, ba)
    if pb.slope_ci is None or pb.intercept_ci is None:
        rule = (f"Passing-Bablok: {_rule(slope_limits, 1.0, 'slope')} and "
                f"{_rule(intercept_limits, 0.0, 'intercept')}")
        return ComparisonResult(*common, None, rule, f"Passing-Bablok: {pb.reason or pb.ci_reason}", 1 - alpha)
    ok_slope, slope_basis = _judge(pb.slope_ci, slope_limits, 1.0, "slope")
    ok_icpt, icpt_basis = _judge(pb.intercept_ci, intercept_limits, 0.0, "intercept")
    return ComparisonResult(*common, bool(ok_slope and ok_icpt), f"Passing-Bablok: {slope_basis} and {icpt_basis}",
                            "", 1 - alpha)
