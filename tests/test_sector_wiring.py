"""The sector characteristics (issue #15) wired end to end: study section, loader, criteria,
results.json (validated against the schema), dossier sentences, guideline presets.

Expected values are hand computations named beside them, or the pure functions of
validator.sector (whose own tests check them against scipy, statsmodels and exact arithmetic).
"""

from __future__ import annotations

import json
import math

import jsonschema
import numpy as np
import pytest
from scipy import stats

from validator.cli import main
from validator.engine import analyse_study
from validator.errors import DataError, StudyError
from validator.inputs.loading import load_study
from validator.results import build_results, load_schema


def _run(study, outside, formats="json", name="out"):
    out = outside / name
    code = main(["run", str(study), "--out", str(out), "--format", formats])
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    return code, results, out


def _criteria(results, prefix):
    return [c for c in results["analytes"][0]["criteria"] if c["id"].startswith(prefix)]


# ------------------------------------------------------------------ limit of blank (CLSI EP17-A2)
BLANKS = [0.01 * i for i in range(60)]          # 0.00, 0.01, ..., 0.59: rank 57.5 -> (0.56 + 0.57)/2
LOW = {"L1": [0.9, 1.1, 1.0, 0.95, 1.05, 1.0, 0.92, 1.08, 0.97, 1.03],
       "L2": [2.1, 1.9, 2.0, 2.05, 1.95, 2.0, 2.08, 1.92, 2.03, 1.97]}


def _lob_files():
    # two blank samples (b1, b2 alternating) and 2 x 10 low-level results: the EP17-A2 verification
    # minimum of 20 results from 2 samples (from memory: EP17-A2 sec. 6) is met
    blanks = "sample,found\n" + "".join(f"b{1 + i % 2},{v:.2f}\n" for i, v in enumerate(BLANKS))
    low = "sample,found,nominal\n" + "".join(f"{s},{v},{1.0 if s == 'L1' else 2.0}\n"
                                             for s, vs in LOW.items() for v in vs)
    from conftest import CALIBRATION
    return {"calibration.csv": CALIBRATION, "blanks.csv": blanks, "low.csv": low}


LOB_BODY = """\
[calibration]
data = "calibration.csv"
[limit_of_blank]
blanks = "blanks.csv"
low_samples = "low.csv"
loq_max_cv_pct = 10
lob_max = 0.6
lod_max = 0.6
"""


def test_limit_of_blank_end_to_end(make_study, outside):
    code, results, out = _run(make_study(LOB_BODY, _lob_files()), outside, "json,html")
    entry = results["analytes"][0]["limit_of_blank"]
    # hand computation: rank 0.5 + 0.95 x 60 = 57.5, the mean of the 57th and 58th sorted blanks
    assert entry["lob"]["lots"][0]["rank"] == pytest.approx(57.5)
    assert entry["lob"]["value"] == pytest.approx((0.56 + 0.57) / 2, abs=1e-12)
    # hand computation: SD_L pooled over the two samples (9 df each), c_p = 1.645 / (1 - 1/(4 (20 - 2)))
    pooled = math.sqrt((np.var(LOW["L1"], ddof=1) + np.var(LOW["L2"], ddof=1)) / 2)
    cp = 1.645 / (1 - 1 / (4 * (20 - 2)))
    assert entry["lod"]["lots"][0]["coverage_factor"] == pytest.approx(cp, rel=1e-12)
    assert entry["lod"]["value"] == pytest.approx(0.565 + cp * pooled, rel=1e-12)
    # LoQ: both levels meet CV <= 10 %, so the lowest (nominal 1), which lies above the LoD
    assert entry["loq"]["value"] == 1.0
    by_id = {c["id"]: c for c in _criteria(results, "limit-of")}
    assert by_id["limit-of-blank"]["pass"] is True           # 0.565 <= 0.6
    assert by_id["limit-of-detection"]["pass"] is False       # LoD above 0.6
    assert "limit-of-quantitation" not in by_id               # no loq_max declared: no criterion
    assert "limit_of_blank" in results["analytes"][0]["characteristics_assessed"]
    assert results["analytes"][0]["verdict"] == "fail"
    html = (out / "dossier.html").read_text(encoding="utf-8")
    assert "Limit of blank 0.565 mg/L" in html
    assert 'data-src="analytes.0.limit_of_blank.lob.value"' in html


def test_limit_of_blank_without_low_samples_is_not_shown_so_not_passed(make_study, outside):
    files = _lob_files()
    body = LOB_BODY.replace('low_samples = "low.csv"\n', "").replace("loq_max_cv_pct = 10\n", "")
    _, results, _ = _run(make_study(body, files), outside)
    entry = results["analytes"][0]["limit_of_blank"]
    assert entry["lod"] is None and entry["loq"] is None
    lod = {c["id"]: c for c in _criteria(results, "limit-of")}["limit-of-detection"]
    assert lod["pass"] is None and "no low-level results" in lod["note"]
    items = {e["item"]: e["reason"] for e in results["analytes"][0]["not_applicable"]}
    assert "no low-level results" in items["limit_of_blank.lod"]
    assert results["analytes"][0]["verdict"] == "incomplete"


def _criteria_of(make_study, outside, body, files, name):
    _, results, _ = _run(make_study(body, files), outside, name=name)
    return {c["id"]: c for c in _criteria(results, "limit-of")}, results


def test_limit_of_blank_degenerate_designs_are_not_passed(make_study, outside):
    from conftest import CALIBRATION
    body = LOB_BODY.replace("loq_max_cv_pct = 10\n", "loq_max_cv_pct = 50\nloq_max = 5\n")
    # 2 blank results from 1 sample, 2 low-level results from 1 sample: below the EP17-A2 verification
    # minimum of 20 results from 2 samples (from memory: EP17-A2 sec. 6), so no verdict (counts by hand)
    tiny = {"calibration.csv": CALIBRATION, "blanks.csv": "sample,found\nb,0.01\nb,0.02\n",
            "low.csv": "sample,found,nominal\nL1,1.0,1.0\nL1,1.1,1.0\n"}
    parametric = body.replace("[limit_of_blank]", '[limit_of_blank]\nmethod = "parametric"')
    by_id, results = _criteria_of(make_study, outside, parametric.replace("lob_max = 0.6", "lob_max = 5")
                                  .replace("lod_max = 0.6", "lod_max = 5"), tiny, "tiny")
    lob = results["analytes"][0]["limit_of_blank"]["lob"]
    # hand computation: c_p = 1.645 / (1 - 1/(4 (2 - 1))) = 2.1933..., computed and shown, not judged
    assert lob["lots"][0]["coverage_factor"] == pytest.approx(1.645 / 0.75, rel=1e-12)
    for cid in ("limit-of-blank", "limit-of-detection", "limit-of-quantitation"):
        assert by_id[cid]["pass"] is None, cid
        assert "verification minimum of 20 results from 2 samples" in by_id[cid]["note"], cid
    # 20 identical blanks, parametric: SD 0 gives no LoB, so no verdict (hand: mean 0, SD 0)
    files = _lob_files()
    files["blanks.csv"] = "sample,found\n" + "b1,0.0\nb2,0.0\n" * 10
    by_id, _ = _criteria_of(make_study, outside, parametric, files, "zero")
    assert by_id["limit-of-blank"]["pass"] is None and "SD 0" in by_id["limit-of-blank"]["note"]
    assert by_id["limit-of-detection"]["pass"] is None
    # one reagent lot of 60 blanks (establishment asks for 2 lots and 60 low-level results per lot): the
    # verdict stands, the shortfall is stated beside it in the criterion's note (hand: 0.565 <= 0.6)
    by_id, _ = _criteria_of(make_study, outside, LOB_BODY, _lob_files(), "onelot")
    assert by_id["limit-of-blank"]["pass"] is True
    assert by_id["limit-of-blank"]["note"] == ("design: 1 reagent lot(s), fewer than the 2 CLSI EP17-A2 asks "
                                               "for establishment")
    assert "20 low-level results, fewer than the 60" in by_id["limit-of-detection"]["note"]


def test_limit_of_blank_four_lots_are_combined_end_to_end(make_study, outside):
    files = _lob_files()
    # the 60 blanks of _lob_files spread over 4 reagent lots of 15 (A, B, C, D in turn)
    files["blanks.csv"] = "sample,lot,found\n" + "".join(f"b{1 + i % 2},{'ABCD'[i % 4]},{v:.2f}\n"
                                                         for i, v in enumerate(BLANKS))
    _, results, out = _run(make_study(LOB_BODY, files), outside, "json,html")
    lob = results["analytes"][0]["limit_of_blank"]["lob"]
    # hand computation: all 60 results together, rank 57.5 -> (0.56 + 0.57) / 2 (from memory: EP17-A2
    # 5.3.3.1, 4 or more lots combined); each lot alone would give its own 95th percentile
    assert lob["lot_rule"] == "lots combined" and lob["combined"]["n_results"] == 60
    assert lob["value"] == pytest.approx(0.565, abs=1e-12) and len(lob["lots"]) == 4
    html = (out / "dossier.html").read_text(encoding="utf-8")
    assert 'data-src="analytes.0.limit_of_blank.lob.combined.value"' in html and "all lots combined" in html


def test_limit_of_blank_loader_errors_name_file_row_column_value(make_study):
    files = _lob_files()
    files["blanks.csv"] = "found\n0.1\n0.2x\n"
    with pytest.raises(DataError) as err:
        load_study(make_study(LOB_BODY, files))
    assert "blanks.csv" in str(err.value) and "row 3" in str(err.value) and '"found"' in str(err.value)
    files = _lob_files()
    files["low.csv"] = "sample,found,nominal\nL1,1.0,1.0\nL1,1.1,1.5\n"
    with pytest.raises(DataError, match=r'low.csv, row 3, column "nominal".*one nominal per sample'):
        load_study(make_study(LOB_BODY, files))


def test_limit_of_blank_unknown_key_is_refused(make_study):
    with pytest.raises(StudyError, match="lod_maximum"):
        load_study(make_study(LOB_BODY + "lod_maximum = 1\n", _lob_files()))


# ------------------------------------------------------------------ incurred-sample reanalysis
ISR = [("S1", 100, 110), ("S2", 50, 45), ("S3", 20, 30), ("S4", 80, 80), ("S5", 10, 14), ("S6", 200, 190)]
ISR_BODY = """\
[calibration]
data = "calibration.csv"
[reanalysis]
data = "isr.csv"
"""


def _isr_files(rows=ISR):
    from conftest import CALIBRATION
    return {"calibration.csv": CALIBRATION,
            "isr.csv": "sample,original,repeat\n" + "".join(f"{s},{o},{r}\n" for s, o, r in rows)}


def test_reanalysis_by_hand_and_exact_two_thirds(make_study, outside):
    code, results, out = _run(make_study(ISR_BODY, _isr_files()), outside, "json,html")
    entry = results["analytes"][0]["reanalysis"]
    # hand computation: 100 (r - o) / ((r + o)/2): S1 10/105, S2 -5/47.5, S3 10/25, S4 0, S5 4/12, S6 -10/195
    expected = [1000 / 105, -500 / 47.5, 1000 / 25, 0.0, 400 / 12, -1000 / 195]
    assert [s["difference_percent"] for s in entry["samples"]] == pytest.approx(expected, rel=1e-12)
    assert [s["sample"] for s in entry["samples"]] == ["S1", "S2", "S3", "S4", "S5", "S6"]
    # S3 (40 %) and S5 (33.3 %) lie outside +/-20 %: 4 of 6 within, exactly two-thirds (the default) -> met
    assert (entry["n_within"], entry["n"]) == (4, 6)
    crit = _criteria(results, "incurred-sample-reanalysis")[0]
    assert crit["pass"] is True and crit["value"] == pytest.approx(4 / 6)
    defaults = {d["key"] for d in results["defaults_applied"]}
    assert {"reanalysis.limit_pct", "reanalysis.min_fraction"} <= defaults
    html = (out / "dossier.html").read_text(encoding="utf-8")
    # the section's own heading (the title also appears in the analyte's line of verdicts)
    assert "4 of 6 judged repeats" in html and "<svg" in html.split("<h3>Incurred-sample reanalysis")[1]
    assert "rests on 6 reanalysed sample(s)" in crit["note"]           # few samples: stated beside the verdict


def test_reanalysis_pair_of_zeros_is_not_judged(make_study, outside):
    _, results, out = _run(make_study(ISR_BODY, _isr_files(ISR + [("S7", 0, 0)])), outside, "json,html")
    entry = results["analytes"][0]["reanalysis"]
    s7 = entry["samples"][6]
    # hand computation: S7 has mean 0, % difference undefined, left out: still 4 of 6 judged within
    assert s7["difference_percent"] is None and s7["within"] is None and "both 0" in s7["reason"]
    assert (entry["n"], entry["n_judged"], entry["n_within"]) == (7, 6, 4)
    items = {e["item"]: e["reason"] for e in results["analytes"][0]["not_applicable"]}
    assert any("both 0" in reason for item, reason in items.items() if "samples.6" in item)
    assert _criteria(results, "incurred-sample-reanalysis")[0]["pass"] is True
    assert "not judged" in (out / "dossier.html").read_text(encoding="utf-8")
    # 0.67 is not two-thirds: 4/6 = 0.6667 < 0.67 fails (compared exactly)
    _, results, _ = _run(make_study(ISR_BODY + "min_fraction = 0.67\n", _isr_files()), outside, name="b")
    assert _criteria(results, "incurred-sample-reanalysis")[0]["pass"] is False


def test_reanalysis_repeated_sample_is_an_error_at_its_row(make_study):
    rows = ISR + [("S2", 1, 1)]
    with pytest.raises(DataError, match=r'isr.csv, row 8, column "sample".*"S2" appears again \(first at row 3\)'):
        load_study(make_study(ISR_BODY, _isr_files(rows)))


# ------------------------------------------------------------------ guideline presets
def test_guideline_preset_supplies_defaults_and_the_study_overrides(make_study, outside):
    head_m10 = __import__("conftest").STUDY_HEAD + 'guideline = "ich-m10"\n'
    _, results, out = _run(make_study(ISR_BODY + "limit_pct = 30\n", _isr_files(), head=head_m10), outside, "json,html")
    g = results["guideline"]
    assert g["name"] == "ich-m10"
    values = {v["key"]: v for v in g["values"]}
    # only the sections the study declares: no selectivity, stability, ... values
    assert set(values) == {"reanalysis.limit_pct", "reanalysis.min_fraction", "reanalysis.size_rule"}
    assert values["reanalysis.limit_pct"]["used"] is False and values["reanalysis.limit_pct"]["study_value"] == 30
    assert values["reanalysis.min_fraction"]["used"] is True and values["reanalysis.min_fraction"]["study_value"] is None
    assert all(v["source"].startswith("ICH M10") and v["from_memory"] for v in g["values"])
    defaults = {d["key"] for d in results["defaults_applied"]}
    assert "reanalysis.min_fraction" not in defaults and "reanalysis.limit_pct" not in defaults
    entry = results["analytes"][0]["reanalysis"]
    assert entry["limit_percent"] == 30 and entry["min_fraction"] == pytest.approx(2 / 3)
    html = (out / "dossier.html").read_text(encoding="utf-8")
    assert "Guideline preset" in html and "the study's own value overrides the preset" in html
    assert "preset-supplied" in html and "must confirm every preset value" in html


def test_every_preset_key_is_a_key_of_its_section():
    from validator.inputs.study import StudyConfig
    from validator.sector.presets import PRESETS

    for preset in PRESETS.values():
        for value in preset.values:
            section, key = value.key.split(".", 1)
            model = StudyConfig.model_fields[section].annotation.__args__[0]
            assert key in model.model_fields, value.key
            model.model_validate({**_required(model), key: value.value})
            assert value.source and (value.from_memory or "sec." in value.source or "Definition" in value.source)


def _required(model) -> dict:
    """Values for a section's required keys (paths), so one preset value can be validated alone."""
    out = {name: "data.csv" for name, f in model.model_fields.items() if f.is_required()}
    if "solvent_data" in model.model_fields:        # [matrix_effect] needs one of its data files
        out["solvent_data"] = "solvent.csv"
    return out


def test_unknown_guideline_is_refused(make_study):
    head = __import__("conftest").STUDY_HEAD + 'guideline = "ich-m99"\n'
    with pytest.raises(StudyError, match="guideline"):
        load_study(make_study(ISR_BODY, _isr_files(), head=head))


def test_studies_without_sector_sections_are_unchanged(make_study):
    """No key of the sector characteristics appears without their sections (results.json byte-identical)."""
    NAMES = ("limit_of_blank", "method_detection_limit", "matrix_effect", "carry_over", "selectivity", "stability",
             "dilution_integrity", "reanalysis")

    loaded = load_study(make_study())
    results = build_results(analyse_study(loaded), generated_at="2026-01-01T00:00:00Z")
    assert "guideline" not in results
    assert not set(NAMES) & set(results["analytes"][0])
    assert not set(NAMES) & set(results["analytes"][0]["characteristics_assessed"])


# ------------------------------------------------------------------ matrix effect
SOLVENT = [(1, 2.05), (1, 1.98), (2, 4.10), (2, 3.96), (4, 8.05), (4, 7.90), (8, 16.2), (8, 15.9), (16, 32.3), (16, 31.8)]
ME_BODY = """\
[calibration]
data = "calibration.csv"
[matrix_effect]
solvent_data = "solvent.csv"
variance = "pooled"
judge_slope_ratio = true
limit_pct = 5
"""


def _me_files(**extra):
    from conftest import CALIBRATION
    return {"calibration.csv": CALIBRATION,
            "solvent.csv": "concentration,response\n" + "".join(f"{x},{y}\n" for x, y in SOLVENT), **extra}


def test_matrix_effect_slope_ratio_interval_against_joint_statsmodels_fit(make_study, outside):
    import statsmodels.api as sm
    from conftest import CALIBRATION

    _, results, _ = _run(make_study(ME_BODY, _me_files()), outside)
    sr = results["analytes"][0]["matrix_effect"]["slope_ratio"]
    matrix = np.array([[float(v) for v in line.split(",")] for line in CALIBRATION.splitlines()[1:]])
    solvent = np.array(SOLVENT, dtype=float)
    x = np.concatenate([solvent[:, 0], matrix[:, 0]])
    y = np.concatenate([solvent[:, 1], matrix[:, 1]])
    m = np.r_[np.zeros(len(solvent)), np.ones(len(matrix))]
    # cross-check: statsmodels OLS, joint fit y = a + b x + c M + d M x (interaction term), pooled variance
    fit = sm.OLS(y, np.column_stack([np.ones_like(x), x, m, m * x])).fit()
    b_s, b_m = fit.params[1], fit.params[1] + fit.params[3]
    cov = fit.cov_params()
    var_s, var_m = cov[1, 1], cov[1, 1] + cov[3, 3] + 2 * cov[1, 3]
    ratio = b_m / b_s
    assert sr["slope_ratio"] == pytest.approx(ratio, rel=1e-10)
    assert sr["statistic"] == pytest.approx(100 * (ratio - 1), rel=1e-9)
    assert sr["df"] == fit.df_resid
    # delta method by hand on statsmodels' slope variances (the two slopes are uncorrelated: cov(b_s, b_m) = 0)
    assert cov[1, 1] + cov[1, 3] == pytest.approx(0, abs=1e-12 * var_s)
    se = abs(ratio) * math.sqrt(var_m / b_m ** 2 + var_s / b_s ** 2)
    t = stats.t.ppf(0.975, fit.df_resid)
    assert sr["se_ratio_delta"] == pytest.approx(se, rel=1e-9)
    assert sr["delta_interval"] == pytest.approx([100 * (ratio - t * se - 1), 100 * (ratio + t * se - 1)], rel=1e-9)
    assert sr["interval_level"] == pytest.approx(0.95)
    # Fieller's limits: where statsmodels' t test of b_m - R b_s = 0 (i.e. (1 - R) b + d = 0) reaches t
    for limit in sr["interval"]:
        r = 1 + limit / 100
        test = fit.t_test(np.array([[0, 1 - r, 0, 1]]))
        assert abs(float(np.ravel(test.tvalue)[0])) == pytest.approx(t, rel=1e-8)
    crit = _criteria(results, "matrix-effect-slope-ratio")[0]
    assert crit["value"] == sr["statistic"] and crit["limit"] == [-5.0, 5.0]
    assert crit["pass"] is (abs(sr["statistic"]) <= 5)


def test_matrix_effect_uses_the_calibration_weighting_and_separate_variances_by_default(make_study, outside):
    import statsmodels.api as sm
    from conftest import CALIBRATION

    body = ME_BODY.replace('variance = "pooled"\n', "").replace('data = "calibration.csv"\n',
                                                                 'data = "calibration.csv"\nweighting = "1/x^2"\n')
    _, results, out = _run(make_study(body, _me_files()), outside, "json,html")
    sr = results["analytes"][0]["matrix_effect"]["slope_ratio"]
    assert sr["weighting"] == "1/x^2" and sr["variance"] == "separate"
    matrix = np.array([[float(v) for v in line.split(",")] for line in CALIBRATION.splitlines()[1:]])
    solvent = np.array(SOLVENT, dtype=float)
    # cross-check: statsmodels WLS (weights 1/x^2), one fit per calibration
    fits = [sm.WLS(d[:, 1], sm.add_constant(d[:, 0]), weights=1 / d[:, 0] ** 2).fit() for d in (solvent, matrix)]
    (b_s, v_s), (b_m, v_m) = ((f.params[1], f.bse[1] ** 2) for f in fits)
    r = b_m / b_s
    assert sr["statistic"] == pytest.approx(100 * (r - 1), rel=1e-9)
    # hand computation: Welch-Satterthwaite df of b_m - R b_s
    df = (v_m + r * r * v_s) ** 2 / (v_m ** 2 / (len(matrix) - 2) + r ** 4 * v_s ** 2 / (len(solvent) - 2))
    assert sr["df"] == pytest.approx(df, rel=1e-9)
    assert "weighted 1/x²" in (out / "dossier.html").read_text(encoding="utf-8")     # a real superscript
    # a solvent blank at concentration 0 cannot be weighted 1/x^2: no slope ratio, with the reason
    files = _me_files()
    files["solvent.csv"] += "0,0.01\n"
    _, results, _ = _run(make_study(body, files), outside, name="zero")
    entry = results["analytes"][0]["matrix_effect"]
    assert entry["slope_ratio"] is None and "needs every solvent-calibration concentration > 0" in \
        entry["slope_ratio_reason"]
    assert _criteria(results, "matrix-effect-slope-ratio")[0]["pass"] is None


def test_matrix_lots_and_normalised_factor_by_hand(make_study, outside):
    lots = "lot,nominal,found\n" + "".join(f"P{k},3,{3 * (1 + 0.02 * k) + d}\n" for k in range(1, 7)
                                           for d in (-0.03, 0.0, 0.03))
    lots += "".join(f"P{k},80,{80 + d}\n" for k in range(1, 6) for d in (-1, 0, 1))      # 5 lots at high QC
    factor = ("lot,analyte_response,internal_standard_response\nneat,100,50\nneat,102,51\n"
              + "".join(f"P{k},{90 + k},{45 + k / 2}\n" for k in range(1, 7)))
    body = ME_BODY.replace('solvent_data = "solvent.csv"\nvariance = "pooled"\njudge_slope_ratio = true\nlimit_pct = 5\n',
                           'lots_data = "lots.csv"\nfactor_data = "factor.csv"\n')
    _, results, out = _run(make_study(body, _me_files(**{"lots.csv": lots, "factor.csv": factor})), outside, "json,html")
    entry = results["analytes"][0]["matrix_effect"]
    assert entry["slope_ratio"] is None and "no solvent calibration" in entry["slope_ratio_reason"]
    low, high = entry["lots"]
    # hand computation: lot P6 mean 3 x 1.12 = 3.36, accuracy 112 %, CV = 100 x 0.03 / 3.36
    p6 = low["lots"][5]
    assert p6["accuracy_percent"] == pytest.approx(112.0, rel=1e-12)
    assert p6["cv_percent"] == pytest.approx(100 * 0.03 / 3.36, rel=1e-9)
    assert low["passed"] is True and low["n_lots_passed"] == 6
    assert high["passed"] is None and "5 matrix lots, at least 6 needed" in high["reason"]
    by_id = {c["id"]: c for c in results["analytes"][0]["criteria"]}
    assert by_id["matrix-lots-3"]["pass"] is True and by_id["matrix-lots-80"]["pass"] is None
    # hand computation: neat means 101 and 50.5; lot k: (90 + k)/101 over (45 + k/2)/50.5 = (90 + k)/(90 + k) = 1
    mf = entry["normalised_factor"]
    assert [lot["normalised_factor"] for lot in mf["lots"]] == pytest.approx([1.0] * 6, rel=1e-12)
    # identical factors (SD exactly 0) show no lot-to-lot variation: not judged, as precision's SD 0
    # (FINDINGS 13 of the second hostile run; common practice, no published source)
    assert mf["cv_percent"] == 0.0 and by_id["matrix-factor-cv"]["pass"] is None
    assert "factors of all 6 lots are identical (SD exactly 0)" in by_id["matrix-factor-cv"]["note"]
    assert results["analytes"][0]["verdict"] == "incomplete"
    assert "<svg" in (out / "dossier.html").read_text(encoding="utf-8").split("<h3>Matrix effect</h3>")[1]


def test_matrix_effect_loader_errors(make_study):
    with pytest.raises(StudyError, match="at least one of solvent_data, lots_data and factor_data"):
        load_study(make_study(ME_BODY.split("[matrix_effect]")[0] + "[matrix_effect]\nlimit_pct = 20\n", _me_files()))
    files = _me_files(**{"factor.csv": "lot,analyte_response,internal_standard_response\nP1,90,45\n"})
    with pytest.raises(DataError, match=r'factor.csv, row 2, column "lot".*no neat-solution rows'):
        load_study(make_study(ME_BODY + 'factor_data = "factor.csv"\n', files))
    files = _me_files()
    files["solvent.csv"] = "concentration,response\n1,2\n-2,4\n"
    with pytest.raises(DataError, match=r'solvent.csv, row 3, column "concentration".*negative'):
        load_study(make_study(ME_BODY, files))


# ------------------------------------------------------------------ method detection limit
MDL_SPIKED = [1.52, 1.38, 1.61, 1.45, 1.57, 1.41, 1.49]
MDL_BODY = """\
[calibration]
data = "calibration.csv"
[method_detection_limit]
spiked = "spiked.csv"
blanks = "mdl-blanks.csv"
mdl_max = 0.5
"""


def _mdl_files(blanks):
    from conftest import CALIBRATION
    return {"calibration.csv": CALIBRATION,
            "spiked.csv": "found,batch\n" + "".join(f"{v},B{i % 3}\n" for i, v in enumerate(MDL_SPIKED)),
            "mdl-blanks.csv": "found\n" + "".join(f"{v}\n" for v in blanks)}


def test_mdl_by_hand_with_scipy_t_quantile(make_study, outside):
    blanks = ["ND", "0.12", "", "0.31", "not detected", "0.05", "0.2"]
    _, results, out = _run(make_study(MDL_BODY, _mdl_files(blanks)), outside, "json,html")
    e = results["analytes"][0]["method_detection_limit"]
    # hand computation: MDL_s = t(0.99; 6) x SD of the seven spiked results (scipy's t quantile)
    t = stats.t.ppf(0.99, 6)
    assert e["spiked_t"] == pytest.approx(t, rel=1e-12)
    assert e["spiked"] == pytest.approx(t * np.std(MDL_SPIKED, ddof=1), rel=1e-12)
    # some but not all of the 7 blanks are numerical: MDL_b is the highest blank, 0.31
    assert e["blank_rule"] == "highest blank" and e["blank"] == 0.31 and e["n_blanks_numerical"] == 4
    assert e["value"] == pytest.approx(max(e["spiked"], 0.31), rel=1e-15)
    crit = _criteria(results, "method-detection-limit")[0]
    assert crit["pass"] is (e["value"] <= 0.5)
    html = (out / "dossier.html").read_text(encoding="utf-8")
    assert "Method detection limit" in html
    # the reading of the 100-blank threshold is stated in results.json and the dossier
    assert e["blank_rule_reading"].startswith("40 CFR 136 Appendix B Rev. 2, II(2)")
    assert "Rule applied: 40 CFR 136 Appendix B Rev. 2, II(2)" in html


def test_mdl_all_blanks_numerical_and_bad_cell(make_study, outside):
    blanks = [0.02, -0.01, 0.03, 0.0, 0.01, 0.04, -0.02]
    _, results, _ = _run(make_study(MDL_BODY, _mdl_files(blanks)), outside)
    e = results["analytes"][0]["method_detection_limit"]
    # hand computation: MDL_b = mean + t(0.99; 6) s (the mean is positive here)
    expected = np.mean(blanks) + stats.t.ppf(0.99, 6) * np.std(blanks, ddof=1)
    assert e["blank_rule"] == "mean + t s" and e["blank"] == pytest.approx(expected, rel=1e-12)
    with pytest.raises(DataError, match=r'mdl-blanks.csv, row 3, column "found"'):
        load_study(make_study(MDL_BODY, _mdl_files(["0.1", "n/a"])))


# ------------------------------------------------------------------ carry-over, selectivity, stability, dilution
BIO_BODY = """\
[calibration]
data = "calibration.csv"
[carry_over]
data = "carry.csv"
[selectivity]
data = "selectivity.csv"
[stability]
data = "stability.csv"
[dilution_integrity]
data = "dilution.csv"
"""


def _bio_files(**over):
    from conftest import CALIBRATION
    files = {
        "calibration.csv": CALIBRATION,
        "carry.csv": ("kind,response,internal_standard_response\nlloq,100,5000\nlloq,110,5100\nlloq,90,4900\n"
                      "blank,12,100\nblank,25,300\n"),
        "selectivity.csv": ("lot,kind,response\n,lloq,200\n,lloq,200\n"
                            + "".join(f"L{k},blank,{v}\n" for k, v in enumerate([10, 20, 30, 39, 40, 41], 1))),
        "stability.csv": ("condition,nominal,found\n"
                          + "".join(f"bench-top 24 h,3,{v}\n" for v in (2.9, 3.1, 3.0))
                          + "".join(f"freeze-thaw x3,3,{v}\n" for v in (2.5, 2.6, 2.4))
                          + "".join(f"freeze-thaw x3,80,{v}\n" for v in (78, 82))),
        "dilution.csv": "factor,nominal,found\n" + "".join(f"10,500,{v}\n" for v in (49, 51, 50, 52, 48)),
    }
    files.update(over)
    return files


def test_bioanalytical_characteristics_by_hand(make_study, outside):
    _, results, out = _run(make_study(BIO_BODY, _bio_files()), outside, "json,html")
    a = results["analytes"][0]
    by_id = {c["id"]: c for c in a["criteria"]}
    # carry-over, hand computation: mean LLOQ response 100, mean IS 5000: blanks 12 %, 25 %; IS 2 %, 6 %
    co = a["carry_over"]
    assert co["analyte_percent"] == pytest.approx([12.0, 25.0]) and co["internal_standard_percent"] == pytest.approx([2.0, 6.0])
    assert by_id["carry-over"]["value"] == pytest.approx(25.0) and by_id["carry-over"]["pass"] is False
    assert by_id["carry-over-internal-standard"]["pass"] is False
    # selectivity, hand computation: mean LLOQ 200; lots 5 %, 10 %, 15 %, 19.5 %, 20 %, 20.5 % -> 5 of 6 pass
    sel = a["selectivity"]
    assert [lot["analyte_percent"] for lot in sel["lots"]] == pytest.approx([5, 10, 15, 19.5, 20, 20.5])
    assert sel["n_lots_passed"] == 5 and by_id["selectivity"]["value"] == pytest.approx(5 / 6)
    assert by_id["selectivity"]["pass"] is False          # min_fraction 1 (every lot) by default
    # stability against nominal, hand computation: bench-top mean 3.0 -> 0 %; freeze-thaw 2.5 -> -16.67 %
    conds = {(c["condition"], c["nominal"]): c["result"] for c in a["stability"]["conditions"]}
    bench = conds[("bench-top 24 h", 3.0)]
    half = stats.t.ppf(0.975, 2) * 0.1 / math.sqrt(3)     # t(0.975; 2) s / sqrt(n), s = 0.1
    assert bench["deviation_percent"] == pytest.approx(0, abs=1e-12)
    assert bench["interval"] == pytest.approx([100 * (-half / 3), 100 * (half / 3)], rel=1e-9)
    assert conds[("freeze-thaw x3", 3.0)]["deviation_percent"] == pytest.approx(100 * (2.5 / 3 - 1), rel=1e-12)
    assert by_id["stability-bench-top-24-h-3"]["pass"] is True
    assert by_id["stability-freeze-thaw-x3-3"]["pass"] is False
    two = by_id["stability-freeze-thaw-x3-80"]              # 2 results, 3 needed: not shown, so not passed
    assert two["pass"] is None and "2 stored results, at least 3 needed" in two["note"]
    # dilution, hand computation: 10 x (49, 51, 50, 52, 48) -> mean 500, accuracy 100 %, CV 100 x 15.81/500
    dil = a["dilution_integrity"]["levels"][0]
    assert dil["accuracy_percent"] == pytest.approx(100.0) and dil["cv_percent"] == pytest.approx(
        100 * np.std([490, 510, 500, 520, 480], ddof=1) / 500, rel=1e-12)
    assert by_id["dilution-accuracy-10x-500"]["pass"] is True and by_id["dilution-cv-10x-500"]["pass"] is True
    html = (out / "dossier.html").read_text(encoding="utf-8")
    for heading in ("<h3>Carry-over</h3>", "<h3>Selectivity</h3>", "<h3>Stability</h3>", "<h3>Dilution integrity</h3>"):
        assert heading in html


def test_stability_against_fresh_samples(make_study, outside):
    stab = ("condition,nominal,found\n" + "".join(f"fresh,3,{v}\n" for v in (3.0, 3.1, 2.9))
            + "".join(f"long-term 6 months,3,{v}\n" for v in (2.8, 2.9, 2.7)))
    body = "[calibration]\ndata = \"calibration.csv\"\n[stability]\ndata = \"stability.csv\"\nreference = \"fresh\"\n"
    _, results, _ = _run(make_study(body, _bio_files(**{"stability.csv": stab})), outside)
    (cond,) = results["analytes"][0]["stability"]["conditions"]
    # hand computation: 100 (2.8 / 3.0 - 1)
    assert cond["result"]["reference"] == "fresh"
    assert cond["result"]["deviation_percent"] == pytest.approx(100 * (2.8 / 3.0 - 1), rel=1e-12)
    bad = "condition,nominal,found\nlong-term,3,2.8\nlong-term,3,2.9\n"
    with pytest.raises(DataError, match=r'stability.csv, row 2, column "nominal".*no "fresh" rows'):
        load_study(make_study(body, _bio_files(**{"stability.csv": bad})))


@pytest.mark.parametrize("name, content, match", [
    ("carry.csv", "kind,response\nlloq,100\nafter-high,3\n", r'carry.csv, row 3, column "kind": kind "after-high"'),
    ("carry.csv", "kind,response\nblank,3\n", r'carry.csv, row 2, column "kind".*no "lloq" rows'),
    ("carry.csv", "kind,response\nlloq,0\nblank,3\n", r'carry.csv, row 2, column "response".*must be > 0'),
    ("selectivity.csv", "lot,kind,response\n,lloq,200\n,blank,3\n", r'selectivity.csv, row 3, column "lot"'),
    ("dilution.csv", "factor,nominal,found\n0.5,500,49\n", r'dilution.csv, row 2, column "factor".*at least 1'),
])
def test_bioanalytical_loader_errors(make_study, name, content, match):
    with pytest.raises(DataError, match=match):
        load_study(make_study(BIO_BODY, _bio_files(**{name: content})))


def test_protocol_digest_covers_sector_criteria_and_is_unchanged_without_them(make_study):
    from validator.protocol import digest, normalised

    plain = normalised(load_study(make_study()).config)
    assert "reanalysis" not in plain and "guideline" not in plain["study"]       # older digests unchanged
    with_isr = normalised(load_study(make_study(ISR_BODY, _isr_files())).config)
    assert with_isr["reanalysis"] == {"limit_pct": 20.0, "min_fraction": 2 / 3, "study_samples": None,
                                      "size_rule": "none"}
    stricter = normalised(load_study(make_study(ISR_BODY + "limit_pct = 15\n", _isr_files())).config)
    assert digest(stricter) != digest(with_isr)
