"""Invariants of the calibration engine (Hypothesis property tests)."""

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from validator.characteristics.calibration import analyse_calibration, quantify

SETTINGS = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def calibrations(draw):
    levels = draw(st.lists(st.floats(0.1, 100), min_size=3, max_size=7, unique=True))
    reps = draw(st.integers(1, 3))
    x = np.repeat(np.array(sorted(levels)), reps)
    slope = draw(st.floats(0.1, 50))
    intercept = draw(st.floats(-1, 1))
    seed = draw(st.integers(0, 2**31))
    noise = np.random.default_rng(seed).normal(0, 0.02, x.size) * (1 + np.abs(slope * x))
    y = intercept + slope * x + noise
    model = draw(st.sampled_from(["linear", "quadratic"]))
    weighting = draw(st.sampled_from(["none", "1/x", "1/x^2"]))
    if model == "quadratic" and len(levels) < 4:
        model = "linear"
    return x, y, model, weighting


def _analyse(x, y, model, weighting):
    return analyse_calibration(x, y, model=model, weighting=weighting)


@SETTINGS
@given(calibrations(), st.randoms(use_true_random=False))
def test_row_order_does_not_matter(cal, rnd):
    x, y, model, weighting = cal
    perm = list(range(x.size))
    rnd.shuffle(perm)
    a = _analyse(x, y, model, weighting)
    b = _analyse(x[perm], y[perm], model, weighting)
    assert_allclose(a.fit.coefficients["slope"].estimate, b.fit.coefficients["slope"].estimate, rtol=1e-9)
    assert_allclose(a.fit.residual_sd, b.fit.residual_sd, rtol=1e-8, atol=1e-300)
    if a.lack_of_fit.applicable:
        assert_allclose(a.lack_of_fit.statistic, b.lack_of_fit.statistic, rtol=1e-6)


@SETTINGS
@given(calibrations(), st.sampled_from([1e-3, 0.5, 7.0, 1e4]))
def test_scaling_concentration(cal, k):
    # x -> k x: slope -> slope/k, x0 and s(x0) -> k x0, k s(x0)
    x, y, model, weighting = cal
    a = _analyse(x, y, model, weighting)
    b = _analyse(k * x, y, model, weighting)
    assert_allclose(b.fit.coefficients["slope"].estimate, a.fit.coefficients["slope"].estimate / k, rtol=1e-8)
    y0 = [float(np.median(y))]
    qa, qb = quantify(a.fit, "s", y0), quantify(b.fit, "s", y0)
    assert_allclose(qb.concentration, k * qa.concentration, rtol=1e-8)
    assert_allclose(qb.std_error, k * qa.std_error, rtol=1e-7)


@SETTINGS
@given(calibrations(), st.floats(-1e3, 1e3))
def test_shifting_response(cal, c):
    # y -> y + c: intercept -> intercept + c; x0 of shifted readings unchanged (unweighted in x)
    x, y, model, weighting = cal
    if weighting.startswith("1/y"):
        weighting = "none"
    a = _analyse(x, y, model, weighting)
    b = _analyse(x, y + c, model, weighting)
    assert_allclose(b.fit.coefficients["intercept"].estimate,
                    a.fit.coefficients["intercept"].estimate + c, rtol=1e-7, atol=1e-7 * (1 + abs(c)))
    y0 = float(np.median(y))
    assert_allclose(quantify(b.fit, "s", [y0 + c]).concentration, quantify(a.fit, "s", [y0]).concentration,
                    rtol=1e-6, atol=1e-9)


@SETTINGS
@given(calibrations())
def test_intervals_contain_estimates_and_pvalues_in_unit_interval(cal):
    x, y, model, weighting = cal
    res = _analyse(x, y, model, weighting)
    for c in res.fit.coefficients.values():
        assert c.ci.low <= c.estimate <= c.ci.high
    for t in (res.lack_of_fit, res.mandel, res.normality, res.heteroscedasticity, res.levene,
              res.intercept_test):
        if t.applicable:
            assert 0.0 <= t.pvalue <= 1.0
    q = quantify(res.fit, "s", [float(np.mean(y))])
    if np.isfinite(q.concentration):
        assert q.ci.low <= q.concentration <= q.ci.high
