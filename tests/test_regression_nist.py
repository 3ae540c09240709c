"""Calibration fits against NIST certified values and statsmodels.

Certified values: NIST StRD linear regression datasets (files and values
listed in shared/reference-data/SOURCES.md).
"""

import numpy as np
import pytest
import statsmodels.api as sm
from numpy.testing import assert_allclose

from conftest import load_dataplot, load_strd
from validator.characteristics.calibration import analyse_calibration, lack_of_fit
from validator.maths.regression import fit_polynomial

RTOL = 1e-9


def coef(fit, name):
    c = fit.coefficients[name]
    return c.estimate, c.std_error


def test_norris_straight_line():
    d = load_strd("Norris.dat")
    fit = fit_polynomial(d[:, 1], d[:, 0], model="linear")
    # NIST StRD Norris, certified values
    assert_allclose(coef(fit, "intercept"), (-0.262323073774029, 0.232818234301152), rtol=RTOL)
    assert_allclose(coef(fit, "slope"), (1.00211681802045, 0.429796848199937e-03), rtol=RTOL)
    assert_allclose(fit.residual_sd, 0.884796396144373, rtol=RTOL)
    assert_allclose(fit.r_squared, 0.999993745883712, rtol=RTOL)
    assert fit.df_resid == 34
    assert_allclose(fit.ssr, 26.6173985294224, rtol=RTOL)


def test_pontius_quadratic():
    d = load_strd("Pontius.dat")
    fit = fit_polynomial(d[:, 1], d[:, 0], model="quadratic")
    # NIST StRD Pontius, certified values
    assert_allclose(coef(fit, "intercept"), (0.673565789473684e-03, 0.107938612033077e-03), rtol=RTOL)
    assert_allclose(coef(fit, "slope"), (0.732059160401003e-06, 0.157817399981659e-09), rtol=RTOL)
    assert_allclose(coef(fit, "quadratic"), (-0.316081871345029e-14, 0.486652849992036e-16), rtol=RTOL)
    assert_allclose(fit.residual_sd, 0.205177424076185e-03, rtol=RTOL)
    assert_allclose(fit.r_squared, 0.999999900178537, rtol=RTOL)


@pytest.mark.parametrize("name, slope, sd, rsd, r2", [
    # NIST StRD NoInt1 / NoInt2, certified values (R^2 uncentred)
    ("NoInt1.dat", 2.07438016528926, 0.165289256198347e-01, 3.56753034006338, 0.999365492298663),
    ("NoInt2.dat", 0.727272727272727, 0.420827318078432e-01, 0.369274472937998, 0.993348115299335),
])
def test_through_origin(name, slope, sd, rsd, r2):
    d = load_strd(name)
    fit = fit_polynomial(d[:, 1], d[:, 0], model="origin")
    assert_allclose(coef(fit, "slope"), (slope, sd), rtol=RTOL)
    assert_allclose(fit.residual_sd, rsd, rtol=RTOL)
    assert_allclose(fit.r_squared, r2, rtol=RTOL)


def test_large_offset_survives():
    # Norris shifted by 1e6 in x: slope, its SD and s(y/x) must not change
    # (NIST StRD Norris certified values; numerically careless normal
    # equations lose most digits here).
    d = load_strd("Norris.dat")
    fit = fit_polynomial(d[:, 1] + 1e6, d[:, 0], model="linear")
    assert_allclose(coef(fit, "slope"), (1.00211681802045, 0.429796848199937e-03), rtol=1e-8)
    assert_allclose(fit.residual_sd, 0.884796396144373, rtol=1e-8)


def test_pontius_lack_of_fit_handbook():
    # NIST/SEMATECH e-Handbook 4.6.1 (pmd615.htm): straight line to the
    # load-cell data, B0 0.614969E-02 (sd 0.7132E-03), B1 0.722103E-06
    # (sd 0.3969E-09), residual SD 0.0021712694 (df 38), lack-of-fit F = 214.7464
    # on (18, 20) df; printed to 7 significant digits (SOURCES.md: a fresh fit gives 214.7469).
    d = load_dataplot("PONTIUS.DAT")
    fit = fit_polynomial(d[:, 1], d[:, 0], model="linear")
    assert_allclose(coef(fit, "intercept"), (0.614969e-02, 0.7132e-03), rtol=5e-4)
    assert_allclose(coef(fit, "slope"), (0.722103e-06, 0.3969e-09), rtol=5e-4)
    assert_allclose(fit.residual_sd, 0.0021712694, rtol=1e-5)
    lof = lack_of_fit(fit)
    assert lof.df == (18, 20)
    assert_allclose(lof.statistic, 214.7464, rtol=3e-6)


def test_berger_weighted_handbook():
    # NIST/SEMATECH e-Handbook 4.6.2 (pmd623.htm, pmd625.htm), Alaska pipeline:
    # unweighted B0 4.99368 (sd 1.12566), B1 0.73111 (sd 0.02455), residual SD
    # 6.08092; lack-of-fit F 0.9857 on (76, 29).
    d = load_dataplot("BERGER1.DAT")
    field, lab = d[:, 0], d[:, 1]
    fit = fit_polynomial(lab, field)
    assert_allclose(coef(fit, "intercept"), (4.99368, 1.12566), rtol=2e-6)
    assert_allclose(coef(fit, "slope"), (0.73111, 0.02455), rtol=0, atol=6e-6)
    assert_allclose(fit.residual_sd, 6.08092, rtol=1e-6)
    lof = lack_of_fit(fit)
    assert lof.df == (76, 29)
    assert_allclose(lof.statistic, 0.9857, rtol=1e-4)


@pytest.mark.parametrize("weighting", ["none", "1/x", "1/x^2", "1/y", "1/y^2"])
@pytest.mark.parametrize("model", ["linear", "quadratic", "origin"])
def test_against_statsmodels_wls(weighting, model):
    # cross-check: statsmodels WLS with the same (normalised) weights
    rng = np.random.default_rng(7)
    x = np.repeat([0.5, 1, 2, 5, 10, 20], 3)
    y = 0.3 + 1.7 * x - 0.004 * x**2 + rng.normal(0, 0.02 * x + 0.01)
    fit = fit_polynomial(x, y, model=model, weighting=weighting)
    powers = {"linear": (0, 1), "quadratic": (0, 1, 2), "origin": (1,)}[model]
    X = np.column_stack([x**k for k in powers])
    res = sm.WLS(y, X, weights=fit.weights).fit()
    names = [{0: "intercept", 1: "slope", 2: "quadratic"}[k] for k in powers]
    assert_allclose([fit.coefficients[n].estimate for n in names], res.params, rtol=1e-9)
    assert_allclose([fit.coefficients[n].std_error for n in names], res.bse, rtol=1e-8)
    assert_allclose(fit.residual_sd, np.sqrt(res.scale), rtol=1e-9)
    assert_allclose(fit.r_squared, res.rsquared, rtol=1e-9)
    ci = res.conf_int(0.05)
    assert_allclose([fit.coefficients[n].ci.low for n in names], ci[:, 0], rtol=1e-8)
    # weights normalised to sum n, as documented
    assert_allclose(fit.weights.sum(), x.size)


def test_statsmodels_rsquared_origin_is_uncentred():
    # cross-check: statsmodels OLS without constant reports uncentred R^2
    d = load_strd("NoInt1.dat")
    res = sm.OLS(d[:, 0], d[:, 1:2]).fit()
    fit = fit_polynomial(d[:, 1], d[:, 0], model="origin")
    assert_allclose(fit.r_squared, res.rsquared, rtol=1e-12)


def test_analyse_pontius_auto_picks_quadratic():
    # NIST load cell: Mandel's test must prefer the quadratic (the handbook's
    # lack-of-fit test rejects the straight line, F = 214.7 on (18, 20)).
    d = load_strd("Pontius.dat")
    res = analyse_calibration(d[:, 1], d[:, 0], model="auto")
    assert res.model == "quadratic"
    assert res.mandel.pvalue < 1e-20
