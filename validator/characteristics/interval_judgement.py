"""Judging on intervals ([criteria] judge_on = "interval", issue #13): recovery by two one-sided tests.

The precision RSDs judged on their upper confidence bounds are in :mod:`.precision`
(``precision_criteria``). Here: the mean recovery of each spiking level is equivalent to its
acceptance range when the (1 - 2 alpha) confidence interval of the mean lies inside it, i.e. both
one-sided tests reject at level alpha ([Schuirmann], [USP1210]).

References
----------
.. [Schuirmann] Schuirmann, D. J. (1987). J. Pharmacokin. Biopharm. 15, 657-680.
.. [USP1210] USP <1210>, Statistical tools for procedure validation.
"""

from __future__ import annotations

from .._common import level_label
from ..criteria import Criterion, interval_within
from ..maths.equivalence import tost_mean

__all__ = ["recovery_interval_criteria"]


def recovery_interval_criteria(recovery, alpha: float) -> tuple:
    """One criterion per spiking level: the (1 - 2 alpha) CI of the mean recovery inside its range.

    The criterion keeps the id of the estimate-based one (``recovery-<added>``); its value is
    the interval, and its note gives the TOST p-value and the point estimate's verdict, so both
    bases are shown.
    """
    out = []
    for lv in recovery.levels:
        low, high = lv.range_pct
        test = tost_mean(lv.recoveries_pct, low, high, alpha=alpha)
        value = None if test.ci is None else [test.ci.low, test.ci.high]
        estimate_ok = "met" if lv.passed else "not met"
        level = "" if test.ci is None else f"{level_label(test.ci.level)} "
        note = (f"judged on the interval (two one-sided tests, p = {test.pvalue:.3g}); the point estimate "
                f"{lv.mean_pct:.4g} % is {estimate_ok} on that basis" if test.ci is not None else
                f"not applicable: {test.reason}; the point estimate {lv.mean_pct:.4g} % is {estimate_ok} "
                "on the estimate basis")
        out.append(Criterion(
            f"recovery-{lv.added:g}",
            f"{level}confidence interval of the mean recovery at added {lv.added:g} within {low:g} to {high:g} % "
            f"(two one-sided tests at alpha = {alpha:g})", value, [low, high], interval_within(value, [low, high]),
            note))
    return tuple(out)
