"""Invariants and robustness of the sector statistics (Hypothesis).

No expected numbers here: permuting results changes nothing, shifting/scaling data moves the
limits accordingly, intervals contain their estimates, and arbitrary finite data never raise
nor emit a numpy warning (a value or a reason, never a crash).
"""

import os
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from validator.sector import (carry_over, dilution_integrity, incurred_sample_reanalysis, limit_of_blank,
                              limit_of_detection, limit_of_quantitation, lot_accuracy, method_detection_limit,
                              normalised_matrix_factor, selectivity, slope_ratio_matrix_effect, stability)

EXAMPLES = 1000 if os.environ.get("HYPOTHESIS_PROFILE") == "nightly" else 60
# the whole accepted range (|x| <= 1e100, validator.sector._shared.MAX_MAGNITUDE), subnormals included
finite = st.floats(min_value=-1e100, max_value=1e100, allow_nan=False)
positive = st.floats(min_value=1e-3, max_value=1e6, allow_nan=False)


def _strict(fn, *args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        return fn(*args, **kwargs)


@settings(max_examples=EXAMPLES, deadline=None)
@given(st.lists(finite, min_size=1, max_size=80), st.randoms(use_true_random=False),
       st.floats(min_value=-100, max_value=100), st.floats(min_value=0.01, max_value=100))
def test_nonparametric_lob_permutation_and_affine(values, rnd, shift, scale):
    res = _strict(limit_of_blank, values)
    shuffled = list(values)
    rnd.shuffle(shuffled)
    again = _strict(limit_of_blank, shuffled)
    assert res.value == again.value
    if res.value is not None and max(abs(v) for v in values) < 1e6:
        moved = _strict(limit_of_blank, [v * scale + shift for v in values])
        assert moved.value == pytest.approx(res.value * scale + shift, rel=1e-9, abs=1e-6)
    else:
        assert res.value is not None or res.reason


@settings(max_examples=EXAMPLES, deadline=None)
@given(st.lists(st.floats(min_value=0.1, max_value=1e3), min_size=7, max_size=20),
       st.lists(st.floats(min_value=-10, max_value=10), min_size=7, max_size=20), positive)
def test_mdl_scales_with_the_unit(spiked, blanks, k):
    res = _strict(method_detection_limit, spiked, blanks)
    scaled = _strict(method_detection_limit, [v * k for v in spiked], [v * k for v in blanks])
    if res.value is None:
        assert res.reason
    else:
        assert scaled.value == pytest.approx(res.value * k, rel=1e-9)
        assert res.value >= res.spiked


@settings(max_examples=EXAMPLES, deadline=None)
@given(st.lists(st.tuples(finite, finite), min_size=0, max_size=12),
       st.lists(st.tuples(finite, finite), min_size=0, max_size=12),
       st.sampled_from(["pooled", "separate"]))
def test_slope_ratio_never_crashes_and_interval_contains_estimate(solvent, matrix, variance):
    xs, ys = [p[0] for p in solvent], [p[1] for p in solvent]
    xm, ym = [p[0] for p in matrix], [p[1] for p in matrix]
    res = _strict(slope_ratio_matrix_effect, xs, ys, xm, ym, variance=variance)
    if res.statistic is None:
        assert res.reason
    else:
        assert np.isfinite(res.statistic)
        if res.interval is not None:
            tol = 1e-9 * abs(res.statistic) + 1e-9
            assert res.interval.low - tol <= res.statistic <= res.interval.high + tol
        else:
            assert res.reason


@settings(max_examples=EXAMPLES, deadline=None)
@given(st.lists(finite, min_size=1, max_size=10), st.lists(finite, min_size=1, max_size=10),
       st.sampled_from(["estimate", "interval"]))
def test_stability_never_crashes(stored, fresh, judged_on):
    for kwargs in ({"nominal": 10.0}, {"fresh": fresh}):
        res = _strict(stability, stored, judged_on=judged_on, **kwargs)
        assert res.passed is not None or res.reason
        if res.interval is not None and res.deviation_percent is not None:
            tol = 1e-9 * abs(res.deviation_percent) + 1e-9
            assert res.interval.low - tol <= res.deviation_percent <= res.interval.high + tol


@settings(max_examples=EXAMPLES, deadline=None)
@given(st.lists(st.tuples(positive, positive), min_size=1, max_size=30))
def test_isr_swap_negates_differences(pairs):
    o, r = [p[0] for p in pairs], [p[1] for p in pairs]
    a, b = _strict(incurred_sample_reanalysis, o, r), _strict(incurred_sample_reanalysis, r, o)
    assert [s.difference_percent for s in a.samples] == pytest.approx([-s.difference_percent for s in b.samples])
    assert a.passed == b.passed and 0 <= a.fraction_within <= 1


@settings(max_examples=EXAMPLES, deadline=None)
@given(st.lists(st.tuples(st.sampled_from("abcdefg"), st.floats(min_value=-1e3, max_value=1e3)),
                min_size=1, max_size=30))
def test_lot_accuracy_never_crashes(rows):
    res = _strict(lot_accuracy, [v for _, v in rows], [k for k, _ in rows], 10.0)
    assert res.passed is not None or res.reason


@settings(max_examples=EXAMPLES, deadline=None)
@given(st.lists(st.tuples(st.sampled_from("abc"), finite), min_size=2, max_size=20),
       st.lists(finite, min_size=7, max_size=12), st.lists(finite | st.just(float("nan")), min_size=1, max_size=12),
       st.floats(min_value=1e-100, max_value=1e100), st.floats(min_value=1.0, max_value=1e100))
def test_everything_else_gives_a_value_or_a_reason(rows, spiked, blanks, reference, factor):
    labels, values = [k for k, _ in rows], [v for _, v in rows]
    lob = _strict(limit_of_blank, values, method="parametric", sample=labels)
    assert lob.value is not None or lob.reason
    lod = _strict(limit_of_detection, values, labels, 0.0)
    assert (lod.value is not None and np.isfinite(lod.value)) or lod.reason
    loq = _strict(limit_of_quantitation, values, labels, [ord(k) for k in labels], max_cv_percent=20,
                  max_total_error=1.0)
    assert loq.value is not None or loq.reason
    mdl = _strict(method_detection_limit, spiked, blanks)
    assert (mdl.value is not None and np.isfinite(mdl.value)) or mdl.reason
    dil = _strict(dilution_integrity, values, factor, reference)
    assert dil.passed is not None or dil.reason
    co = _strict(carry_over, values, [reference])
    assert all(np.isfinite(co.analyte_percent))
    sel = _strict(selectivity, values, labels, [reference], min_lots=1)
    assert sel.passed is not None
    pos = [abs(v) for v in values]
    isr = _strict(incurred_sample_reanalysis, pos, pos[::-1])
    assert all(x.difference_percent is None or np.isfinite(x.difference_percent) for x in isr.samples)
    mf = _strict(normalised_matrix_factor, pos, pos[::-1], labels, [reference], [reference], min_lots=2)
    assert mf.passed is not None or mf.reason


def test_values_beyond_the_supported_magnitude_are_refused():
    with pytest.raises(ValueError, match=r"blank_results: value 1e\+101 at position 2 is not allowed; "
                                         r"allowed: finite numbers within \+/-1e\+100"):
        limit_of_blank([0.0, 1.0, 1e101])
