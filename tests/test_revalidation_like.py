"""Re-validation like with like: refit with the previous function, joint fit, matching, bad previous files.

Calibration data here are invented (seeded) scenarios; every expected value is a
statsmodels cross-check, an exact identity (a run compared with itself) or the
study's own declared setting, named beside it.
"""

import json

import numpy as np
import pytest
from bs4 import BeautifulSoup
from scipy import stats

from conftest import REPO
from validator.cli import main
from validator.maths.regression import fit_polynomial, raw_weights
from validator.characteristics.revalidation import RunSummary, assess_revalidation, joint_comparison, refit_like

EXAMPLE_PREVIOUS = REPO / "example_studies" / "anions-after-maintenance" / "previous-results.json"


def _head(study_id):
    return (f'[study]\nid = "{study_id}"\ntitle = "Re-validation test"\nconcentration_unit = "mg/L"\n'
            'response_unit = "µS·min"\n')      # the unit of the example's previous results


def _calibration_csv(x, y):
    return "concentration,response\n" + "".join(f"{float(a)!r},{float(b)!r}\n" for a, b in zip(x, y))


def _fourteen_points(seed=7, cv=0.03):
    """Invented: 7 levels 0.5 to 100 in duplicate, response 2 x (1 + 3 % CV noise)."""
    rng = np.random.default_rng(seed)
    x = np.repeat([0.5, 1, 2, 5, 10, 50, 100], 2).astype(float)
    y = 0.002 + 2.0 * x * (1 + cv * rng.standard_normal(x.size))
    return x, y


def _run(tmp_path, name, body, files, study_id):
    folder = tmp_path / name
    folder.mkdir()
    for fname, content in files.items():
        (folder / fname).write_text(content, encoding="utf-8")
    (folder / "study.toml").write_text(_head(study_id) + body, encoding="utf-8")
    return folder / "study.toml"


def _previous_results(tmp_path, x, y, *, model="linear", weighting="none", study_id="OLD-1"):
    study = _run(tmp_path, "previous", f'[calibration]\ndata = "cal.csv"\nmodel = "{model}"\n'
                 f'weighting = "{weighting}"\n', {"cal.csv": _calibration_csv(x, y)}, study_id)
    out = tmp_path / "previous-out"
    assert main(["run", str(study), "--out", str(out), "--format", "json"]) in (0, 1)
    return out / "results.json"


def _current(tmp_path, previous, x, y, *, model="linear", weighting="none", study_id="NEW-1", extra="",
             formats="json"):
    body = (f'[calibration]\ndata = "cal.csv"\nmodel = "{model}"\nweighting = "{weighting}"\n'
            f'[revalidation]\nprevious = "{previous}"\n{extra}')
    study = _run(tmp_path, "current", body, {"cal.csv": _calibration_csv(x, y)}, study_id)
    out = tmp_path / "current-out"
    code = main(["run", str(study), "--out", str(out), "--format", formats])
    return code, out


# --- like with like ------------------------------------------------------------------------------

@pytest.mark.parametrize("previous_setting, current_setting", [
    (("linear", "1/x^2"), ("linear", "none")),          # the reported case: ratio 20.2, "different"
    (("linear", "1/x^2"), ("quadratic", "none")),       # the reported case: ratio 25.8, "different"
    (("linear", "1/x^2"), ("linear", "auto")),          # auto may choose another weighting by chance
])
def test_identical_data_with_another_function_is_equivalent(tmp_path, previous_setting, current_setting):
    # identity: the same points refitted with the same function give change 0 and ratio 1 exactly
    x, y = _fourteen_points()
    prev = _previous_results(tmp_path, x, y, model=previous_setting[0], weighting=previous_setting[1])
    code, out = _current(tmp_path, prev, x, y, model=current_setting[0], weighting=current_setting[1])
    a = json.loads((out / "results.json").read_text())["analytes"][0]
    rv = a["revalidation"]
    assert rv["verdict"] == "equivalent"
    assert rv["refit_model"] == previous_setting[0] and rv["refit_weighting"] == previous_setting[1]
    assert rv["current_own_choice"]["model"] == a["calibration"]["model"]
    assert rv["current_own_choice"]["weighting"] == a["calibration"]["weighting"]
    assert rv["basis"] == "joint fit"
    assert rv["slope"]["change_pct"] == pytest.approx(0, abs=1e-9)
    assert rv["residual_sd"]["ratio"] == pytest.approx(1, rel=1e-9)
    assert rv["slope"]["df"] == 2 * 14 - 2 * 2            # straight line, p = 2 per run
    if (a["calibration"]["model"], a["calibration"]["weighting"]) != previous_setting:
        assert any("refitted with the previous run's calibration function" in r for r in rv["reasons"])


def test_independent_repeat_at_three_percent_cv_is_equivalent(tmp_path):
    # invented: two independent seeded runs of the same method; 1/x^2 like the previous run
    x, y1 = _fourteen_points(seed=1)
    _, y2 = _fourteen_points(seed=2)
    prev = _previous_results(tmp_path, x, y1, weighting="1/x^2")
    code, out = _current(tmp_path, prev, x, y2, weighting="none")
    rv = json.loads((out / "results.json").read_text())["analytes"][0]["revalidation"]
    assert rv["refit_weighting"] == "1/x^2"
    assert rv["residual_sd"]["ratio"] < 2 and rv["slope"]["verdict"] != "different"


def test_a_changed_sensitivity_is_still_found(tmp_path):
    # invented: the new run's response is 10 % lower; the refit must not hide it
    x, y = _fourteen_points(seed=3)
    prev = _previous_results(tmp_path, x, y, weighting="1/x^2")
    code, out = _current(tmp_path, prev, x, 0.9 * y, weighting="none")
    rv = json.loads((out / "results.json").read_text())["analytes"][0]["revalidation"]
    assert code == 1 and rv["verdict"] == "different"
    assert rv["slope"]["change_pct"] == pytest.approx(-10, abs=1e-6)   # exact: responses scaled by 0.9


# --- joint fit against statsmodels ---------------------------------------------------------------

def _two_runs(model, seed=5):
    rng = np.random.default_rng(seed)
    x1 = np.repeat([1.0, 2, 5, 10, 20, 40, 50], 2)
    x2 = np.repeat([1.0, 2, 4, 8, 16, 32, 50], 2)
    curve = (lambda x: 0.05 + 2.0 * x - 0.01 * x**2) if model == "quadratic" else \
        (lambda x: 2.0 * x) if model == "origin" else (lambda x: 0.05 + 2.0 * x)
    y1 = curve(x1) * (1 + 0.02 * rng.standard_normal(x1.size))
    y2 = 1.01 * curve(x2) * (1 + 0.02 * rng.standard_normal(x2.size))
    return x1, y1, x2, y2


@pytest.mark.parametrize("model, weighting", [("linear", "none"), ("linear", "1/x^2"), ("origin", "none"),
                                              ("origin", "1/x"), ("quadratic", "none"), ("quadratic", "1/x^2")])
def test_joint_fit_equals_statsmodels_wls_with_run_interactions(model, weighting):
    # cross-check: statsmodels WLS y ~ powers + run:powers with the common-scale weights
    import statsmodels.api as sm
    x1, y1, x2, y2 = _two_runs(model)
    origin = model == "origin"
    fm = "linear" if origin else model
    f1 = refit_like(x1, y1, model=fm, through_origin=origin, weighting=weighting)
    f2 = refit_like(x2, y2, model=fm, through_origin=origin, weighting=weighting)
    res = joint_comparison(f1, f2, margin_pct=5, alpha=0.05)
    powers = {"linear": (0, 1), "origin": (1,), "quadratic": (0, 1, 2)}[model]
    x = np.concatenate([x1, x2])
    y = np.concatenate([y1, y2])
    g = np.concatenate([np.zeros_like(x1), np.ones_like(x2)])
    X = np.column_stack([x**k for k in powers] + [g * x**k for k in powers])
    raw = np.concatenate([raw_weights(weighting, x1, y1), raw_weights(weighting, x2, y2)])
    wls = sm.WLS(y, X, weights=raw * x.size / raw.sum()).fit()
    p = len(powers)
    assert res.slope.df == int(wls.df_resid) == x.size - 2 * p          # n1 + n2 - 2p
    assert res.pooled_residual_sd == pytest.approx(np.sqrt(wls.scale), rel=1e-9)
    contrast = np.zeros(2 * p)
    if model == "quadratic":
        lo, hi = res.slope.sensitivity_range
        assert (lo, hi) == (1.0, 50.0)            # common calibrated range of the two designs
        contrast[p + 1], contrast[p + 2] = 1, lo + hi      # d(S) = d1 + d2 (a + b)
        base = np.zeros(2 * p)
        base[1], base[2] = 1, lo + hi
        previous_value = base @ wls.params
    else:
        contrast[p + powers.index(1)] = 1
        previous_value = wls.params[powers.index(1)]
    tt = wls.t_test(contrast)
    assert res.slope.t_statistic == pytest.approx(np.asarray(tt.tvalue).item(), rel=1e-8)
    assert res.slope.pvalue == pytest.approx(np.asarray(tt.pvalue).item(), rel=1e-7)
    assert res.slope.previous == pytest.approx(previous_value, rel=1e-10)
    tq = stats.t.ppf(0.95, wls.df_resid)                  # 1 - 2 alpha interval, alpha = 0.05
    diff, se = np.asarray(tt.effect).item(), np.asarray(tt.sd).item()
    assert res.slope.change_ci_pct.low == pytest.approx(100 * (diff - tq * se) / previous_value, rel=1e-8)
    assert res.slope.change_ci_pct.high == pytest.approx(100 * (diff + tq * se) / previous_value, rel=1e-8)
    # per-run residual SDs on the common weight scale: each run's own WLS with the same weights
    w = raw * x.size / raw.sum()
    for k, (mask, s) in enumerate([(g == 0, res.residual_sd_previous), (g == 1, res.residual_sd_current)]):
        own = sm.WLS(y[mask], X[mask][:, :p], weights=w[mask]).fit()
        assert s == pytest.approx(np.sqrt(own.scale), rel=1e-9)


def test_quadratic_compares_mean_sensitivity_not_the_linear_coefficient():
    # hand computation, see joint_comparison: S = b1 + b2 (a + b) over the shared range
    x1, y1, x2, y2 = _two_runs("quadratic")
    f1 = fit_polynomial(x1, y1, model="quadratic")
    f2 = fit_polynomial(x2, y2, model="quadratic")
    res = joint_comparison(f1, f2, margin_pct=5)
    c = f1.coefficients
    assert res.slope.quantity == "mean sensitivity"
    assert res.slope.previous == pytest.approx(c["slope"].estimate + c["quadratic"].estimate * 51, rel=1e-10)
    assert res.slope.previous != pytest.approx(c["slope"].estimate, rel=1e-3)


def test_quadratic_without_a_shared_range_is_not_applicable():
    # common practice, no published source: no overlap, no sensitivity to compare
    x1, y1, _, _ = _two_runs("quadratic")
    f1 = fit_polynomial(x1, y1, model="quadratic")
    f2 = fit_polynomial(x1 + 100, y1, model="quadratic")
    res = joint_comparison(f1, f2, margin_pct=5)
    assert res.slope.verdict == "not applicable" and res.slope.change_pct is None and res.slope.reason


def test_summary_fallback_uses_n1_plus_n2_minus_2p():
    # cross-check: statsmodels OLS y ~ x + run:x through the origin (p = 1 per run)
    import statsmodels.api as sm
    x1, y1, x2, y2 = _two_runs("origin")
    entry = lambda x, y: {"calibration": {  # noqa: E731
        "model": "linear", "weighting": "none", "through_origin": True, "n": x.size,
        "residual_sd": fit_polynomial(x, y, model="origin").residual_sd,
        "coefficients": {"slope": {"estimate": fit_polynomial(x, y, model="origin").coefficients["slope"].estimate,
                                   "std_error": fit_polynomial(x, y, model="origin").coefficients["slope"].std_error}},
        "back_calculated": [{"nominal": float(a), "response": float(b)} for a, b in zip(x, y)]}}
    previous, current = entry(x1, y1), entry(x2, y2)
    previous["calibration"]["back_calculated"] = []          # an older file without the raw points
    r = assess_revalidation(RunSummary.from_results(previous), RunSummary.from_results(current),
                            slope_change_max_pct=5, residual_sd_ratio_max=2)
    x = np.concatenate([x1, x2])
    g = np.concatenate([np.zeros_like(x1), np.ones_like(x2)])
    ols = sm.OLS(np.concatenate([y1, y2]), np.column_stack([x, g * x])).fit()
    assert r.slope.basis == "summary statistics"
    assert r.slope.df == int(ols.df_resid) == x.size - 2
    assert r.slope.t_statistic == pytest.approx(ols.tvalues[1], rel=1e-8)
    assert any("summary statistics" in reason for reason in r.reasons)


# --- matching ------------------------------------------------------------------------------------

def test_single_analyte_studies_match_across_study_ids(tmp_path):
    x, y = _fourteen_points()
    prev = _previous_results(tmp_path, x, y, study_id="LAB-2025-01")
    code, out = _current(tmp_path, prev, x, y, study_id="LAB-2026-04")
    results = json.loads((out / "results.json").read_text())
    assert code == 0
    assert results["revalidation"]["matched_analytes"] == [{"analyte": "LAB-2026-04",
                                                             "previous_analyte": "LAB-2025-01"}]
    assert results["analytes"][0]["revalidation"]["previous_analyte"] == "LAB-2025-01"
    assert results["revalidation"]["unmatched_analytes"] == []


def test_mapping_covers_a_renamed_analyte(tmp_path):
    # the example's previous run has nitrate and fluoride; this single-analyte run is the renamed nitrate
    x = np.repeat([1.0, 2, 5, 10, 20, 50], 2)
    rng = np.random.default_rng(4)
    y = 0.187 * x * (1 + 0.01 * rng.standard_normal(x.size))
    code, out = _current(tmp_path, EXAMPLE_PREVIOUS, x, y, study_id="NO3", extra='analytes = {NO3 = "nitrate"}\n')
    results = json.loads((out / "results.json").read_text())
    assert results["revalidation"]["matched_analytes"] == [{"analyte": "NO3", "previous_analyte": "nitrate"}]
    assert results["revalidation"]["unmatched_analytes"] == ["fluoride"]
    assert results["analytes"][0]["revalidation"]["refit_weighting"] == "1/x^2"   # the example's nitrate


def test_nothing_matched_is_an_input_error_naming_both_lists(tmp_path, capsys):
    x, y = _fourteen_points()
    code, _ = _current(tmp_path, EXAMPLE_PREVIOUS, x, y, study_id="CHLORIDE")
    assert code == 2
    err = capsys.readouterr().err
    assert err == ('validator: error: ' + str(EXAMPLE_PREVIOUS) + ': shares no analyte with this study, so nothing '
                   'was compared: this study has "CHLORIDE"; the previous results have "nitrate", "fluoride"; map '
                   'renamed analytes with [revalidation] analytes = {new = "old"}\n')


def test_mapping_to_an_unknown_analyte_is_an_error(tmp_path, capsys):
    x, y = _fourteen_points()
    code, _ = _current(tmp_path, EXAMPLE_PREVIOUS, x, y, study_id="NO3", extra='analytes = {NO3 = "nitrite"}\n')
    assert code == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "revalidation.analytes.NO3" in err and '"nitrite"' in err
    assert '"nitrate", "fluoride"' in err


# --- malformed previous results.json -------------------------------------------------------------

def _set(doc, path, value):
    node = doc
    for part in path[:-1]:
        node = node[part]
    if value is _DELETE:
        del node[path[-1]]
    else:
        node[path[-1]] = value


_DELETE = object()
_CAL = ["analytes", 0, "calibration"]
MALFORMED = [
    # (change, JSON path expected in the message); numbers as strings first
    ((_CAL + ["coefficients", "slope", "estimate"], "0.187"), "$.analytes[0].calibration.coefficients.slope.estimate"),
    ((_CAL + ["coefficients", "slope", "std_error"], "0.001"),
     "$.analytes[0].calibration.coefficients.slope.std_error"),
    ((_CAL + ["residual_sd"], "0.004"), "$.analytes[0].calibration.residual_sd"),
    ((_CAL + ["n"], "21"), "$.analytes[0].calibration.n"),
    ((_CAL + ["df_resid"], "19"), "$.analytes[0].calibration.df_resid"),
    ((_CAL + ["back_calculated", 3, "nominal"], "0.5"), "$.analytes[0].calibration.back_calculated[3].nominal"),
    ((_CAL + ["back_calculated", 3, "response"], "0.09"), "$.analytes[0].calibration.back_calculated[3].response"),
    ((_CAL + ["level_table", 0, "concentration"], "0.5"), "$.analytes[0].calibration.level_table[0].concentration"),
    ((["analytes", 0, "detection", "estimates", 0, "lod"], "0.01"), "$.analytes[0].detection.estimates[0].lod"),
    ((["analytes", 0, "recovery", "levels", 0, "recoveries_pct", 0], "99.1"),
     "$.analytes[0].recovery.levels[0].recoveries_pct[0]"),
    ((["analytes", 0, "precision", "levels", 0, "repeatability_sd"], "0.02"),
     "$.analytes[0].precision.levels[0].repeatability_sd"),
    ((["analytes", 0, "precision", "levels", 0, "df"], ["2", "9"]), "$.analytes[0].precision.levels[0].df[0]"),
    ((_CAL + ["coefficients", "slope", "estimate"], True), "$.analytes[0].calibration.coefficients.slope.estimate"),
    # missing fields
    ((_CAL + ["weighting"], _DELETE), "$.analytes[0].calibration"),
    ((_CAL + ["model"], _DELETE), "$.analytes[0].calibration"),
    ((_CAL + ["coefficients", "slope"], _DELETE), "$.analytes[0].calibration.coefficients"),
    ((_CAL + ["back_calculated"], _DELETE), "$.analytes[0].calibration"),
    ((["analytes", 0, "name"], _DELETE), "$.analytes[0]"),
    ((["study", "concentration_unit"], _DELETE), "$.study"),
    ((["generated_at"], _DELETE), "$"),
    ((["analytes"], []), "$.analytes"),
    ((["schema_version"], 1), "$.schema_version"),
    ((_CAL + ["weighting"], "1/z"), "$.analytes[0].calibration.weighting"),
]


@pytest.mark.parametrize("change, json_path", MALFORMED, ids=[p + str(i) for i, (_, p) in enumerate(MALFORMED)])
def test_malformed_previous_results_exit_2_naming_the_json_path(tmp_path, capsys, change, json_path):
    doc = json.loads(EXAMPLE_PREVIOUS.read_text())
    assert doc["analytes"][0]["recovery"] and doc["analytes"][0]["precision"]    # fixture covers these paths
    _set(doc, *change)
    (tmp_path / "prev.json").write_text(json.dumps(doc))
    x, y = _fourteen_points()
    code, _ = _current(tmp_path, tmp_path / "prev.json", x, y, study_id="nitrate")
    err = capsys.readouterr().err
    assert code == 2
    assert err.startswith(f"validator: error: {tmp_path / 'prev.json'}: ") and err.count("\n") == 1
    assert f"at JSON path {json_path}:" in err


RAW_MALFORMED = [
    (b"", "is not valid JSON"),
    (b'{"schema_version": "1.0", "analytes": [', "is not valid JSON"),
    (b"\xff\xfe{}", "is not UTF-8"),
    (b"[1, 2, 3]", "is not a results.json written by validator"),
    (b'{"schema_version": "1.0", "x": NaN}', "NaN, which is not a JSON number"),
    (b'{"schema_version": "1.0", "x": -Infinity}', "-Infinity, which is not a JSON number"),
    (b'{"schema_version": "1.0", "x": 1e999}', "too large to represent"),
    (b'{"schema_version": "1.0", "x": 123456789012345678901234567890}', "too large"),
    (b'{"schema_version": "1.0", "x": ' + b"[" * 200000 + b"]" * 200000 + b"}", "nested"),
    (b'{"schema_version": "1.0", "x": ' + b"[" * 40 + b"]" * 40 + b"}", "nested more than"),
    (b'{"schema_version": "2.0"}', 'has schema version "2.0"'),
]


@pytest.mark.parametrize("content, message", RAW_MALFORMED, ids=[m for _, m in RAW_MALFORMED])
def test_unreadable_previous_results_exit_2(tmp_path, capsys, content, message):
    (tmp_path / "prev.json").write_bytes(content)
    x, y = _fourteen_points()
    code, _ = _current(tmp_path, tmp_path / "prev.json", x, y)
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and message in err, err


def test_huge_previous_results_exit_2(tmp_path, capsys):
    (tmp_path / "prev.json").write_bytes(b'{"schema_version": "1.0", "pad": "' + b"x" * (17 * 1024 * 1024) + b'"}')
    x, y = _fourteen_points()
    code, _ = _current(tmp_path, tmp_path / "prev.json", x, y)
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and "over the limit" in err


def test_previous_weighting_not_computable_on_this_run_exit_2(tmp_path, capsys):
    # a zero calibrator cannot be refitted with the previous run's 1/x^2 weighting
    x, y = _fourteen_points()
    prev = _previous_results(tmp_path, x, y, weighting="1/x^2")
    code, _ = _current(tmp_path, prev, np.r_[0.0, x], np.r_[0.001, y])
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1
    assert "cal.csv, row 2, column \"concentration\": concentration 0 cannot be weighted by 1/x^2" in err


# --- labels from the interval's own level ----------------------------------------------------------

def test_alpha_001_labels_the_change_interval_98_percent(tmp_path):
    x, y = _fourteen_points()
    prev = _previous_results(tmp_path, x, y, weighting="1/x^2")
    code, out = _current(tmp_path, prev, x, 1.01 * y, weighting="none", extra="[criteria]\nalpha = 0.01\n",
                         formats="json,html")
    results = json.loads((out / "results.json").read_text())
    rv = results["analytes"][0]["revalidation"]
    assert rv["slope"]["change_ci_level"] == pytest.approx(0.98)        # 1 - 2 alpha, the study's alpha
    assert results["revalidation"]["change_ci_level"] == pytest.approx(0.98)
    soup = BeautifulSoup((out / "dossier.html").read_text(), "html.parser")
    changes = soup.select_one("#changes")
    headers = [th.get_text() for th in changes.select("th")]
    assert "98 % CI of change (%)" in headers
    text = changes.get_text(" ")
    assert "98 % CI" in text and "90 %" not in text and "95 % CI of change" not in text
    assert any("98 % CI" in r for r in rv["reasons"])
    criterion = next(c for c in results["analytes"][0]["criteria"] if c["id"] == "slope-equivalence")
    assert criterion["description"].startswith("98 % CI")


# --- fuzzing: any mutation of a previous results.json gives exit 0, 1 or 2, never 3 ------------------

def _leaves(node, path=()):
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _leaves(v, path + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _leaves(v, path + (i,))
    else:
        yield path


def test_mutated_previous_results_never_crash(tmp_path_factory):
    # property: a damaged previous file is an input error (2) or is used (0/1); an internal error (3) never
    from hypothesis import HealthCheck, given, settings
    from hypothesis import strategies as st

    base = json.loads(EXAMPLE_PREVIOUS.read_text())
    leaves = [p for p in _leaves(base) if p and p[0] in ("analytes", "study", "schema_version")]
    values = st.one_of(st.none(), st.booleans(), st.integers(-10**6, 10**6),
                       st.floats(allow_nan=False, allow_infinity=False), st.text(max_size=5),
                       st.just([]), st.just({}), st.just([[1.0]]), st.sampled_from([0.0, -1.0, 1e300, 5e-324]))
    x = np.repeat([0.5, 1, 2, 5, 10], 2).astype(float)
    y = 0.187 * x * (1 + 0.01 * np.sin(np.arange(x.size)))

    @settings(max_examples=40, deadline=None, suppress_health_check=list(HealthCheck), derandomize=True)
    @given(st.lists(st.tuples(st.sampled_from(leaves), values), min_size=1, max_size=3))
    def run(mutations):
        doc = json.loads(json.dumps(base))
        for path, value in mutations:
            _set(doc, path, value)
        folder = tmp_path_factory.mktemp("fuzz")
        (folder / "prev.json").write_text(json.dumps(doc))
        (folder / "cal.csv").write_text(_calibration_csv(x, y))
        (folder / "study.toml").write_text(_head("nitrate") + '[calibration]\ndata = "cal.csv"\n'
                                           '[revalidation]\nprevious = "prev.json"\n')
        assert main(["run", str(folder / "study.toml"), "--out", str(folder / "o"), "--format", "json"]) in (0, 1, 2)

    run()


@pytest.mark.parametrize("change, json_path", [
    ((_CAL + ["n"], 1e300), "$.analytes[0].calibration.n"),                       # "integer" admits 1e300
    ((_CAL + ["back_calculated", 2, "nominal"], 1e-300), "$.analytes[0].calibration.back_calculated"),
    ((_CAL + ["back_calculated", 2, "nominal"], -1.0), "$.analytes[0].calibration.back_calculated[2].nominal"),
])
def test_schema_valid_but_unusable_previous_points_exit_2(tmp_path, capsys, change, json_path):
    # 1/x^2 of 1e-300 overflows; a negative concentration has no 1/x^2 weight (nitrate is fitted 1/x^2)
    doc = json.loads(EXAMPLE_PREVIOUS.read_text())
    _set(doc, *change)
    (tmp_path / "prev.json").write_text(json.dumps(doc))
    x, y = _fourteen_points()
    code, _ = _current(tmp_path, tmp_path / "prev.json", x, y, study_id="nitrate")
    err = capsys.readouterr().err
    assert code == 2 and err.count("\n") == 1 and f"at JSON path {json_path}:" in err, err


def test_quadratic_without_previous_points_is_not_applicable_and_not_passed(tmp_path):
    # "not shown is not passed": no raw points for a curve -> no value, no verdict, a reason in the dossier
    doc = json.loads(EXAMPLE_PREVIOUS.read_text())
    assert doc["analytes"][1]["calibration"]["model"] == "quadratic"
    doc["analytes"][1]["calibration"]["back_calculated"] = []
    (tmp_path / "earlier").mkdir()
    (tmp_path / "earlier" / "prev.json").write_text(json.dumps(doc))
    x = np.repeat([0.05, 0.1, 0.5, 1, 2], 2)
    y = 0.38 * x - 0.01 * x**2 + 0.001 * np.cos(np.arange(x.size))
    code, out = _current(tmp_path, tmp_path / "earlier" / "prev.json", x, y, study_id="fluoride",
                         formats="json,html")
    a = json.loads((out / "results.json").read_text())["analytes"][0]
    rv = a["revalidation"]
    assert rv["basis"] == "summary statistics" and rv["slope"]["verdict"] == "not applicable"
    assert rv["slope"]["change_pct"] is None and rv["verdict"] == "not shown equivalent"
    criterion = next(c for c in a["criteria"] if c["id"] == "slope-equivalence")
    assert criterion["pass"] is None and criterion["value"] is None and "raw calibration points" in criterion["note"]
    soup = BeautifulSoup((out / "dossier.html").read_text(), "html.parser")
    assert "was not tested: the previous results.json lacks the raw calibration points" in \
        soup.select_one("#changes").get_text(" ")


def test_joint_comparison_is_invariant_to_units_and_row_order():
    # property: scaling every concentration by k (both runs) and permuting rows change no relative result
    from hypothesis import given, settings
    from hypothesis import strategies as st

    x1, y1, x2, y2 = _two_runs("quadratic", seed=9)

    @settings(max_examples=25, deadline=None, derandomize=True)
    @given(st.floats(1e-3, 1e3), st.sampled_from(["none", "1/x", "1/x^2", "1/y"]),
           st.sampled_from(["linear", "quadratic"]), st.randoms(use_true_random=False))
    def check(k, weighting, model, rnd):
        ref = joint_comparison(fit_polynomial(x1, y1, model=model, weighting=weighting),
                               fit_polynomial(x2, y2, model=model, weighting=weighting), margin_pct=5)
        order = list(range(x2.size))
        rnd.shuffle(order)
        res = joint_comparison(fit_polynomial(k * x1, y1, model=model, weighting=weighting),
                               fit_polynomial(k * x2[order], y2[order], model=model, weighting=weighting),
                               margin_pct=5)
        assert res.slope.df == ref.slope.df
        assert res.slope.change_pct == pytest.approx(ref.slope.change_pct, rel=1e-7, abs=1e-9)
        assert res.slope.t_statistic == pytest.approx(ref.slope.t_statistic, rel=1e-7)
        assert res.slope.previous == pytest.approx(ref.slope.previous / k, rel=1e-7)
        assert res.residual_sd_current / res.residual_sd_previous == pytest.approx(
            ref.residual_sd_current / ref.residual_sd_previous, rel=1e-7)
        lo, hi = (res.slope.change_ci_pct.low, res.slope.change_ci_pct.high)
        assert lo <= res.slope.change_pct <= hi

    check()
