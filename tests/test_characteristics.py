"""Detection limits, recovery, reference material and precision against published and library references."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from scipy import stats

from conftest import load_strd, reference_file
from validator.characteristics.calibration import analyse_calibration
from validator.inputs.tables import exact_centre
from validator.characteristics.detection import assess_detection, noncentrality_delta
from validator.characteristics.precision import assess_precision_level, horwitz_prsd, mass_fraction_factor
from validator.maths.outliers import cochran_c, grubbs_means
from validator.maths.anova import one_way_anova
from validator.characteristics.recovery import assess_recovery
from validator.characteristics.reference_material import assess_reference_material
from validator.characteristics.working_range import verify_loq, working_range


def strd_anova(name):
    """Group labels and responses of a NIST StRD ANOVA file, centred exactly (Decimal)."""
    lines = [ln.split() for ln in reference_file("nist-strd", name).read_text().splitlines()[60:] if ln.strip()]
    offset, centred = exact_centre([ln[1] for ln in lines])
    return [ln[0] for ln in lines], centred, offset


# NIST StRD one-way ANOVA certified values (shared/reference-data/SOURCES.md): between MS, within MS, F
CERTIFIED = {
    "SiRstv.dat": (1.27865654000000e-02, 1.08318280000000e-02, 1.18046237440255e00),
    "AtmWtAg.dat": (3.63834187500000e-09, 2.28155932971014e-10, 1.59467335677930e01),
    "SmLs01.dat": (0.21, 0.01, 21.0), "SmLs02.dat": (2.01, 0.01, 201.0), "SmLs03.dat": (20.01, 0.01, 2001.0),
    "SmLs04.dat": (0.21, 0.01, 21.0), "SmLs05.dat": (2.01, 0.01, 201.0), "SmLs06.dat": (20.01, 0.01, 2001.0),
    "SmLs07.dat": (0.21, 0.01, 21.0), "SmLs08.dat": (2.01, 0.01, 201.0), "SmLs09.dat": (20.01, 0.01, 2001.0),
}


@pytest.mark.parametrize("name", sorted(CERTIFIED))
def test_anova_against_nist_certified(name):
    groups, values, offset = strd_anova(name)
    a = one_way_anova(values, groups, offset)
    ms_b, ms_w, F = CERTIFIED[name]
    # certified to 15 digits; the "higher difficulty" files keep 9+ digits only because of exact centring
    assert_allclose([a.ms_between, a.ms_within, a.statistic], [ms_b, ms_w, F], rtol=1e-9)


def test_anova_matches_scipy_f_oneway():
    # cross-check: scipy.stats.f_oneway on an unbalanced invented design
    rng = np.random.default_rng(3)
    groups = ["a"] * 3 + ["b"] * 5 + ["c"] * 2 + ["d"] * 4
    y = rng.normal(10, 0.2, len(groups)) + np.repeat([0, 0.3, -0.2, 0.1], [3, 5, 2, 4])
    a = one_way_anova(y, groups)
    ref = stats.f_oneway(*[y[np.array(groups) == g] for g in "abcd"])
    assert_allclose(a.statistic, ref.statistic, rtol=1e-12)
    assert_allclose(a.pvalue, ref.pvalue, rtol=1e-10)


def test_unbalanced_n0_hand_computation():
    # hand computation: series sizes 3, 3, 2 -> N = 8, sum n_j^2 = 22,
    # n0 = (8 - 22/8) / (3 - 1) = (8 - 2.75) / 2 = 2.625 (ISO 5725-2)
    groups = ["d1"] * 3 + ["d2"] * 3 + ["d3"] * 2
    y = np.array([10.1, 10.3, 10.2, 10.6, 10.5, 10.7, 9.9, 10.0])
    lv = assess_precision_level(10.0, y, groups, unit="mg/kg")
    assert lv.anova.n0 == pytest.approx(2.625, rel=1e-14)
    # group means 10.2, 10.6, 9.95; grand mean (30.6 + 31.8 + 19.9)/8 = 82.3/8 = 10.2875
    # SS_within = (0.01+0.01+0) + (0.0+0.01+0.01) + (0.0025+0.0025) = 0.045, MS_w = 0.045/5 = 0.009
    assert lv.anova.ms_within == pytest.approx(0.009, rel=1e-10)
    # SS_between = 3(-0.0875)^2 + 3(0.3125)^2 + 2(-0.3375)^2 = 0.02296875 + 0.29296875 + 0.2278125
    #            = 0.54375, MS_between = 0.54375/2 = 0.271875
    assert lv.anova.ms_between == pytest.approx(0.271875, rel=1e-10)
    sL2 = (0.271875 - 0.009) / 2.625
    assert lv.between_series_sd == pytest.approx(np.sqrt(sL2), rel=1e-10)
    assert lv.intermediate_sd == pytest.approx(np.sqrt(0.009 + sL2), rel=1e-10)
    assert lv.repeatability_rsd_pct == pytest.approx(100 * np.sqrt(0.009) / 10.2875, rel=1e-10)


def test_negative_between_variance_is_set_to_zero():
    groups = ["a", "a", "a", "b", "b", "b"]
    y = np.array([1.0, 1.4, 0.6, 1.1, 0.7, 1.2])      # series means nearly equal, wide scatter
    lv = assess_precision_level(1.0, y, groups)
    assert lv.between_clamped and lv.between_series_sd == 0
    assert lv.intermediate_sd == pytest.approx(lv.repeatability_sd)


def test_sd_confidence_intervals_from_chi_square():
    # cross-check: scipy.stats.chi2 quantiles; s_r CI on N - p df
    groups = ["a"] * 4 + ["b"] * 4 + ["c"] * 4
    y = np.array([5.0, 5.1, 4.9, 5.05, 5.2, 5.3, 5.1, 5.25, 4.95, 5.0, 5.05, 4.9])
    lv = assess_precision_level(5.0, y, groups)
    df = 9
    sr = lv.repeatability_sd
    assert_allclose([lv.repeatability_sd_ci.low, lv.repeatability_sd_ci.high],
                    [sr * np.sqrt(df / stats.chi2.ppf(0.975, df)), sr * np.sqrt(df / stats.chi2.ppf(0.025, df))])
    # Satterthwaite df for s_I (formula in the docstring), hand-evaluated from the ANOVA
    a = lv.anova
    si2 = lv.intermediate_sd**2
    nu = si2**2 / ((a.ms_between / a.n0) ** 2 / 2 + ((1 - 1 / a.n0) * a.ms_within) ** 2 / 9)
    assert lv.intermediate_df == pytest.approx(nu)
    assert lv.intermediate_sd_ci.low < lv.intermediate_sd < lv.intermediate_sd_ci.high


def test_cochran_and_grubbs():
    groups = ["a"] * 3 + ["b"] * 3 + ["c"] * 3 + ["d"] * 3
    y = np.array([1.0, 1.01, 0.99, 1.0, 1.02, 0.98, 1.0, 1.3, 0.7, 1.0, 1.01, 1.0])
    c = cochran_c(y, groups)
    var = [np.var(y[i:i + 3], ddof=1) for i in range(0, 12, 3)]
    assert c.statistic == pytest.approx(max(var) / sum(var))     # definition, ISO 5725-2
    assert c.pvalue < 0.05
    # Grubbs: G = max|m - mean(m)|/sd(m) (ISO 5725-2 / Grubbs 1969), and its critical value
    # G_crit(k=4, alpha=0.05) = (3/2) sqrt(t^2/(2 + t^2)), t = t(1 - 0.05/8, 2): scipy.stats.t
    y2 = np.array([1.0, 1.0, 1.0, 1.02, 1.02, 1.02, 0.99, 0.99, 0.99, 1.4, 1.4, 1.4])
    g = grubbs_means(y2, groups)
    m = y2.reshape(4, 3).mean(axis=1)
    assert g.statistic == pytest.approx(np.max(np.abs(m - m.mean())) / np.std(m, ddof=1))
    t = stats.t.ppf(1 - 0.05 / 8, 2)
    g_crit = 1.5 * np.sqrt(t**2 / (2 + t**2))
    # at the critical value the p-value is alpha (the inversion is consistent)
    y3 = np.concatenate([np.full(3, v) for v in _means_with_g(g_crit)])
    assert grubbs_means(y3, groups).pvalue == pytest.approx(0.05, rel=1e-6)


def _means_with_g(G):
    """Four series means (0, 1, -1, d) whose Grubbs statistic equals G (solved for d)."""
    from scipy.optimize import brentq

    def excess(d):
        m = np.array([0.0, 1.0, -1.0, d])
        return np.max(np.abs(m - m.mean())) / np.std(m, ddof=1) - G
    return [0.0, 1.0, -1.0, brentq(excess, 1.5, 1e6)]


def test_horwitz():
    # Horwitz & Albert (2006): PRSD_R = 2 C^-0.1505; at C = 1e-6 (1 mg/kg) PRSD_R = 16.0 %
    # (the well-known "16 % at 1 ppm"; # from memory: 15.99 %)
    assert horwitz_prsd(1e-6) == pytest.approx(2 * 1e-6 ** -0.1505)
    assert horwitz_prsd(1e-6) == pytest.approx(16.0, abs=0.05)
    assert mass_fraction_factor("mg/kg") == (1e-6, "")
    assert mass_fraction_factor("mg/L")[1] == "density 1 kg/L assumed"
    assert mass_fraction_factor("area units") is None


def test_noncentral_delta_against_scipy_nct():
    # scipy.stats.nct: the exact delta puts probability beta below t(1 - alpha, df)
    for df in (3, 8, 18, 60):
        d = noncentrality_delta(df, 0.05, 0.05)
        assert stats.nct.cdf(stats.t.ppf(0.95, df), df, d) == pytest.approx(0.05, abs=1e-10)
    # large df tends to z(1 - alpha) + z(1 - beta) = 3.2897 (normal limit)
    assert noncentrality_delta(100000, 0.05, 0.05) == pytest.approx(2 * stats.norm.ppf(0.95), rel=1e-3)


LIN_X = np.repeat([0.5, 1.0, 2.0, 4.0, 8.0], 3)
LIN_Y = 0.02 + 1.5 * LIN_X + np.random.default_rng(5).normal(0, 0.03, LIN_X.size)


def test_detection_formulas():
    cal = analyse_calibration(LIN_X, LIN_Y)
    blanks = np.array([0.01, 0.03, 0.02, 0.0, 0.025, 0.015])
    det = assess_detection(cal, blanks, readings_per_sample=2)
    est = {e.method: e for e in det.estimates}
    b = cal.fit.coefficients["slope"].estimate
    s = cal.fit.residual_sd
    assert est["ich-residual-sd"].lod == pytest.approx(3.3 * s / b)          # ICH Q2: 3.3 sigma / S
    assert est["ich-residual-sd"].loq == pytest.approx(10 * s / b)
    sa = cal.fit.coefficients["intercept"].std_error
    assert est["ich-intercept-sd"].lod == pytest.approx(3.3 * sa / b)
    assert est["blank-sd"].lod == pytest.approx(3.3 * np.std(blanks, ddof=1) / b)
    # ISO 11843-2 with n = 15, K = 2 (formulas in the docstring; t from scipy.stats.t)
    n = LIN_X.size
    root = np.sqrt(1 / 2 + 1 / n + LIN_X.mean() ** 2 / np.sum((LIN_X - LIN_X.mean()) ** 2))
    iso = est["iso-11843-2"]
    assert iso.critical_value == pytest.approx(stats.t.ppf(0.95, n - 2) * s / b * root)
    assert iso.lod == pytest.approx(noncentrality_delta(n - 2, 0.05, 0.05) * s / b * root)
    assert iso.lod > iso.critical_value > 0
    assert iso.loq is None


def test_iso_not_applicable_when_weighted():
    cal = analyse_calibration(LIN_X, LIN_Y, weighting="1/x")
    iso = next(e for e in assess_detection(cal, None).estimates if e.method == "iso-11843-2")
    assert not iso.applicable and "unweighted" in iso.reason


@settings(max_examples=40, deadline=None)
@given(st.floats(0.001, 1.0), st.integers(0, 10_000))
def test_iso_xd_exceeds_xc(noise, seed):
    y = 0.02 + 1.5 * LIN_X + np.random.default_rng(seed).normal(0, noise, LIN_X.size)
    cal = analyse_calibration(LIN_X, y)
    iso = next(e for e in assess_detection(cal, None).estimates if e.method == "iso-11843-2")
    if iso.applicable:
        assert iso.lod > iso.critical_value > 0


def test_recovery_against_scipy_ttest():
    # cross-check: scipy.stats.ttest_1samp against 100 % and the t-based CI
    added = np.array([1.0, 1.0, 1.0, 5.0, 5.0, 5.0, 5.0])
    native = np.full(7, 0.4)
    found = np.array([1.35, 1.42, 1.37, 5.3, 5.45, 5.2, 5.38])
    res = assess_recovery(added, found, native, range_for=lambda a: (90, 110))
    for lv in res.levels:
        r = 100 * (found[added == lv.added] - 0.4) / lv.added
        ref = stats.ttest_1samp(r, 100)
        assert lv.t_statistic == pytest.approx(ref.statistic)
        assert lv.pvalue == pytest.approx(ref.pvalue)
        ci = ref.confidence_interval(0.95)
        assert (lv.ci_pct.low, lv.ci_pct.high) == pytest.approx((ci.low, ci.high))
    assert res.levels[0].mean_pct == pytest.approx(100 * (np.mean([1.35, 1.42, 1.37]) - 0.4))
    assert res.overall_mean_pct == pytest.approx(np.mean(100 * (found - native) / added))


def test_reference_material_erm_rule():
    # ERM Application Note 1: significant when |bias| > 2 sqrt(u_m^2 + u_CRM^2)
    found = [12.1, 12.3, 12.2, 12.25]
    rm = assess_reference_material(found, 12.5, 0.05)
    u_m = np.std(found, ddof=1) / 2
    assert rm.expanded_uncertainty == pytest.approx(2 * np.sqrt(u_m**2 + 0.05**2))
    assert rm.significant == (abs(np.mean(found) - 12.5) > rm.expanded_uncertainty)
    assert rm.significant


@settings(max_examples=50, deadline=None)
@given(st.floats(-1e3, 1e3), st.floats(0.01, 100), st.integers(0, 10_000))
def test_precision_shift_and_scale_invariance(shift, k, seed):
    groups = ["a"] * 3 + ["b"] * 3 + ["c"] * 4
    y = 10 + np.random.default_rng(seed).normal(0, 0.1, 10) + np.repeat([0, 0.1, -0.05], [3, 3, 4])
    base = assess_precision_level(10, y, groups)
    shifted = assess_precision_level(10, y + shift, groups)
    scaled = assess_precision_level(10, k * y, groups)
    for attr in ("repeatability_sd", "between_series_sd", "intermediate_sd"):
        assert getattr(shifted, attr) == pytest.approx(getattr(base, attr), rel=1e-6, abs=1e-9)
        assert getattr(scaled, attr) == pytest.approx(k * getattr(base, attr), rel=1e-9, abs=1e-12)
    assert scaled.repeatability_rsd_pct == pytest.approx(base.repeatability_rsd_pct, rel=1e-9)
    assert scaled.intermediate_rsd_pct == pytest.approx(base.intermediate_rsd_pct, rel=1e-9)


def test_working_range_and_loq_verification():
    from validator.characteristics.calibration import BackCalculated as B
    back = [B(x, 0, x, 0.0, 15, ok) for x, ok in ((0.5, False), (1, True), (2, True), (5, True), (10, True), (20, True))]
    wr = working_range(back, 0.8, "ich-residual-sd", [], [1, 10])
    assert (wr.low, wr.high) == (1, 20)
    wr = working_range(back, 1.5, "ich-residual-sd", [], [1, 10])
    assert wr.low == 1.5 and "LOQ" in wr.basis
    wr = working_range(back, 0.8, "ich-residual-sd", [(20, "recovery")], [1, 10, 20])
    assert (wr.low, wr.high) == (1, 10) and "recovery fails at 20" in wr.basis
    check = verify_loq(0.5, [], [], 20)
    assert check.passed is None and "2 × LOQ" in check.reason
