"""Exact fits are judged against the spread of the responses, not their magnitude.

The responses are centred and scaled before the QR solve (validator/maths/regression.py), so a
large common offset changes neither the verdict "exact" nor any statistic but the intercept.
"""

from fractions import Fraction

import numpy as np
import pytest
import statsmodels.api as sm
from hypothesis import given, settings
from hypothesis import strategies as st

from validator.characteristics.calibration import analyse_calibration
from validator.characteristics.detection import assess_detection
from validator.maths.regression import fit_polynomial

# The offset scenario of the issue: six points, y about 1 000 012 + 12.3456 x, noise about 4e-4
X6 = np.arange(1.0, 7.0)
Y6 = 1_000_012 + 12.3456 * X6 + np.array([3e-4, -5e-4, 2e-4, 4e-4, -6e-4, 1e-4])


def _ols(x, y, weights=None, powers=(0, 1)):
    X = np.column_stack([x**k for k in powers])
    return (sm.WLS(y, X, weights=weights) if weights is not None else sm.OLS(y, X)).fit()


def test_offset_example_is_not_exact_and_matches_statsmodels():
    fit = fit_polynomial(X6, Y6)
    ref = _ols(X6, Y6)
    assert not fit.exact
    # cross-check: statsmodels OLS
    assert fit.residual_sd == pytest.approx(np.sqrt(ref.scale), rel=1e-6)
    assert fit.coefficients["slope"].estimate == pytest.approx(ref.params[1], rel=1e-10)
    assert fit.coefficients["slope"].std_error == pytest.approx(ref.bse[1], rel=1e-6)
    assert fit.coefficients["intercept"].estimate == pytest.approx(ref.params[0], rel=1e-14)
    cal = analyse_calibration(X6, Y6)
    assert cal.normality.applicable and cal.intercept_test.applicable and cal.heteroscedasticity.applicable
    assert not any("exact" in d for d in cal.diagnostics)
    det = assess_detection(cal, None)
    lod = {e.method: e.lod for e in det.estimates}
    assert lod["ich-residual-sd"] is not None and lod["iso-11843-2"] is not None
    # hand computation, see detection.py: LOD = 3.3 s / b with s and b from statsmodels OLS
    assert lod["ich-residual-sd"] == pytest.approx(3.3 * np.sqrt(ref.scale) / ref.params[1], rel=1e-6)


def _exact_wls(x, y, w, powers):
    """Weighted least squares in exact rational arithmetic from the float inputs: returns
    (coefficients, residual variance with the weights normalised to sum n)."""
    x, y, w = ([Fraction(float(v)) for v in a] for a in (x, y, w))
    n, p = len(x), len(powers)
    factor = Fraction(n) / sum(w)
    w = [wi * factor for wi in w]
    A = [[sum(wi * xi ** (j + k) for wi, xi in zip(w, x)) for k in powers] for j in powers]
    b = [sum(wi * xi**j * yi for wi, xi, yi in zip(w, x, y)) for j in powers]
    for c in range(p):                                   # Gauss-Jordan, exact
        pivot = A[c][c]
        A[c] = [v / pivot for v in A[c]]
        b[c] /= pivot
        for r in range(p):
            if r != c and A[r][c] != 0:
                f = A[r][c]
                A[r] = [vr - f * vc for vr, vc in zip(A[r], A[c])]
                b[r] -= f * b[c]
    resid = [yi - sum(bk * xi**k for bk, k in zip(b, powers)) for xi, yi in zip(x, y)]
    return b, sum(wi * e * e for wi, e in zip(w, resid)) / (n - p)


def test_own_offset_scenario_weighted_quadratic():
    # invented scenario (data only, not a reference value): a detector with a baseline of 5e8
    # counts, slight curvature, replicates, 1/x weighting
    rng = np.random.default_rng(20261202)
    x = np.repeat([0.5, 1, 2, 5, 10, 20], 3)
    y = 5e8 + 0.731 * x - 0.004 * x**2 + rng.normal(0, 2e-3, x.size) * np.sqrt(x)
    fit = fit_polynomial(x, y, model="quadratic", weighting="1/x")
    assert not fit.exact
    # exact fractions arithmetic on the same float data
    beta, s2 = _exact_wls(x, y, 1 / x, (0, 1, 2))
    assert fit.residual_sd == pytest.approx(float(s2) ** 0.5, rel=1e-7)
    for name, b in zip(("intercept", "slope", "quadratic"), beta):
        assert fit.coefficients[name].estimate == pytest.approx(float(b), rel=1e-9, abs=1e-9)
    # cross-check: statsmodels WLS on y - 5e8 (exact subtraction: Sterbenz lemma, y within a
    # factor 2 of 5e8); statsmodels' scale uses the raw weights, ours are normalised to sum n:
    # w = factor * raw with factor = n / sum(1/x), so s(y/x)^2 = factor * scale
    ref = _ols(x, y - 5e8, weights=1 / x, powers=(0, 1, 2))
    factor = x.size / np.sum(1 / x)
    assert fit.residual_sd == pytest.approx(np.sqrt(ref.scale * factor), rel=1e-7)
    # the intercept 5e8 + 0.0013 is held to float64 spacing at 5e8 (6e-8)
    assert fit.coefficients["intercept"].estimate - 5e8 == pytest.approx(ref.params[0], abs=2 * np.spacing(5e8))
    for name, i in (("slope", 1), ("quadratic", 2)):
        assert fit.coefficients[name].estimate == pytest.approx(ref.params[i], rel=1e-7)
        assert fit.coefficients[name].std_error == pytest.approx(ref.bse[i], rel=1e-7)


def test_exact_line_is_exact_with_and_without_offset():
    # exact fractions: y = 3/2 + 5/4 x is exactly representable at these x, so the fit is exact
    x = [Fraction(k) for k in range(1, 8)]
    y = [Fraction(3, 2) + Fraction(5, 4) * xi for xi in x]
    xf, yf = np.array(x, float), np.array(y, float)
    assert fit_polynomial(xf, yf).exact
    assert fit_polynomial(xf, yf + 2.0**30).exact          # the offset is exactly representable too
    assert fit_polynomial(xf, yf * 2.0**-60).exact          # and so is the scale


@settings(max_examples=200, deadline=None)
@given(offset=st.floats(-1e9, 1e9), exponent=st.integers(-40, 40))
def test_offset_and_scale_change_only_what_they_should(offset, exponent):
    # property (Draper & Smith, ch. 9: least squares is equivariant under affine maps of y)
    rng = np.random.default_rng(7)
    x = np.repeat([1.0, 2, 4, 8, 16], 2)
    y = 0.3 + 1.9 * x + rng.normal(0, 0.05, x.size)
    base = fit_polynomial(x, y)
    k = 10.0**exponent
    moved = fit_polynomial(x, (y + offset) * k)
    assert moved.exact == base.exact is False
    assert moved.residual_sd == pytest.approx(base.residual_sd * k, rel=1e-6 * (1 + abs(offset) / 10))
    assert moved.coefficients["slope"].estimate == pytest.approx(base.coefficients["slope"].estimate * k,
                                                                 rel=1e-8 * (1 + abs(offset) / 10))
    assert moved.coefficients["intercept"].estimate == pytest.approx(
        (base.coefficients["intercept"].estimate + offset) * k, rel=1e-9, abs=1e-6 * k)
    assert moved.r_squared == pytest.approx(base.r_squared, rel=1e-9)


@pytest.mark.parametrize("offset", [0.0, 2.0**20, -(2.0**30)])
def test_norris_with_a_response_offset_keeps_its_certified_values(offset):
    from conftest import load_strd
    d = load_strd("Norris.dat")
    fit = fit_polynomial(d[:, 1], d[:, 0] + offset, model="linear")
    # NIST StRD Norris, certified values; the offset moves only the intercept (the data, with one
    # decimal, gain a rounding error below 2.4e-7 from the addition, far below s = 0.88)
    assert not fit.exact
    assert fit.coefficients["slope"].estimate == pytest.approx(1.00211681802045, rel=1e-9)
    assert fit.coefficients["slope"].std_error == pytest.approx(0.429796848199937e-03, rel=1e-8)
    assert fit.residual_sd == pytest.approx(0.884796396144373, rel=1e-8)
    assert fit.coefficients["intercept"].estimate - offset == pytest.approx(-0.262323073774029, abs=1e-6)
    assert fit.r_squared == pytest.approx(0.999993745883712, rel=1e-9)
