"""Findings of the second hostile black-box run, round 2 (notes: hostile-r2/FINDINGS.md numbers), each kept as a test.

The rules are the README's (common practice, no published source, unless a test names one);
expected numbers are hand computations from the formula beside them.
"""

from __future__ import annotations

import pytest

from validator.characteristics.working_range.analysis import loq_criterion, verify_loq


class _P:
    """A precision level as verify_loq reads it (level and repeatability RSD)."""

    def __init__(self, level, rsd):
        self.level, self.repeatability_rsd_pct = level, rsd


# ----------------------------------------------------------------------------- 3: LOQ check on an RSD of 0
def test_loq_check_on_identical_results_is_not_applicable():
    # README "On the limit": identical results (SD exactly 0) show no spread; an RSD of 0 is never judged met
    check = verify_loq(1.18, [_P(1.0, 0.0)], [], 20.0)
    assert check.passed is None
    assert "precision level 1 show no spread at all (SD exactly 0)" in check.reason
    c = loq_criterion(check)
    assert c.passed is None and c.value is None and c.note.startswith("not applicable: ")
    # with another level that has a real RSD the check is still not met, and the value shown is that RSD
    check = verify_loq(1.18, [_P(1.0, 0.0), _P(2.0, 3.0)], [], 20.0)
    assert check.passed is None
    c = loq_criterion(check)
    assert c.passed is None and c.value == 3.0
    # a level beyond the maximum fails whatever the other shows
    assert verify_loq(1.18, [_P(1.0, 0.0), _P(2.0, 25.0)], [], 20.0).passed is False


# ----------------------------------------------------------------------------- 8: huge dilution factor, figure
def test_dilution_figure_skips_results_outside_the_floating_point_range():
    # a factor of 1e306 makes result × factor overflow: results.json holds null for it (the level is not
    # judged); the figure draws the other levels and says that one result was not drawn
    from types import SimpleNamespace

    from validator.characteristics.dilution_integrity.presentation import figures
    entry = {"levels": [
        {"dilution_factor": 1e306, "nominal": 2000.0, "back_calculated": [None], "max_bias_percent": 15.0},
        {"dilution_factor": 10.0, "nominal": 2000.0, "back_calculated": [1970.0, float("inf"), 2010.0],
         "max_bias_percent": 15.0}]}
    drawn = figures(entry, SimpleNamespace(unit="ng/mL", key="a"))
    assert "2 diluted QC results not drawn" in drawn["accuracy"]
    # nothing finite at all: the figure is still drawn (the limits), with the count
    entry["levels"] = entry["levels"][:1]
    assert "1 diluted QC result not drawn" in figures(entry, SimpleNamespace(unit="ng/mL", key="a"))["accuracy"]


# ----------------------------------------------------------------------------- 2/2b: rounded value vs limit
from validator.report.numbers import CriterionDisplay, criterion_value  # noqa: E402

_PERCENT_MAX = CriterionDisplay("carry-over", "%", "≤", "percent")
_PERCENT_WITHIN = CriterionDisplay("stability", "%", "within", "percent")
_RSD_MAX = CriterionDisplay("rsd", "%", "≤", "rsd")
_AT_LEAST = CriterionDisplay("fraction", "", "≥", "statistic")


@pytest.mark.parametrize("value, limit, display, passed, shown", [
    # hand computation: the rule's rounding (1 decimal for %, 2 s.f. for an RSD, 3 s.f. for a statistic),
    # and as many more significant figures as make the printed value read as the verdict says
    (20.0001, 20.0, _PERCENT_MAX, False, "20.0001"),        # hostile r2 #2: was "20.0 ≤ 20 NOT MET"
    (20.0, 20.0, _PERCENT_MAX, True, "20.0"),               # exactly the limit: met, as printed
    (19.96, 20.0, _PERCENT_MAX, True, "20.0"),              # rounds to the limit and is met: consistent
    (20.04, 20.0, _PERCENT_MAX, False, "20.04"),            # rounds to the limit but lies above it
    (20.4, 20.0, _PERCENT_MAX, False, "20.4"),              # clearly above: the rule alone
    (15.0001, (-15.0, 15.0), _PERCENT_WITHIN, False, "15.0001"),    # hostile r2 #2b, condition a
    (15.0, (-15.0, 15.0), _PERCENT_WITHIN, True, "15.0"),           # hostile r2 #2b, condition b
    (-15.00004, (-15.0, 15.0), _PERCENT_WITHIN, False, "-15.00004"),
    (2.555, 2.56, _RSD_MAX, True, "2.56"),                  # "2.6" would read as above a limit of 2.56
    (15.2, 15.0, _RSD_MAX, False, "15.2"),                  # "15" would read as the limit itself
    (0.6669, 0.667, _AT_LEAST, False, "0.6669"),            # "0.667" would read as at the limit
    (None, 20.0, _PERCENT_MAX, None, "n/a"),
    (20.0001, 20.0, _PERCENT_MAX, None, "20.0"),            # no verdict: nothing to contradict
])
def test_criterion_value_never_reads_as_the_other_verdict(value, limit, display, passed, shown):
    assert criterion_value(value, limit, display, passed) == shown
