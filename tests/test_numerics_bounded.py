"""Bounded work: back-calculation is one vectorised pass, whatever the number of calibrators.

No timing: the tests count calls and compare operation counts at two sizes
(benchmarks/bench_rows.py measures time and memory; see docs/performance.md).
"""

import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from validator.characteristics.calibration import analyse_calibration, back_calculate
from validator.maths.regression import PolynomialFit, fit_polynomial
from validator.results import dumps


def _data(n, curved=False, zero=True):
    rng = np.random.default_rng(n)
    x = np.resize(np.array([0.0, 0.5, 1, 2, 5, 10, 20][0 if zero else 1:]), n)
    y = 0.1 + 2 * x + (0.01 * x**2 if curved else 0) + rng.normal(0, 0.05, n)
    return x, y


@pytest.mark.parametrize("model", ["linear", "quadratic", "origin"])
def test_inverse_many_equals_the_scalar_inverse(model):
    x, y = _data(70, curved=True)
    fit = fit_polynomial(x, y, model=model)
    probes = np.concatenate([y, [-1e3, -5.0, 0.0, 1e3, 1e5, np.max(y) * 3]])
    found, inside = fit.inverse_many(probes)
    for p, f, i in zip(probes, found, inside):
        scalar = fit.inverse(float(p))
        assert (np.isnan(f) and np.isnan(scalar[0])) or f == scalar[0]   # identical, not approximately
        assert bool(i) == scalar[1]


@settings(max_examples=200, deadline=None)
@given(b=st.lists(st.floats(-10, 10, allow_nan=False), min_size=3, max_size=3),
       y0=st.lists(st.floats(-100, 100, allow_nan=False), min_size=1, max_size=20))
def test_quadratic_inverse_many_matches_scalar_roots(b, y0):
    # property: every returned x0 solves the quadratic (or is NaN when no real root exists)
    fit = fit_polynomial(*_data(14, curved=True), model="quadratic")
    object.__setattr__(fit, "beta_u", np.array(b))
    found, _ = fit.inverse_many(np.array(y0))
    for f, target in zip(found, y0):
        scalar = fit.inverse(target)
        assert (np.isnan(f) and np.isnan(scalar[0])) or f == scalar[0]


def _count_calls(monkeypatch, n):
    counts = {"inverse": 0, "inverse_many": 0, "elements": 0}
    original_one, original_many = PolynomialFit.inverse, PolynomialFit.inverse_many

    def one(self, y0):
        counts["inverse"] += 1
        return original_one(self, y0)

    def many(self, y0):
        counts["inverse_many"] += 1
        counts["elements"] += np.size(y0)
        return original_many(self, y0)

    monkeypatch.setattr(PolynomialFit, "inverse", one)
    monkeypatch.setattr(PolynomialFit, "inverse_many", many)
    x, y = _data(n, zero=False)          # every weighting computable at both sizes
    analyse_calibration(x, y, model="linear", weighting="auto")
    monkeypatch.undo()
    return counts


def test_back_calculation_work_grows_linearly(monkeypatch):
    small, large = _count_calls(monkeypatch, 60), _count_calls(monkeypatch, 6000)
    # the number of vectorised passes does not depend on n, and no per-point scalar inverse is made
    assert small["inverse_many"] == large["inverse_many"] > 0
    assert small["inverse"] == large["inverse"] == 0
    # so the elements handled grow exactly as n (common practice, no published source)
    assert large["elements"] == 100 * small["elements"]


def test_back_calculate_finds_the_range_once(monkeypatch):
    x, y = _data(700)
    fit = fit_polynomial(x, y)
    calls = {"min": 0}
    real_min = np.ndarray.min

    class Counting(np.ndarray):
        def min(self, *args, **kwargs):
            calls["min"] += 1
            return real_min(np.asarray(self), *args, **kwargs)

    object.__setattr__(fit, "x", fit.x.view(Counting))
    back_calculate(fit, 15, 20)
    assert calls["min"] <= 2          # once for the range, once for the lowest non-zero level


def test_results_json_lines_grow_linearly():
    # one line per residual and per back-calculated point: the text grows as n, not faster
    def lines(n):
        residuals = list(np.linspace(-1, 1, n))
        back = [{"nominal": 1.0, "response": 2.0, "found": 1.0, "deviation_pct": 0.0, "pass": True}] * n
        text = dumps({"residuals": residuals, "back_calculated": back, "empty": [], "none": None})
        assert json.loads(text) == {"residuals": residuals, "back_calculated": back, "empty": [], "none": None}
        return text.count("\n")
    assert lines(2000) - lines(1000) == lines(3000) - lines(2000) == 2000


def test_dumps_refuses_nan():
    with pytest.raises(ValueError):
        dumps({"x": [float("nan")]})
