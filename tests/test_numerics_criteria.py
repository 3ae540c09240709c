"""No verdict from nothing: a criterion without a finite value or limit is never met.

The rule lives in ``Criterion.__post_init__`` (validator/criteria.py), so it holds for every
statistic; these tests check it as a property and at each place criteria are built.
"""

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from validator.characteristics.comparison import assess_comparison, comparison_criteria
from validator.characteristics.working_range import LoqLevel, loq_criterion
from validator.criteria import Criterion, at_least, at_most, interval_within, overall_verdict
from validator.engine import analyse_study
from validator.inputs.loading import load_study

MISSING = st.sampled_from([None, math.nan, math.inf, -math.inf, np.nan, np.float64("inf")])
FINITE = st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False)
VALUE = st.one_of(MISSING, FINITE, st.lists(st.one_of(MISSING, FINITE), min_size=2, max_size=2))


def _exists(v):
    if isinstance(v, list):
        return all(x is not None and math.isfinite(x) for x in v)
    return v is not None and math.isfinite(v)


@settings(max_examples=500, deadline=None)
@given(value=VALUE, limit=VALUE, passed=st.sampled_from([True, False, None, np.True_, np.False_]),
       note=st.sampled_from(["", "outside tolerance", "not applicable: because"]))
def test_missing_value_or_limit_is_never_judged(value, limit, passed, note):
    c = Criterion("x", "d", value, limit, passed, note)
    if not (_exists(value) and _exists(limit)):
        assert c.passed is None
    if c.passed is None:
        assert c.note.startswith("not applicable: ") and len(c.note) > len("not applicable: ")
    else:
        assert c.passed is bool(passed) and type(c.passed) is bool
    # common practice, no published source: only an evaluated and met criterion can make a pass
    assert overall_verdict([c]) == {False: "fail", None: "incomplete", True: "pass"}[c.passed]


@settings(max_examples=300, deadline=None)
@given(value=st.one_of(MISSING, FINITE), limit=st.one_of(MISSING, FINITE))
def test_helpers_judge_only_existing_values(value, limit):
    for judge, op in ((at_least, lambda a, b: a >= b), (at_most, lambda a, b: a <= b)):
        verdict = judge(value, limit)
        if _exists(value) and _exists(limit):
            assert verdict is op(value, limit)
        else:
            assert verdict is None


def test_interval_within():
    # hand computation
    assert interval_within([0.98, 1.03], [0.95, 1.05]) is True
    assert interval_within([0.90, 1.03], [0.95, 1.05]) is False
    assert interval_within([0.98, 1.03], 1.0) is True
    assert interval_within([1.01, 1.03], 1.0) is False
    assert interval_within([None, 1.03], 1.0) is None
    assert interval_within([0.9, math.nan], [0.95, 1.05]) is None
    assert interval_within([0.9, 1.1], None) is None


def test_a_met_verdict_without_value_is_overruled():
    # the false PASS of the issue: a value that does not exist cannot meet its limit
    c = Criterion("loq-verification", "RSD at most 20 %", None, 20.0, True)
    assert c.passed is None and c.note == "not applicable: the value does not exist"
    c = Criterion("r-squared", "R² at least 0.99", float("nan"), 0.99, True)
    assert c.passed is None and "not finite" in c.note


def test_loq_criterion_with_no_level_value_is_not_applicable():
    class Check:           # a LoqCheck whose levels have no RSD but which claims a pass
        levels = (LoqLevel("precision", 0.1, None, None),)
        rsd_max_pct = 20.0
        passed = True
        reason = ""
    c = loq_criterion(Check())
    assert c.passed is None and c.note.startswith("not applicable")


def test_comparison_criteria_give_the_comparison_verdict():
    # the demo's comparison data (invented), judged twice: by the comparison module and
    # by the criteria; the two must agree, with the CIs as the judged values
    import csv
    from pathlib import Path
    rows = list(csv.DictReader(open(Path(__file__).parents[1] / "example_studies" / "anions-after-maintenance"
                                    / "comparison.csv")))
    rows = [r for r in rows if r["analyte"] == "nitrate"]
    ref = [float(r["reference"]) for r in rows]
    test = [float(r["test"]) for r in rows]
    for limits in (None, (0.95, 1.05), (0.999, 1.001)):
        comp = assess_comparison([r["sample"] for r in rows], ref, test, slope_limits=limits)
        crits = comparison_criteria(comp, limits, None)
        assert [c.id for c in crits] == ["method-comparison-slope", "method-comparison-intercept"]
        pb = comp.passing_bablok
        assert crits[0].value == [pb.slope_ci.low, pb.slope_ci.high]
        assert crits[1].value == [pb.intercept_ci.low, pb.intercept_ci.high]
        assert all(c.passed for c in crits) == comp.passed


def test_every_criterion_of_the_demo_studies_is_consistent():
    root = __import__("pathlib").Path(__file__).parents[1] / "example_studies"
    for study in sorted(root.glob("*/study.toml")):
        for a in analyse_study(load_study(study)).analytes:
            for c in a.criteria:
                if c.passed is not None:
                    assert _exists(c.value) and _exists(c.limit), c
                else:
                    assert c.note.startswith("not applicable"), c


def test_overall_verdict_needs_every_criterion_shown():
    # "not shown is not passed": a run with a not-applicable criterion and none failed is incomplete,
    # never a pass; any failure wins; no criterion at all is not a pass either
    met = Criterion("a", "d", 1.0, 2.0, True)
    missing = Criterion("b", "d", None, 2.0, True)
    unmet = Criterion("c", "d", 3.0, 2.0, False)
    assert missing.passed is None
    assert overall_verdict([met]) == "pass"
    assert overall_verdict([met, missing]) == "incomplete"
    assert overall_verdict([met, missing, unmet]) == "fail"
    assert overall_verdict([]) == "incomplete"
