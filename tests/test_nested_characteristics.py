"""Issue #13 as characteristics: nested precision, accuracy profile, uncertainty, judging on intervals.

Every expected value names its source beside it: statsmodels (MixedLM, DescrStatsW), scipy
quantiles in the published formulas, exact arithmetic with fractions, or seeded simulation with
its standard error. The data are invented (demo only); they are inputs, never reference values.
"""

from __future__ import annotations

import math
import warnings
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from validator.characteristics.accuracy_profile.analysis import accuracy_profile_criteria, assess_accuracy_profile
from validator.characteristics.interval_judgement import recovery_interval_criteria
from validator.characteristics.precision import assess_precision_level, precision_criteria
from validator.characteristics.recovery import assess_recovery
from validator.characteristics.uncertainty.analysis import (BiasEvidence, PrecisionInput, assess_uncertainty,
                                                            uncertainty_criteria)
from validator.criteria import Criterion, at_most
from validator.errors import StudyError
from validator.maths.tolerance import runs_content_interval


def _nested_data(rng, days=4, runs=2, reps=3, level=10.0, sd=(0.15, 0.10, 0.08)):
    y, day, run = [], [], []
    for d in range(days):
        de = rng.normal(0, sd[0])
        for r in range(runs):
            re = rng.normal(0, sd[1])
            for _ in range(reps):
                y.append(level + de + re + rng.normal(0, sd[2]))
                day.append(f"d{d}")
                run.append(f"r{r}")
    return np.array(y), day, run


def _level(y, day, run, **kw):
    series = [f"{d}/{r}" for d, r in zip(day, run)]
    return assess_precision_level(10.0, y, series, design=("day", "run"), factors=(tuple(day), tuple(run)), **kw)


# ---------------------------------------------------------------- nested precision

def test_nested_balanced_components_against_expected_mean_squares_and_statsmodels():
    rng = np.random.default_rng(20261202)
    y, day, run = _nested_data(rng)
    lv = _level(y, day, run)
    nested = lv.nested
    assert nested.method == "ANOVA" and nested.balanced
    # hand computation of the ANOVA expectation formulas (ISO 5725-3, balanced fully nested):
    # E[MS_e] = s_e^2, E[MS_run] = s_e^2 + 3 s_run^2, E[MS_day] = s_e^2 + 3 s_run^2 + 6 s_day^2
    cells = y.reshape(4, 2, 3)
    cell_means, day_means = cells.mean(axis=2), cells.mean(axis=(1, 2))
    ms_e = ((cells - cell_means[..., None]) ** 2).sum() / (4 * 2 * 2)
    ms_run = 3 * ((cell_means - day_means[:, None]) ** 2).sum() / (4 * 1)
    ms_day = 6 * ((day_means - y.mean()) ** 2).sum() / 3
    expected = [(ms_day - ms_run) / 6, (ms_run - ms_e) / 3, ms_e]
    assert all(v > 0 for v in expected)
    assert [c.variance for c in nested.components] == pytest.approx(expected, rel=1e-12)
    # cross-check: statsmodels MixedLM (REML); with every ANOVA estimate positive they coincide
    import pandas as pd
    import statsmodels.formula.api as smf
    frame = pd.DataFrame({"y": y, "day": day, "run": [f"{d}{r}" for d, r in zip(day, run)]})
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = smf.mixedlm("y ~ 1", frame, groups="day", re_formula="1",
                          vc_formula={"run": "0 + C(run)"}).fit(reml=True)
    assert nested.components[0].variance == pytest.approx(float(fit.cov_re.iloc[0, 0]), rel=1e-4)
    assert nested.components[1].variance == pytest.approx(float(fit.vcomp[0]), rel=1e-4)
    assert nested.components[2].variance == pytest.approx(float(fit.scale), rel=1e-4)
    # repeatability: chi-square interval on 16 df and the one-sided upper RSD bound (scipy quantiles)
    rep = nested.repeatability
    assert rep.df == 16
    assert rep.sd_ci.low == pytest.approx(math.sqrt(16 * ms_e / stats.chi2.ppf(0.975, 16)), rel=1e-12)
    assert rep.sd_ci.high == pytest.approx(math.sqrt(16 * ms_e / stats.chi2.ppf(0.025, 16)), rel=1e-12)
    mean = y.mean()
    assert rep.rsd_upper_pct == pytest.approx(100 * math.sqrt(ms_e * 16 / stats.chi2.ppf(0.05, 16)) / mean,
                                              rel=1e-12)
    # intermediate precision: MS_day/6 + MS_run (1/3 - 1/6) + MS_e (1 - 1/3); modified large-sample
    # interval by hand (Graybill and Wang 1980: G = 1 - n/chi2(1-a/2), H = n/chi2(a/2) - 1)
    terms = [(ms_day / 6, 3), (ms_run / 6, 4), (ms_e * 2 / 3, 16)]
    g = sum(t for t, _ in terms)
    low = g - math.sqrt(sum(((1 - n / stats.chi2.ppf(0.975, n)) * t) ** 2 for t, n in terms))
    high = g + math.sqrt(sum(((n / stats.chi2.ppf(0.025, n) - 1) * t) ** 2 for t, n in terms))
    ip = nested.intermediate
    assert ip.sd == pytest.approx(math.sqrt(g), rel=1e-12)
    assert (ip.sd_ci.low, ip.sd_ci.high) == (pytest.approx(math.sqrt(low), rel=1e-10),
                                             pytest.approx(math.sqrt(high), rel=1e-10))
    nu = g * g / sum(t * t / n for t, n in terms)          # Satterthwaite (1946), hand computation
    assert ip.df == pytest.approx(nu, rel=1e-12)
    # one-sided upper bound: MLS with H = n/chi2(a) - 1 (Graybill and Wang 1980, one-sided; hand computation with
    # scipy's chi2), no longer Satterthwaite's g nu / chi2(a; nu), which covered only about 0.89 at 0.95 (see
    # test_variance_components.test_one_sided_upper_bound_coverage_by_simulation)
    upper = g + math.sqrt(sum(((n / stats.chi2.ppf(0.05, n) - 1) * t) ** 2 for t, n in terms))
    assert ip.rsd_upper_pct == pytest.approx(100 * math.sqrt(upper) / mean, rel=1e-10)
    assert ip.rsd_upper_pct > 100 * math.sqrt(g * nu / stats.chi2.ppf(0.05, nu)) / mean


def test_negative_component_set_to_zero_and_said_so():
    # hand computation: every day has the same mean, so MS_day = 0 and the day estimate is negative
    y = [1.0, 2.0, 3.0, 4.0, 4.0, 3.0, 2.0, 1.0]
    day = ["a"] * 4 + ["b"] * 4
    run = ["1", "1", "2", "2"] * 2
    lv = assess_precision_level(2.5, y, [f"{d}{r}" for d, r in zip(day, run)], design=("day", "run"),
                                factors=(tuple(day), tuple(run)))
    comp = lv.nested.components[0]
    assert comp.set_to_zero and comp.variance == 0.0 and comp.raw_estimate < 0
    assert any("negative" in n and "'day'" in n for n in lv.nested.notes)


def test_unbalanced_design_uses_reml_and_states_the_missing_intervals():
    rng = np.random.default_rng(3)
    y, day, run = _nested_data(rng)
    keep = np.ones(y.size, bool)
    keep[[0, 10]] = False
    lv = _level(y[keep], list(np.array(day)[keep]), list(np.array(run)[keep]))
    assert lv.nested.method == "REML" and not lv.nested.balanced
    ip = lv.nested.intermediate
    # the Satterthwaite interval with the REML-information df (chi-square quantiles from scipy)
    assert ip.sd_ci == ip.sd_ci_satterthwaite and "REML" in ip.reason
    assert ip.sd_ci.high == pytest.approx(ip.sd * math.sqrt(ip.df / stats.chi2.ppf(0.025, ip.df)), rel=1e-12)


def test_claim_verification_upper_verification_limit():
    rng = np.random.default_rng(11)
    y, day, run = _nested_data(rng)
    lv = _level(y, day, run, claims=(0.6, 1.0))
    rep, wl = lv.claims
    mean = y.mean()
    # CLSI EP15-A3: UVL = claimed SD sqrt(chi2(1 - alpha; df) / df), the claim an RSD of the level mean
    assert rep.claimed_sd == pytest.approx(0.6 * mean / 100, rel=1e-14)
    assert rep.upper_verification_limit == pytest.approx(
        rep.claimed_sd * math.sqrt(stats.chi2.ppf(0.95, 16) / 16), rel=1e-12)
    assert rep.verified == (lv.nested.repeatability.sd <= rep.upper_verification_limit)
    nu = round(lv.nested.intermediate.df)     # from memory: EP15-A3 rounds the within-laboratory df
    assert wl.df == nu
    assert wl.upper_verification_limit == pytest.approx(wl.claimed_sd * math.sqrt(stats.chi2.ppf(0.95, nu) / nu),
                                                        rel=1e-12)
    # three levels verified together: alpha / 3 (EP15-A3's Bonferroni division; hand computation, scipy chi2)
    rep3, wl3 = _level(y, day, run, claims=(0.6, 1.0), claim_levels=(3, 3)).claims
    assert rep3.upper_verification_limit == pytest.approx(
        rep.claimed_sd * math.sqrt(stats.chi2.ppf(1 - 0.05 / 3, 16) / 16), rel=1e-12)
    assert wl3.upper_verification_limit == pytest.approx(
        wl.claimed_sd * math.sqrt(stats.chi2.ppf(1 - 0.05 / 3, nu) / nu), rel=1e-12)
    assert "1 - 0.05/3" in rep3.basis and "one level" in rep.basis
    ids = [c.id for c in precision_criteria(lv, (None, None))]
    assert ids == ["repeatability-claim-10", "within-laboratory-claim-10"]


# the precision criteria as written before issue #13 (validator.criteria at 000e4bd), kept as the reference
def precision_level_criteria(lv, limits: tuple) -> tuple:
    """Repeatability and intermediate RSD of one level against their maxima ``limits`` (where set)."""
    out = []
    r_max, i_max = limits
    for kind, label, value, limit in (
            ("repeatability", "repeatability RSD", lv.repeatability_rsd_pct, r_max),
            ("intermediate", "intermediate precision RSD", lv.intermediate_rsd_pct, i_max)):
        if limit is None:
            continue
        out.append(Criterion(f"{kind}-rsd-{lv.level:g}", f"{label} at level {lv.level:g} at most {limit:g} %",
                             value, limit, at_most(value, limit),
                             "" if value is not None else f"not applicable: {lv.reason or 'the mean is zero'}"))
    return tuple(out)


def test_default_criteria_are_unchanged_and_interval_basis_uses_the_upper_bound():
    rng = np.random.default_rng(5)
    y, day, run = _nested_data(rng, days=5, runs=1)
    series = list(day)
    plain = assess_precision_level(10.0, y, series)
    # the estimate basis without a design is exactly the criterion written before issue #13
    assert precision_criteria(plain, (1.0, 2.0)) == precision_level_criteria(plain, (1.0, 2.0))
    assert plain.rsd_upper_bounds is None and plain.nested is None and plain.claims is None
    bounded = assess_precision_level(10.0, y, series, bounds=True, alpha=0.05)
    r, i = precision_criteria(bounded, (1.0, 2.0), on_intervals=True, alpha=0.05)
    df_r = plain.anova.df_within
    # one-sided chi-square bound: 100 s_r sqrt(df / chi2(alpha; df)) / mean (scipy quantile)
    expected = 100 * plain.repeatability_sd * math.sqrt(df_r / stats.chi2.ppf(0.05, df_r)) / plain.mean
    assert r.value == pytest.approx(expected, rel=1e-12)
    assert r.passed == (expected <= 1.0)
    assert "point estimate" in r.note and "upper" in r.description
    # intermediate precision: one-sided MLS bound on MS_B/n0 + (1 - 1/n0) MS_W (Graybill and Wang 1980,
    # H = df/chi2(alpha; df) - 1; hand computation with scipy's chi2), at least the repeatability bound
    an = plain.anova
    terms = [(an.ms_between / an.n0, an.df_between), ((1 - 1 / an.n0) * an.ms_within, an.df_within)]
    u = sum(t for t, _ in terms) + math.sqrt(sum(((n / stats.chi2.ppf(0.05, n) - 1) * t) ** 2 for t, n in terms))
    expected_i = max(100 * math.sqrt(u) / plain.mean, expected)
    assert i.value == pytest.approx(expected_i, rel=1e-12)
    satterthwaite = (100 * plain.intermediate_sd * math.sqrt(plain.intermediate_df
                                                             / stats.chi2.ppf(0.05, plain.intermediate_df)) / plain.mean)
    assert i.value > satterthwaite


# ---------------------------------------------------------------- accuracy profile

def test_accuracy_profile_level_against_mee_hand_computation():
    # hand computation with fractions: 3 runs x 2 at nominal 12 (Mee 1984; Hubert et al. 2007 part III)
    runs = [[10, 12], [15, 13], [11, 11]]
    p, n = 3, 2
    means = [Fraction(sum(r), n) for r in runs]
    grand = sum(means) / p
    ms_w = sum((Fraction(v) - m) ** 2 for r, m in zip(runs, means) for v in r) / (p * (n - 1))
    ms_b = n * sum((m - grand) ** 2 for m in means) / (p - 1)
    s2_b = (ms_b - ms_w) / n
    R = s2_b / ms_w
    B2 = (R + 1) / (n * R + 1)
    nu = (R + 1) ** 2 / ((R + Fraction(1, n)) ** 2 / (p - 1) + (1 - Fraction(1, n)) / (p * n))
    s_ip = math.sqrt(ms_w + s2_b)
    k = stats.t.ppf(0.9, float(nu)) * math.sqrt(1 + 1 / float(p * n * B2))
    level = [12.0] * 6
    found = [v for r in runs for v in r]
    labels = [f"run{i}" for i, r in enumerate(runs) for _ in r]
    result = assess_accuracy_profile(level, found, labels, beta=0.80, acceptance_for=lambda c: 30.0, runs_by="series")
    lv = result.levels[0]
    assert lv.relative_bias_pct == pytest.approx(float((grand - 12) / 12 * 100), rel=1e-13)
    assert lv.tolerance_factor == pytest.approx(k, rel=1e-12)
    assert lv.tolerance_low_pct == pytest.approx((float(grand) - k * s_ip - 12) / 12 * 100, rel=1e-12)
    assert lv.tolerance_high_pct == pytest.approx((float(grand) + k * s_ip - 12) / 12 * 100, rel=1e-12)
    # the SD the interval is built on, half-width / t = s_IP sqrt(1 + 1/(p n B^2)) (hand computation)
    assert lv.prediction_sd_pct == pytest.approx(100 * s_ip * math.sqrt(1 + 1 / float(p * n * B2)) / 12, rel=1e-12)
    crit = accuracy_profile_criteria(result)[0]
    assert crit.id == "accuracy-profile-12" and crit.passed is (lv.inside is True)


def test_validated_range_with_acceptance_per_level_by_hand():
    # three levels built so that the relative limits are known exactly: runs of (c(1+e), c(1-e)) give a
    # zero-bias interval of half-width h(e) % with the same k at every level; level 2 is wider
    rows = []
    for c, e in ((1.0, 0.01), (2.0, 0.04), (4.0, 0.01)):
        for r, sign in enumerate((1, -1, 1, -1)):
            for rep in (1, -1):
                rows.append((c, c * (1 + rep * e) + sign * 0.0, f"run{r}"))
    level, found, runs = zip(*rows)
    lam = {1.0: 10.0, 2.0: 5.0, 4.0: 10.0}
    result = assess_accuracy_profile(level, found, runs, beta=0.80, acceptance_for=lam.__getitem__, runs_by="series")
    h = [lv.tolerance_high_pct for lv in result.levels]
    assert [lv.tolerance_low_pct for lv in result.levels] == pytest.approx([-v for v in h], abs=1e-12)
    assert h[1] > 5.0 > h[0]                               # level 2 outside its own ±5 %
    # hand computation: on [1, 2] the upper limit h0 + (h1 - h0) s meets lambda 10 + (5 - 10) s at
    # s = (10 - h0) / ((h1 - h0) + 5); on [2, 4] symmetric
    s1 = (10 - h[0]) / ((h[1] - h[0]) + 5)
    s2 = (h[1] - 5) / ((h[1] - h[2]) + 5)
    ranges = [(r.low, r.high) for r in result.validated_ranges]
    assert ranges == [pytest.approx((1.0, 1.0 + s1), rel=1e-12), pytest.approx((2.0 + 2.0 * s2, 4.0), rel=1e-12)]
    assert "per level" in result.basis


def test_beta_content_interval_reduces_to_howe_structure_and_mls_bound():
    # hand computation: with the MLS upper bound U of s_IP^2 (Graybill and Wang 1980, one-sided at the
    # confidence), the interval is m +/- z sqrt(1 + 1/n_e) sqrt(U), n_e = s_IP^2 / v_m
    runs = [[10.1, 9.8, 10.0], [10.4, 10.6, 10.3], [9.7, 9.9, 9.6], [10.2, 10.0, 10.1]]
    got = runs_content_interval(runs, 0.90, 0.95)
    y = np.array(runs)
    p, n = y.shape
    ms_w = ((y - y.mean(axis=1, keepdims=True)) ** 2).sum() / (p * (n - 1))
    ms_b = n * ((y.mean(axis=1) - y.mean()) ** 2).sum() / (p - 1)
    terms = [(ms_b / n, p - 1), ((1 - 1 / n) * ms_w, p * (n - 1))]
    g = sum(t for t, _ in terms)
    upper = g + math.sqrt(sum(((d / stats.chi2.ppf(0.05, d) - 1) * t) ** 2 for t, d in terms))
    n_e = g / (ms_b / (p * n))                       # balanced: v_m = MS_B / (p n)
    half = stats.norm.ppf(0.95) * math.sqrt(1 + 1 / n_e) * math.sqrt(upper)
    assert got.effective_n == pytest.approx(n_e, rel=1e-12)
    assert (got.low, got.high) == (pytest.approx(y.mean() - half, rel=1e-12), pytest.approx(y.mean() + half,
                                                                                             rel=1e-12))
    # k is the factor on s_IP = sqrt(g) (hand computation above), as documented in docs/results.md, not
    # z sqrt(1 + 1/n_e), the factor on sqrt(U)
    assert got.sd_intermediate == pytest.approx(math.sqrt(g), rel=1e-12)
    assert got.k == pytest.approx(half / math.sqrt(g), rel=1e-12)
    assert got.sd_upper == pytest.approx(math.sqrt(upper), rel=1e-12)
    assert got.k > stats.norm.ppf(0.95) * math.sqrt(1 + 1 / n_e)


def test_beta_content_factor_for_a_single_mean_square_is_howes():
    # cross-check: toleranceinterval (PyPI) Howe factor. With a single mean square the MLS upper bound is
    # the exact chi-square bound df s^2 / chi2(1 - gamma; df), so the interval's factor
    # z sqrt(1 + 1/n) sqrt(U) / s must be Howe's z sqrt((1 + 1/n) df / chi2(1 - gamma; df))
    from toleranceinterval.twoside import normal_factor
    from validator.maths.variance_components import sum_of_mean_squares_interval
    df, n = 11, 12
    _, _, _, mls = sum_of_mean_squares_interval([1.0], [1.0], [df], 2 * 0.95 - 1)
    k = stats.norm.ppf(0.95) * math.sqrt(1 + 1 / n) * math.sqrt(mls[1])
    assert k == pytest.approx(normal_factor(n, 0.90, 0.95, method="howe"), rel=1e-9)


def _content_confidence(design, sigma_b, content, confidence, draws, seed):
    rng = np.random.default_rng(seed)
    total = math.hypot(sigma_b, 1.0)
    run_effects = rng.normal(0, sigma_b, (draws, len(design)))
    noise = rng.normal(0, 1, (draws, sum(design)))
    edges = np.cumsum((0,) + tuple(design))
    bounds = np.empty((draws, 2))
    for i in range(draws):
        iv = runs_content_interval([run_effects[i, j] + noise[i, edges[j]:edges[j + 1]] for j in range(len(design))],
                                   content, confidence)
        bounds[i] = iv.low, iv.high
    cover = stats.norm.cdf(bounds[:, 1] / total) - stats.norm.cdf(bounds[:, 0] / total)
    hit = float((cover >= content).mean())
    return hit, math.sqrt(hit * (1 - hit) / draws)


@pytest.mark.parametrize("design, sigma_b, seed", [((2,) * 6, 1.0, 21), ((4, 4, 4, 4), 2.0, 22)])
def test_beta_content_confidence_by_simulation(design, sigma_b, seed):
    # seeded simulation, 3 000 draws (SE at most 0.005): the share of intervals holding at least 90 % of
    # the population must not fall below 0.95 by more than 3 SE. Measured with 20 000 draws (seed 5):
    # 0.970 (SE 0.0012) for 6 x 2, sigma_b = 1; 0.945 (SE 0.0016) for 4 x 4, sigma_b = 2
    hit, se = _content_confidence(design, sigma_b, 0.90, 0.95, 3000, seed)
    assert se < 0.005
    assert hit > 0.95 - 3 * se, (hit, se)


# ---------------------------------------------------------------- uncertainty

def test_nordtest_budget_hand_computation():
    # hand computation following Nordtest TR 537 ed. 4 on invented inputs (exact with fractions):
    # u(Rw) = 2 %, 1.5 %; biases -1.5, 2.0, 0.5 % with u(Cref) 1.0, 0.5, 0.5 %
    prec = (PrecisionInput(5.0, 2.0, "IP"), PrecisionInput(50.0, 1.5, "IP"))
    bias = (BiasEvidence("CRM", -1.5, 1.0, ""), BiasEvidence("rec 1", 2.0, 0.5, ""), BiasEvidence("rec 2", 0.5, 0.5, ""))
    got = assess_uncertainty(prec, bias, coverage_factor=2.0, loq=4.0)
    rms2 = (Fraction(9, 4) + 4 + Fraction(1, 4)) / 3                  # RMS_bias^2 = 13/6
    u_ref = Fraction(2, 3)                                           # mean of the u(Cref_i)
    u_bias2 = rms2 + u_ref ** 2
    assert got.rms_bias_pct == pytest.approx(math.sqrt(rms2), rel=1e-14)
    assert got.reference_uncertainty_pct == pytest.approx(float(u_ref), rel=1e-14)
    assert got.u_bias_pct == pytest.approx(math.sqrt(u_bias2), rel=1e-14)
    for lv, u_rw, c in zip(got.levels, (2, Fraction(3, 2)), (5, 50)):
        u_c2 = u_rw ** 2 + u_bias2
        assert lv.combined_pct == pytest.approx(math.sqrt(u_c2), rel=1e-14)
        assert lv.expanded_pct == pytest.approx(2 * math.sqrt(u_c2), rel=1e-14)
        assert lv.expanded == pytest.approx(2 * math.sqrt(u_c2) * c / 100, rel=1e-14)
    assert got.at_loq.concentration == 4.0 and "nearest" in got.at_loq.basis
    assert got.at_loq.u_rw_pct == 2.0
    crit = uncertainty_criteria(got, 5.0)
    assert [c.passed for c in crit] == [2 * math.sqrt(float(4 + u_bias2)) <= 5.0,
                                        2 * math.sqrt(float(Fraction(9, 4) + u_bias2)) <= 5.0]


def test_budget_without_bias_evidence_is_not_applicable_with_reason():
    got = assess_uncertainty((PrecisionInput(5.0, 2.0, "IP"),), (), coverage_factor=2.0)
    assert got.u_bias_pct is None and got.levels[0].expanded_pct is None
    assert "u(bias)" in got.levels[0].reason and got.at_loq is None and got.loq_reason
    (c,) = uncertainty_criteria(got, 10.0)
    assert c.passed is None and c.note.startswith("not applicable")


# ---------------------------------------------------------------- recovery by TOST

def test_recovery_interval_criteria_against_statsmodels_ttost():
    from statsmodels.stats.weightstats import DescrStatsW
    added = np.array([2.0] * 5 + [10.0] * 4)
    found = np.array([1.96, 2.03, 1.99, 2.05, 1.94, 9.7, 10.4, 9.9, 10.6])
    recovery = assess_recovery(added, found, alpha=0.05, range_for=lambda a: (95.0, 105.0))
    crit = recovery_interval_criteria(recovery, 0.05)
    for c, lv in zip(crit, recovery.levels):
        stats_ = DescrStatsW(np.array(lv.recoveries_pct))
        # cross-check: statsmodels ttost_mean p-value and the (1 - 2 alpha) t interval of the mean
        p, _, _ = stats_.ttost_mean(95.0, 105.0)
        low, high = stats_.tconfint_mean(alpha=0.10)
        assert c.value == [pytest.approx(low, rel=1e-12), pytest.approx(high, rel=1e-12)]
        assert c.passed is bool(p <= 0.05)
        assert f"p = {p:.3g}" in c.note and "point estimate" in c.note
        assert c.id == f"recovery-{lv.added:g}"


# ---------------------------------------------------------------- study file and end to end

def _study(tmp_path, extra, precision_keys="", data="level,day,run,found\n10,d1,r1,9.9\n10,d1,r1,10.1\n"):
    (tmp_path / "cal.csv").write_text("concentration,response\n0,0.01\n1,1.02\n2,1.98\n3,3.05\n4,3.96\n")
    (tmp_path / "prec.csv").write_text(data)
    (tmp_path / "study.toml").write_text(
        '[study]\nid = "t"\ntitle = "t"\nconcentration_unit = "mg/L"\nresponse_unit = "a"\n'
        '[calibration]\ndata = "cal.csv"\n' + (f'[precision]\ndata = "prec.csv"\n{precision_keys}\n'
                                               if precision_keys is not None else "") + extra)
    return tmp_path / "study.toml"


@pytest.mark.parametrize("precision_keys, extra, message", [
    ('design = ["day", "found"]', "", "found"),
    ('design = ["day", "day"]', "", "distinct"),
    (None, "[uncertainty]\n", "bias_from"),
    ('design = ["day", "run"]', "[accuracy_profile]\nacceptance_pct = 15\ncontent = 0.9\n", "go together"),
    ('design = ["day", "run"]', "[accuracy_profile]\nbeta = 1.5\nacceptance_pct = 15\n", "beta"),
])
def test_study_file_errors_name_the_key(tmp_path, precision_keys, extra, message):
    from validator.inputs.study import read_study_file
    with pytest.raises(StudyError, match=message):
        read_study_file(_study(tmp_path, extra, precision_keys))


@pytest.mark.parametrize("extra", ["[accuracy_profile]\nacceptance_pct = 15\n",
                                   '[uncertainty]\nbias_from = ["recovery"]\n'])
def test_profile_and_budget_need_the_precision_table(tmp_path, extra):
    from validator.inputs.loading import load_study
    with pytest.raises(StudyError, match=r"needs a \[precision\] section"):
        load_study(_study(tmp_path, extra, None))


def test_acceptance_limit_for_a_level_without_data_is_refused(tmp_path):
    from validator.inputs.loading import load_study
    path = _study(tmp_path, "[accuracy_profile]\nacceptance_pct = 15\nlevels = [{ level = 3, acceptance_pct = 20 }]\n",
                  'design = ["day", "run"]')
    with pytest.raises(StudyError, match="accuracy_profile"):
        load_study(path)


def test_missing_design_column_is_a_data_error(tmp_path):
    from validator.errors import ValidatorError
    from validator.inputs.loading import load_study
    path = _study(tmp_path, "", 'design = ["day", "analyst"]')
    with pytest.raises(ValidatorError, match="analyst"):
        load_study(path)


def test_demo_declares_all_three_and_other_studies_get_none(outside):
    import json
    from pathlib import Path

    import jsonschema

    from validator.cli import main
    from validator.results import load_schema
    repo = Path(__file__).resolve().parents[1]
    out = outside / "demo"
    assert main(["run", str(repo / "example_studies" / "anions-drinking-water" / "study.toml"), "--out", str(out),
                 "--format", "json"]) == 0
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    for a in results["analytes"]:
        assert {"accuracy_profile", "uncertainty"} <= set(a["characteristics_assessed"])
        assert all(lv["nested"]["design"] == ["day", "run"] for lv in a["precision"]["levels"])
        assert a["accuracy_profile"]["validated_ranges"]
        assert len(a["uncertainty"]["levels"]) == len(a["precision"]["levels"])
        for lv in a["accuracy_profile"]["levels"]:     # k is the factor on intermediate_sd (docs/results.md)
            ci = lv["content_interval"]
            assert (ci["high_pct"] - ci["low_pct"]) / 2 == pytest.approx(
                100 * ci["k"] * lv["intermediate_sd"] / lv["nominal"], rel=1e-9)
    # claims verified at 3 levels per analyte: UVL = claim sqrt(chi2(1 - 0.05/3; df) / df), df rounded
    # (from memory: EP15-A3; hand computation with scipy's chi2). Nitrate 0.5 repeatability, df 6:
    # 0.007342125 x 1.6076 = 0.011803 (0.010636 without the Bonferroni division)
    nitrate = next(a for a in results["analytes"] if a["name"] == "nitrate")
    rep, wl = nitrate["precision"]["levels"][0]["claims"]
    assert rep["upper_verification_limit"] == pytest.approx(
        rep["claimed_sd"] * math.sqrt(stats.chi2.ppf(1 - 0.05 / 3, 6) / 6), rel=1e-12)
    assert rep["upper_verification_limit"] == pytest.approx(0.011803, abs=5e-7)
    assert wl["df"] == round(nitrate["precision"]["levels"][0]["nested"]["conditions"][-1]["df"])
    assert wl["upper_verification_limit"] == pytest.approx(
        wl["claimed_sd"] * math.sqrt(stats.chi2.ppf(1 - 0.05 / 3, wl["df"]) / wl["df"]), rel=1e-12)
    out2 = outside / "other"
    assert main(["run", str(repo / "example_studies" / "anions-after-maintenance" / "study.toml"), "--out",
                 str(out2), "--format", "json"]) in (0, 1)
    other = json.loads((out2 / "results.json").read_text(encoding="utf-8"))
    for a in other["analytes"]:
        assert "accuracy_profile" not in a and "uncertainty" not in a


def test_sample_uncertainty_interpolated_or_nearest():
    from validator.characteristics.uncertainty.analysis import sample_uncertainty
    prec = (PrecisionInput(1.0, 4.0, "IP"), PrecisionInput(10.0, 2.0, "IP"))
    budget = assess_uncertainty(prec, (BiasEvidence("CRM", 0.0, 0.0, ""),), coverage_factor=2.0)
    # hand computation: U = 2 u(Rw) here (no bias), 8 % at 1 and 4 % at 10; at 5.5 halfway: 6 %
    middle = sample_uncertainty("S1", 5.5, budget.levels)
    assert middle.expanded_pct == pytest.approx(6.0, rel=1e-14)
    assert middle.expanded == pytest.approx(6.0 * 5.5 / 100, rel=1e-14)
    assert "interpolated" in middle.basis
    above = sample_uncertainty("S2", 20.0, budget.levels)
    assert above.expanded_pct == pytest.approx(4.0, rel=1e-14) and "nearest" in above.basis
    assert sample_uncertainty("S3", float("nan"), budget.levels).reason


@pytest.mark.parametrize("alpha", [0.01, 0.05])
def test_demo_judged_on_intervals(tmp_path, outside, alpha):
    """The demo with judge_on = "interval" (and without the nested design, so the one-way bounds are
    written): every judged value is the interval basis, and its level follows alpha."""
    import json
    import shutil
    from pathlib import Path

    import jsonschema

    from validator.cli import main
    from validator.results import load_schema
    repo = Path(__file__).resolve().parents[1]
    folder = tmp_path / "demo"
    shutil.copytree(repo / "example_studies" / "anions-drinking-water", folder)
    text = (folder / "study.toml").read_text(encoding="utf-8")
    text = text.replace('judge_on = "estimate"', 'judge_on = "interval"').replace("alpha = 0.05", f"alpha = {alpha}")
    text = text.replace('design = ["day", "run"]', "").replace('data = "precision-runs.csv"', 'data = "precision.csv"')
    (folder / "study.toml").write_text(text, encoding="utf-8")
    out = outside / "interval"
    assert main(["run", str(folder / "study.toml"), "--out", str(out), "--format", "json"]) in (0, 1)
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    a = results["analytes"][0]
    for lv in a["precision"]["levels"]:
        assert "nested" not in lv
        assert lv["rsd_upper_bounds"]["confidence"] == pytest.approx(1 - alpha)
        assert lv["rsd_upper_bounds"]["repeatability_rsd_upper_pct"] > lv["repeatability_rsd_pct"]
    by_id = {c["id"]: c for c in a["criteria"]}
    rec = by_id["recovery-10"]
    assert isinstance(rec["value"], list) and "two one-sided tests" in rec["description"]
    assert f"{100 * (1 - 2 * alpha):g} %" in rec["description"]
    rsd = by_id["repeatability-rsd-10"]
    assert rsd["value"] == pytest.approx(a["precision"]["levels"][1]["rsd_upper_bounds"]["repeatability_rsd_upper_pct"])
    assert "point estimate" in rsd["note"]


def test_invariances_permutation_and_scale():
    # property (no reference value): permuting the rows changes nothing; scaling the results by 7
    # scales every SD by 7 and leaves every RSD and the profile's relative limits unchanged
    rng = np.random.default_rng(8)
    y, day, run = _nested_data(rng)
    base = _level(y, day, run)
    order = rng.permutation(y.size)
    shuffled = _level(y[order], [day[i] for i in order], [run[i] for i in order])
    scaled = assess_precision_level(70.0, 7 * y, [f"{d}/{r}" for d, r in zip(day, run)], design=("day", "run"),
                                    factors=(tuple(day), tuple(run)))
    for a, b, c in zip(base.nested.conditions, shuffled.nested.conditions, scaled.nested.conditions):
        assert b.sd == pytest.approx(a.sd, rel=1e-10) and b.sd_ci.high == pytest.approx(a.sd_ci.high, rel=1e-10)
        assert c.sd == pytest.approx(7 * a.sd, rel=1e-10) and c.rsd_pct == pytest.approx(a.rsd_pct, rel=1e-10)
    labels = [f"{d}/{r}" for d, r in zip(day, run)]
    one = assess_accuracy_profile([10.0] * y.size, y, labels, beta=0.8, acceptance_for=lambda c: 15.0, runs_by="run")
    seven = assess_accuracy_profile([70.0] * y.size, 7 * y, labels, beta=0.8, acceptance_for=lambda c: 15.0,
                                    runs_by="run")
    assert seven.levels[0].tolerance_low_pct == pytest.approx(one.levels[0].tolerance_low_pct, rel=1e-9)
    assert seven.levels[0].tolerance_high_pct == pytest.approx(one.levels[0].tolerance_high_pct, rel=1e-9)


def test_profile_level_zero_is_left_out_with_a_note():
    level = [0.0, 0.0, 0.0, 0.0, 5.0, 5.0, 5.0, 5.0]
    found = [0.01, 0.02, 0.0, 0.01, 5.1, 4.9, 5.0, 5.2]
    runs = ["a", "a", "b", "b"] * 2
    got = assess_accuracy_profile(level, found, runs, beta=0.8, acceptance_for=lambda c: 15.0, runs_by="series")
    assert [lv.nominal for lv in got.levels] == [5.0]
    assert any("level 0" in n for n in got.notes)


def test_interval_basis_names_a_missing_bound():
    # two runs of one result each on one day: no repeatability df, so no upper bound
    y = [10.0, 10.2, 9.9, 10.1]
    day = ["a", "a", "b", "b"]
    run = ["1", "2", "1", "2"]
    lv = assess_precision_level(10.0, y, [f"{d}{r}" for d, r in zip(day, run)], design=("day", "run"),
                                factors=(tuple(day), tuple(run)))
    r, _ = precision_criteria(lv, (5.0, 5.0), on_intervals=True)
    assert r.passed is None and r.note.startswith("not applicable") and "point estimate" in r.note


def test_protocols_written_before_issue_13_keys_see_no_deviation(tmp_path):
    # common practice, no published source: an earlier protocol knows none of the new keys; a study that
    # sets none of them normalises to the same design and criteria, and setting one is a deviation
    from validator.inputs.study import read_study_file
    from validator.protocol import compare, normalised
    plain = read_study_file(_study(tmp_path, "", "repeatability_rsd_max_pct = 5"))
    before = normalised(plain.config)
    assert "accuracy_profile" not in before and "design" not in before["precision"]
    assert "judge_on" not in before["criteria"]
    protocol = {"study_id": "t", "design_and_criteria": before}
    assert compare(protocol, plain) == []
    nested = read_study_file(_study(tmp_path, "[accuracy_profile]\nacceptance_pct = 15\n",
                                    'repeatability_rsd_max_pct = 5\ndesign = ["day", "run"]'))
    keys = sorted(d.key for d in compare(protocol, nested))
    assert keys == ["accuracy_profile", "precision.design"]


def test_planned_precision_design_is_compared_with_the_nested_data(tmp_path):
    # common practice, no published source: 1 level, 2 results per run, runs counted as the innermost
    # units of the design (day/run paths), here 2 where 3 were planned
    from validator.inputs.loading import load_study
    from validator.protocol import design_deviations
    data = "level,day,run,found\n10,d1,r1,9.9\n10,d1,r1,10.1\n10,d1,r2,10.0\n10,d1,r2,10.2\n"
    path = _study(tmp_path, "[design.precision]\nlevels = [10]\nreplicates = 2\nruns = 3\n", 'design = ["day", "run"]',
                  data)
    loaded = load_study(path)
    found = design_deviations(loaded.config.design, loaded.analytes)
    assert [(d.key, d.protocol, d.run) for d in found] == [("design.precision.runs", 3, 2)]
