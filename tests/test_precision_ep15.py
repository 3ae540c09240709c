"""CLSI EP15-A3 user verification (issue #15): precision claims as SDs, the bias verification against a
reference value, the design minimums and the "clsi-ep15" preset.

Expected values: hand computations of the published formulas with scipy's chi-square and t quantiles,
the ANOVA and Satterthwaite df computed here with numpy (not by the code under test), a published
worked design (USP <1010>), and seeded simulations of the false-rejection rate with their binomial
standard error. The 5 x 5 data are invented (inputs only, never reference values).
"""

from __future__ import annotations

import json
import math

import jsonschema
import numpy as np
import pytest
from scipy import stats

from validator.characteristics.precision import assess_precision_level, precision_criteria
from validator.cli import main
from validator.errors import StudyError
from validator.inputs.loading import load_study
from validator.maths.variance_components import one_way_mean_standard_error, verify_bias
from validator.protocol import digest, normalised
from validator.inputs.study import read_study_file
from validator.results import load_schema

DAYS, REPS = 5, 5


def _five_by_five(rng, mean=10.0, sd_day=0.10, sd_rep=0.15):
    y, day = [], []
    for d in range(DAYS):
        effect = rng.normal(0, sd_day)
        for _ in range(REPS):
            y.append(mean + effect + rng.normal(0, sd_rep))
            day.append(f"day{d + 1}")
    return np.array(y), day


def _anova_by_hand(y, day):
    """One-way ANOVA of a balanced design, written out here (independent of validator.maths.anova)."""
    groups = [y[[i for i, d in enumerate(day) if d == g]] for g in dict.fromkeys(day)]
    k, n = len(groups), len(groups[0])
    grand = y.mean()
    ms_b = n * sum((g.mean() - grand) ** 2 for g in groups) / (k - 1)
    ms_w = sum(((g - g.mean()) ** 2).sum() for g in groups) / (k * (n - 1))
    return ms_b, ms_w, k, n


# ------------------------------------------------------------------ precision claims as SDs
def test_sd_claims_upper_verification_limit_by_hand():
    y, day = _five_by_five(np.random.default_rng(15))
    ms_b, ms_w, k, n = _anova_by_hand(y, day)
    s_r = math.sqrt(ms_w)
    s_b2 = max((ms_b - ms_w) / n, 0.0)
    s_wl = math.sqrt(ms_w + s_b2)
    # Satterthwaite df of s_WL^2 = MS_B/n + (n-1)/n MS_W (hand computation, Satterthwaite 1946)
    nu = s_wl ** 4 / ((ms_b / n) ** 2 / (k - 1) + ((n - 1) / n * ms_w) ** 2 / (k * (n - 1)))
    claim_r, claim_wl = 0.14, 0.17
    lv = assess_precision_level(10.0, y, day, sd_claims=(claim_r, claim_wl), claim_levels=(2, 2))
    rep, wl = lv.claims
    assert rep.claimed_as == wl.claimed_as == "SD"
    assert rep.claimed_sd == claim_r and wl.claimed_sd == claim_wl
    assert rep.observed_sd == pytest.approx(s_r, rel=1e-12) and wl.observed_sd == pytest.approx(s_wl, rel=1e-12)
    # EP15-A3 UVL = claim sqrt(chi2(1 - alpha/L; df)/df), L = 2 levels, scipy's chi-square quantile;
    # repeatability df = k(n - 1) = 20, within-laboratory df = the Satterthwaite df rounded
    assert rep.df == 20
    assert rep.upper_verification_limit == pytest.approx(claim_r * math.sqrt(stats.chi2.ppf(1 - 0.05 / 2, 20) / 20),
                                                         rel=1e-12)
    assert wl.df == round(nu)
    assert wl.upper_verification_limit == pytest.approx(
        claim_wl * math.sqrt(stats.chi2.ppf(1 - 0.05 / 2, round(nu)) / round(nu)), rel=1e-12)
    assert rep.verified is (s_r <= rep.upper_verification_limit)
    # the claim as % of the mean is shown beside it
    assert rep.claimed_rsd_pct == pytest.approx(100 * claim_r / y.mean(), rel=1e-12)
    crit = {c.id: c for c in precision_criteria(lv, (None, None))}
    assert crit["repeatability-claim-10"].limit == rep.upper_verification_limit
    assert "claimed SD 0.14" in crit["repeatability-claim-10"].description


def test_a_level_sd_claim_takes_precedence_over_an_rsd_claim():
    y, day = _five_by_five(np.random.default_rng(3))
    lv = assess_precision_level(10.0, y, day, claims=(1.0, 2.0), sd_claims=(0.2, None))
    rep, wl = lv.claims
    assert (rep.claimed_as, rep.claimed_sd) == ("SD", 0.2)
    assert wl.claimed_as == "RSD" and wl.claimed_sd == pytest.approx(abs(y.mean()) * 2.0 / 100, rel=1e-15)


@pytest.mark.parametrize("levels", [1, 3])
def test_false_rejection_rate_when_the_true_sd_equals_the_claim(levels):
    # seeded simulation: 5 x 5 design, true repeatability SD = claim_r and true within-laboratory SD = claim_wl;
    # each verification rejects with probability about alpha/L (exact chi-square for repeatability,
    # Satterthwaite's approximation for the within-laboratory SD); 2000 runs, binomial SE ~ sqrt(p(1-p)/2000)
    rng = np.random.default_rng(20140915)
    sd_day, sd_rep = 0.10, 0.15
    claim_r, claim_wl = sd_rep, math.hypot(sd_day, sd_rep)
    runs, rejected = 2000, np.zeros(2)
    for _ in range(runs):
        y, day = _five_by_five(rng, sd_day=sd_day, sd_rep=sd_rep)
        rep, wl = assess_precision_level(10.0, y, day, sd_claims=(claim_r, claim_wl),
                                         claim_levels=(levels, levels)).claims
        rejected += [rep.verified is False, wl.verified is False]
    rate = rejected / runs
    target = 0.05 / levels
    se = math.sqrt(target * (1 - target) / runs)
    assert abs(rate[0] - target) < 4 * se, rate           # exact test: about alpha/L
    assert rate[1] < target + 4 * se, rate                 # Satterthwaite: at most about alpha/L


# ------------------------------------------------------------------ bias against a reference value
def test_mean_standard_error_usp_1010_worked_design():
    # USP <1010> (Analytical Data - Interpretation and Treatment), worked example: 5 runs x 3 replicates,
    # published ANOVA MS_between 3.550 (4 df), MS_within 0.102 (10 df), grand mean 100.96; its "precision of
    # the mean for various test plans" gives Var(mean) = s_B^2/r + s_W^2/(r n), 1.251 for one run of one
    # replicate
    data = [[100.70, 101.05, 101.15], [99.46, 99.37, 99.59], [99.96, 100.17, 101.01], [101.80, 102.16, 102.44],
            [101.91, 102.00, 101.67]]
    y = np.array([v for run in data for v in run])
    day = [f"run{i}" for i, run in enumerate(data) for _ in run]
    ms_b, ms_w, k, n = _anova_by_hand(y, day)
    assert ms_b == pytest.approx(3.550, abs=5e-4) and ms_w == pytest.approx(0.102, abs=5e-4)   # USP <1010> table
    s_b2 = (ms_b - ms_w) / n
    assert s_b2 + ms_w == pytest.approx(1.251, abs=1e-3)                # USP <1010>: 1 run, 1 replicate
    se = one_way_mean_standard_error(ms_b, ms_w, k - 1, k * (n - 1), k * n, float(n))
    # the plan of the study itself, 5 runs x 3: s_B^2/5 + s_W^2/15 = MS_B/15, on k - 1 = 4 df (balanced)
    assert se.se ** 2 == pytest.approx(s_b2 / 5 + ms_w / 15, rel=1e-12)
    assert se.se ** 2 == pytest.approx(ms_b / 15, rel=1e-12)
    assert se.df == pytest.approx(4, rel=1e-12)


def test_bias_verification_by_hand():
    y, day = _five_by_five(np.random.default_rng(7), mean=10.05)
    target, u, nu_t = 10.0, 0.02, 30.0
    lv = assess_precision_level(10.0, y, day, reference=(target, u, nu_t), reference_levels=2)
    t = lv.trueness
    ms_b, ms_w, k, n = _anova_by_hand(y, day)
    assert ms_b > ms_w                                   # the between-day variance is not set to 0 here
    se2 = ms_b / (k * n)                                  # balanced: Var(mean) = MS_B / N on k - 1 df
    se_c = math.sqrt(se2 + u ** 2)
    nu_c = se_c ** 4 / (se2 ** 2 / (k - 1) + u ** 4 / nu_t)          # Welch-Satterthwaite, by hand
    m = stats.t.ppf(1 - 0.05 / (2 * 2), nu_c)                         # t quantile 1 - alpha/(2L), L = 2
    assert t.mean_standard_error == pytest.approx(math.sqrt(se2), rel=1e-12)
    assert t.mean_standard_error_df == pytest.approx(k - 1, rel=1e-12)
    assert t.combined_standard_error == pytest.approx(se_c, rel=1e-12)
    assert t.df == pytest.approx(nu_c, rel=1e-12) and t.multiplier == pytest.approx(m, rel=1e-12)
    assert t.verification_interval.low == pytest.approx(target - m * se_c, rel=1e-12)
    assert t.verification_interval.high == pytest.approx(target + m * se_c, rel=1e-12)
    assert t.verification_interval.level == pytest.approx(1 - 0.05 / 2)
    assert t.verified == bool(abs(y.mean() - target) <= m * se_c)
    crit = {c.id: c for c in precision_criteria(lv, (None, None))}["trueness-10"]
    assert crit.value == pytest.approx(abs(y.mean() - target), rel=1e-12)
    assert crit.limit == pytest.approx(m * se_c, rel=1e-12) and crit.passed is t.verified


def test_bias_with_between_day_variance_set_to_zero_uses_the_repeatability():
    # identical day means (each day the same five deviations): MS_B = 0 < MS_W, s_B set to 0
    base = np.array([-0.2, -0.1, 0.0, 0.1, 0.2])
    y = np.concatenate([10 + base] * DAYS)
    day = [f"d{d}" for d in range(DAYS) for _ in base]
    t = assess_precision_level(10.0, y, day, reference=(10.0, 0.0, None)).trueness
    ms_w = np.var(base, ddof=1)                           # hand computation: MS_W, N - k = 20 df
    assert t.mean_standard_error == pytest.approx(math.sqrt(ms_w / 25), rel=1e-12)
    assert t.mean_standard_error_df == 20
    assert t.multiplier == pytest.approx(stats.t.ppf(0.975, 20), rel=1e-12) and t.verified is True


def test_bias_false_rejection_rate_when_the_mean_equals_the_reference():
    # seeded simulation: true mean = reference value (exact, u = 0): rejection about alpha (the t statistic
    # of a balanced one-way mean on k - 1 df is exact); 2000 runs
    rng = np.random.default_rng(151)
    runs = 2000
    rejected = sum(assess_precision_level(10.0, *_five_by_five(rng), reference=(10.0, 0.0, None)).trueness.verified
                   is False for _ in range(runs))
    se = math.sqrt(0.05 * 0.95 / runs)
    assert abs(rejected / runs - 0.05) < 4 * se


def test_verify_bias_refuses_bad_input():
    with pytest.raises(ValueError, match="levels"):
        verify_bias(1.0, 0.1, 4, 1.0, levels=0)
    with pytest.raises(ValueError, match="combined standard error is zero"):
        verify_bias(1.0, 0.0, 4, 1.0, 0.0)


# ------------------------------------------------------------------ end to end with the preset
def _files(rng):
    rows = ["level,series,found"]
    for level in (10.0, 50.0):
        y, day = _five_by_five(rng, mean=level, sd_day=0.01 * level, sd_rep=0.015 * level)
        rows += [f"{level:g},{d},{v:.6f}" for v, d in zip(y, day)]
    from conftest import CALIBRATION
    return {"calibration.csv": CALIBRATION, "precision.csv": "\n".join(rows) + "\n"}


EP15_BODY = """\
[calibration]
data = "calibration.csv"
[precision]
data = "precision.csv"
[[precision.levels]]
level = 10
claimed_repeatability_sd = 0.15
claimed_within_laboratory_sd = 0.18
reference_value = 10.0
reference_standard_uncertainty = 0.03
[[precision.levels]]
level = 50
claimed_repeatability_rsd_pct = 1.5
claimed_within_laboratory_rsd_pct = 1.8
"""


def test_clsi_ep15_preset_end_to_end(make_study, outside):
    head = '[study]\nid = "T-1"\ntitle = "Test study"\nconcentration_unit = "mg/L"\nresponse_unit = "area"\n' \
           'guideline = "clsi-ep15"\n'
    study = make_study(EP15_BODY, _files(np.random.default_rng(5)), head=head)
    out = outside / "out"
    main(["run", str(study), "--out", str(out), "--format", "json,html"])
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    a = results["analytes"][0]
    by_id = {c["id"]: c for c in a["criteria"]}
    # the preset's design minimums (from memory: EP15-A3 5 days x 5 replicates, 2 samples), met by the design
    for cid, value in (("precision-series-10", 5), ("precision-replicates-10", 5), ("precision-series-50", 5),
                       ("precision-replicates-50", 5), ("precision-levels", 2)):
        assert by_id[cid]["value"] == value and by_id[cid]["pass"] is True
    guideline = results["study"]["guideline"] if "guideline" in results["study"] else results["guideline"]
    used = {u["key"]: (u["used"], u["from_memory"]) for u in guideline["values"]}
    assert used == {k: (True, True) for k in ("precision.min_series", "precision.min_replicates",
                                              "precision.min_levels")}
    lv10, lv50 = a["precision"]["levels"]
    assert [c["claimed_as"] for c in lv10["claims"]] == ["SD", "SD"]
    assert [c["claimed_as"] for c in lv50["claims"]] == ["RSD", "RSD"]
    # two levels carry claims: L = 2 in the UVL (scipy's chi-square quantile)
    rep = lv10["claims"][0]
    assert rep["upper_verification_limit"] == pytest.approx(0.15 * math.sqrt(stats.chi2.ppf(1 - 0.05 / 2, 20) / 20),
                                                            rel=1e-12)
    # one level has a reference value: L = 1, m = t(0.975; df)
    t = lv10["trueness"]
    assert t["multiplier"] == pytest.approx(stats.t.ppf(0.975, t["df"]), rel=1e-12)
    assert "trueness" not in lv50 and by_id["trueness-10"]["pass"] is t["verified"]
    html = (out / "dossier.html").read_text(encoding="utf-8")
    assert "Verification of bias against a reference value (CLSI EP15)" in html
    assert 'data-src="analytes.0.precision.levels.0.trueness.verification_interval.0"' in html


def test_design_minimum_not_met_fails(make_study, outside):
    files = _files(np.random.default_rng(6))
    lines = files["precision.csv"].splitlines()
    files["precision.csv"] = "\n".join(lines[:-2]) + "\n"      # the last series of level 50 keeps 3 results
    body = EP15_BODY.replace('data = "precision.csv"\n', 'data = "precision.csv"\nmin_replicates = 5\n', 1)
    study = make_study(body, files)
    out = outside / "out"
    main(["run", str(study), "--out", str(out), "--format", "json"])
    by_id = {c["id"]: c for c in json.loads((out / "results.json").read_text())["analytes"][0]["criteria"]}
    assert by_id["precision-replicates-50"]["value"] == 3 and by_id["precision-replicates-50"]["pass"] is False
    assert by_id["precision-replicates-10"]["pass"] is True and "precision-series-10" not in by_id


@pytest.mark.parametrize("level, match", [
    ("level = 10\nclaimed_repeatability_sd = 0.1\nclaimed_repeatability_rsd_pct = 1", "both as an RSD and as an SD"),
    ("level = 10\nreference_value = 10", "without reference_standard_uncertainty"),
    ("level = 10\nreference_standard_uncertainty = 0.1", "without reference_value"),
    ("level = 10\nclaimed_repeatability_sd = -0.1", "claimed_repeatability_sd"),
])
def test_bad_level_keys_are_refused(make_study, level, match):
    body = f'[calibration]\ndata = "calibration.csv"\n[precision]\ndata = "precision.csv"\n[[precision.levels]]\n{level}\n'
    with pytest.raises(StudyError, match=match):
        load_study(make_study(body, _files(np.random.default_rng(1))))


def test_new_level_keys_leave_the_protocol_digest_unchanged_while_absent(make_study):
    body = ('[calibration]\ndata = "calibration.csv"\n[precision]\ndata = "precision.csv"\n'
            '[[precision.levels]]\nlevel = 10\nrepeatability_rsd_max_pct = 5\n')
    files = _files(np.random.default_rng(1))
    plain = normalised(read_study_file(make_study(body, files)).config)
    assert plain["precision"]["levels"] == [{"level": 10.0, "repeatability_rsd_max_pct": 5.0,
                                             "intermediate_rsd_max_pct": None, "claimed_repeatability_rsd_pct": None,
                                             "claimed_within_laboratory_rsd_pct": None}]
    with_reference = normalised(read_study_file(make_study(
        body + "reference_value = 10\nreference_standard_uncertainty = 0.1\n", files)).config)
    assert digest(with_reference) != digest(plain)


def test_a_level_measured_on_one_day_verifies_its_bias_on_the_repeatability(make_study, outside):
    # found by an independent blind recomputation: one series and a reference value stopped the run (exit 3)
    rng = np.random.default_rng(11)
    files = _files(rng)
    rows = files["precision.csv"].splitlines()
    header, level10 = rows[0], [r for r in rows[1:] if r.startswith("10,")]
    one_day = [f"10,day1,{r.split(',')[-1]}" for r in level10[:5]]
    files["precision.csv"] = "\n".join([header] + one_day) + "\n"
    body = EP15_BODY.split("[[precision.levels]]")[0] + (
        "[[precision.levels]]\nlevel = 10\nreference_value = 10\nreference_standard_uncertainty = 0.05\n")
    study = make_study(body, files)
    out = outside / "out"
    assert main(["run", str(study), "--out", str(out), "--format", "json"]) in (0, 1)
    level = json.loads((out / "results.json").read_text())["analytes"][0]["precision"]["levels"][0]
    y = np.array([float(r.split(",")[-1]) for r in one_day])
    # hand computation: one series, se = s/sqrt(N) on N - 1 df, combined with u_ref by Welch-Satterthwaite
    se = y.std(ddof=1) / math.sqrt(5)
    se_c = math.sqrt(se ** 2 + 0.05 ** 2)
    df_c = se_c ** 4 / (se ** 4 / 4)
    m = stats.t.ppf(1 - 0.05 / 2, df_c)
    trueness = level["trueness"]
    assert trueness["mean_standard_error"] == pytest.approx(se, rel=1e-12)
    assert trueness["mean_standard_error_df"] == 4
    assert trueness["multiplier"] == pytest.approx(m, rel=1e-10)
    assert trueness["verified"] == bool(abs(y.mean() - 10) <= m * se_c)
