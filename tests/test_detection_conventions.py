"""Detection-limit and reference-material conventions, each checked by hand computation from the
formula stated in the docstring and on the dossier's formulas page. Data here are our own test
inputs; every expected value is computed independently in the test from its formula."""

import math
import time

import numpy as np
import pytest
from scipy import stats

from validator.characteristics.calibration import analyse_calibration
from validator.characteristics.detection import assess_detection, noncentrality_delta
from validator.characteristics.precision import assess_precision_level, horwitz_prsd
from validator.characteristics.recovery import assess_recovery
from validator.characteristics.reference_material import assess_reference_material

X = np.repeat([1.0, 2.0, 4.0, 8.0, 16.0], 3)
NOISE = np.array([0.012, -0.008, 0.003, -0.02, 0.025, 0.004, 0.03, -0.045, 0.01,
                  -0.07, 0.09, 0.02, 0.16, -0.12, -0.05])   # fixed residual pattern, roughly proportional to x


def _estimates(cal, **kw):
    return {e.method: e for e in assess_detection(cal, kw.pop("blanks", None), **kw).estimates}


# ---------------------------------------------------------------- non-central t delta, bounded

@pytest.mark.parametrize("alpha, beta, df", [(1e-17, 0.05, 3), (1e-17, 0.05, 13), (0.05, 1e-17, 13),
                                             (1e-300, 0.05, 1), (1e-300, 1e-300, 100), (1e-17, 1e-17, 10**5),
                                             (0.05, 0.05, 10**6), (0.5, 0.49, 5)])
def test_noncentrality_delta_extremes_return_or_refuse_quickly(alpha, beta, df):
    start = time.perf_counter()
    try:
        d = noncentrality_delta(df, alpha, beta)
    except ValueError as exc:
        assert "noncentrality_delta" in str(exc)
    else:
        # cross-check: scipy.stats.nct puts probability beta below t(1 - alpha, df) at delta
        assert stats.nct.cdf(stats.t.isf(alpha, df), df, d) == pytest.approx(beta, rel=1e-6)
    assert time.perf_counter() - start < 5.0


@pytest.mark.parametrize("alpha, beta, df", [(float("nan"), 0.05, 5), (0.05, float("inf"), 5), (0.0, 0.05, 5),
                                             (1.0, 0.05, 5), (0.6, 0.5, 5), (0.05, 0.05, 0), (0.05, 0.05, float("nan"))])
def test_noncentrality_delta_refuses_bad_input(alpha, beta, df):
    with pytest.raises(ValueError, match="noncentrality_delta"):
        noncentrality_delta(df, alpha, beta)


def test_iso_estimate_not_applicable_when_delta_cannot_be_computed():
    cal = analyse_calibration(X, 0.1 + 2.0 * X + 0.05 * np.sin(np.arange(X.size)))
    iso = _estimates(cal, alpha=0.05, beta=0.97)["iso-11843-2"]      # alpha + beta >= 1: no delta >= 0
    assert iso.lod is None and iso.reason.startswith("delta could not be computed")


# ---------------------------------------------------------------- negative slope

def test_negative_slope_uses_the_magnitude_and_says_so():
    y = 40.0 - 2.0 * X + np.resize([0.01, -0.015, 0.004, 0.012, -0.009, -0.002], X.size)  # constant-size noise
    cal = analyse_calibration(X, y)
    assert cal.heteroscedasticity.pvalue > 0.05                      # so ISO 11843-2 applies as well
    est = _estimates(cal, blanks=[40.01, 39.98, 40.02, 39.99])
    b, a = np.polyfit(X, y, 1)                                         # hand computation (numpy polyfit)
    s = math.sqrt(np.sum((y - (a + b * X)) ** 2) / (X.size - 2))
    assert b < 0
    lod = est["ich-residual-sd"]
    assert lod.lod == pytest.approx(3.3 * s / abs(b), rel=1e-9) and lod.loq == pytest.approx(10 * s / abs(b), rel=1e-9)
    for e in est.values():
        assert e.lod > 0 and "negative" in e.basis
        assert e.loq is None or e.loq > 0
    # the mirrored calibration (response -y) gives the same limits
    mirror = _estimates(analyse_calibration(X, -y + 80.0), blanks=[40.01, 39.98, 40.02, 39.99])
    for m in ("ich-residual-sd", "ich-intercept-sd", "blank-sd", "iso-11843-2"):
        assert est[m].lod == pytest.approx(mirror[m].lod, rel=1e-9)


# ---------------------------------------------------------------- (a) weighted fits

def test_weighted_lod_taken_at_the_lowest_calibrator():
    y = 0.05 + 1.2 * X + NOISE
    # hand computation: weighted least squares with raw weights w = 1/x^2
    w = 1 / X**2
    xw, yw = np.sum(w * X) / np.sum(w), np.sum(w * y) / np.sum(w)
    b = np.sum(w * (X - xw) * (y - yw)) / np.sum(w * (X - xw) ** 2)
    a = yw - b * xw
    s_raw = math.sqrt(np.sum(w * (y - a - b * X) ** 2) / (X.size - 2))
    sigma_low = s_raw / math.sqrt(1 / X.min() ** 2)                 # s/sqrt(w(x_low)), raw weights
    # the same sigma with weights normalised to sum n: s scales by sqrt(c), w(x_low) by c
    c = X.size / np.sum(w)
    assert math.sqrt(c) * s_raw / math.sqrt(c / X.min() ** 2) == pytest.approx(sigma_low, rel=1e-12)
    assert math.sqrt(c) * s_raw != pytest.approx(s_raw, rel=0.1)    # s(y/x) alone depends on the scaling
    weighted = _estimates(analyse_calibration(X, y, weighting="1/x^2"))["ich-residual-sd"]
    assert weighted.sigma == pytest.approx(sigma_low, rel=1e-9)
    assert weighted.lod == pytest.approx(3.3 * sigma_low / b, rel=1e-9)
    assert "lowest calibrator" in weighted.basis and "x = 1" in weighted.basis
    # the unweighted basis on the same data, by hand (numpy polyfit): a different, larger noise estimate
    bu, au = np.polyfit(X, y, 1)
    su = math.sqrt(np.sum((y - au - bu * X) ** 2) / (X.size - 2))
    unweighted = _estimates(analyse_calibration(X, y))["ich-residual-sd"]
    assert unweighted.lod == pytest.approx(3.3 * su / bu, rel=1e-9)
    assert unweighted.lod > 2 * weighted.lod
    assert "unweighted" in unweighted.basis


# ---------------------------------------------------------------- (d) ISO 11843-2, K readings

@pytest.mark.parametrize("K", [1, 3])
def test_iso_11843_2_with_k_readings_by_hand(K):
    x = np.repeat([0.0, 1.0, 2.0, 3.0, 4.0], 2)
    y = 0.1 + 0.5 * x + np.array([0.01, -0.012, 0.006, -0.004, 0.015, -0.01, -0.008, 0.011, 0.004, -0.009])
    cal = analyse_calibration(x, y)
    iso = _estimates(cal, readings_per_sample=K)["iso-11843-2"]
    n = 10                                                       # I = 5 levels x J = 2: every reading is used
    xbar = sum(x) / n
    sxx = sum((xi - xbar) ** 2 for xi in x)
    b, a = np.polyfit(x, y, 1)
    s = math.sqrt(sum((yi - a - b * xi) ** 2 for xi, yi in zip(x, y)) / (n - 2))
    root = math.sqrt(1 / K + 1 / n + xbar**2 / sxx)             # hand computation, ISO 11843-2
    assert iso.critical_value == pytest.approx(stats.t.ppf(0.95, n - 2) * s / b * root, rel=1e-9)
    assert iso.lod == pytest.approx(noncentrality_delta(n - 2, 0.05, 0.05) * s / b * root, rel=1e-9)
    assert f"K = {K} reading" in iso.basis and "n = 10 individual readings" in iso.basis


# ---------------------------------------------------------------- every null has a reason

def test_every_missing_detection_estimate_has_a_reason():
    y = 0.05 + 1.2 * X + NOISE
    cases = [analyse_calibration(X, y), analyse_calibration(X, y, weighting="1/x"),
             analyse_calibration(X, y, through_origin=True), analyse_calibration(X, 0.05 + 1.2 * X)]
    for cal in cases:
        for blanks in (None, [0.01], [0.02, 0.02], [0.01, 0.03, 0.02]):
            for e in assess_detection(cal, blanks).estimates:
                assert (e.lod is None) == bool(e.reason), e
                assert e.lod is None or e.lod > 0
    one_blank = _estimates(analyse_calibration(X, y), blanks=[0.01])["blank-sd"]
    assert one_blank.reason == "needs at least 2 blank readings"


def test_recovery_level_with_one_result_has_a_reason():
    res = assess_recovery([1.0, 2.0, 2.0], [0.98, 2.02, 1.96])
    one = res.levels[0]
    assert one.sd_pct is None and one.ci_pct is None and "one result" in one.reason
    assert res.levels[1].reason == ""


# ---------------------------------------------------------------- (b) reference material, ERM AN1

def test_reference_material_default_u_m_is_the_standard_error_of_the_mean():
    found = [5.12, 5.08, 5.15, 5.10, 5.05]
    rm = assess_reference_material(found, 5.00, 0.02)
    u_m = np.std(found, ddof=1) / math.sqrt(5)                      # hand computation
    assert rm.u_mean == pytest.approx(u_m, rel=1e-12)
    assert rm.expanded_uncertainty == pytest.approx(2 * math.sqrt(u_m**2 + 0.02**2), rel=1e-12)
    assert rm.significant is True and "s/√n" in rm.u_mean_basis


def test_reference_material_with_the_laboratory_uncertainty():
    # ERM Application Note 1: u_Delta = sqrt(u_m^2 + u_CRM^2), u_m the laboratory's combined
    # standard uncertainty; |Delta| = 0.1 against 2 sqrt(0.05^2 + 0.02^2) = 0.10770 -> not significant
    found = [5.12, 5.08, 5.15, 5.10, 5.05]
    rm = assess_reference_material(found, 5.00, 0.02, measurement_uncertainty=0.05)
    assert rm.u_mean == 0.05
    assert rm.expanded_uncertainty == pytest.approx(2 * math.sqrt(0.05**2 + 0.02**2), rel=1e-12)
    assert rm.bias == pytest.approx(0.1, rel=1e-9)
    assert rm.significant is False and "combined standard uncertainty" in rm.u_mean_basis
    # one result: judged with the laboratory's uncertainty, and not applicable (with a reason) without it
    assert assess_reference_material([5.3], 5.0, 0.02, measurement_uncertainty=0.05).significant is True
    single = assess_reference_material([5.3], 5.0, 0.02)
    assert single.significant is None and single.reason


# ---------------------------------------------------------------- (c) HorRat, Thompson (2000)

def test_horwitz_thompson_pieces_by_hand():
    # Thompson (2000), Analyst 125, 385-386: 22 % below 1.2e-7, 2 C^-0.1505 % to 0.138, C^-0.5 % above
    assert horwitz_prsd(10e-9) == 22.0                               # 10 ug/kg
    assert horwitz_prsd(1e-6) == pytest.approx(2 * 1e-6 ** -0.1505, rel=1e-12)   # 1 mg/kg: 15.9967 %
    assert horwitz_prsd(1e-6) == pytest.approx(15.9967, abs=1e-4)         # 2 * 10**(6 * 0.1505), by hand
    assert horwitz_prsd(0.20) == pytest.approx(1 / math.sqrt(0.20), rel=1e-12)   # 20 %: 2.23607 %
    # the pieces meet at the boundaries (to about 1 %)
    assert horwitz_prsd(1.2e-7) == pytest.approx(22.0, rel=0.01)
    assert horwitz_prsd(0.138) == pytest.approx(1 / math.sqrt(0.138), rel=0.01)
    with pytest.raises(ValueError):
        horwitz_prsd(0.0)


def test_horrat_at_10_ug_per_kg_uses_22_percent():
    y = [10.2, 9.6, 11.0, 9.1, 10.5, 9.9, 10.8, 9.4, 10.1]
    g = ["a"] * 3 + ["b"] * 3 + ["c"] * 3
    lv = assess_precision_level(10.0, y, g, unit="ug/kg")
    assert lv.horwitz_prsd_pct == 22.0
    assert lv.horrat == pytest.approx(lv.intermediate_rsd_pct / 22.0, rel=1e-12)
    assert "Thompson" in lv.horwitz_note and "22 %" in lv.horwitz_note
