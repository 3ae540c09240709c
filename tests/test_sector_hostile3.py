"""Findings of the third hostile run against the sector characteristics (A to L), each fixed with a
test. Expected values: hand computations (named), scipy, or the stated rule with its source."""

from __future__ import annotations

import json
import math

import jsonschema
import numpy as np
import pytest
from scipy import stats

from validator.cli import main
from validator.errors import DataError, StudyError
from validator.inputs.loading import load_study
from validator.results import load_schema


def _run(study, outside, name="out"):
    out = outside / name
    code = main(["run", str(study), "--out", str(out), "--format", "json"])
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    return code, results


def _by_id(results, analyte=0):
    return {c["id"]: c for c in results["analytes"][analyte]["criteria"]}


def _na(results, analyte=0):
    return {e["item"]: e["reason"] for e in results["analytes"][analyte]["not_applicable"]}


def _cal():
    from conftest import CALIBRATION
    return CALIBRATION


# ------------------------------------------------------------------ A: MDL from spiked results around zero
MDL_BODY = """\
[calibration]
data = "calibration.csv"
[method_detection_limit]
spiked = "s.csv"
blanks = "b.csv"
mdl_max = 0.05
"""


def test_a_mdl_with_spiked_results_not_above_zero_is_not_passed(make_study, outside):
    spiked = [-0.002, -0.001, 0, 0.001, -0.003, 0.002, -0.001]
    files = {"calibration.csv": _cal(), "s.csv": "found\n" + "".join(f"{v}\n" for v in spiked),
             "b.csv": "found\n" + "ND\n" * 7}
    _, results = _run(make_study(MDL_BODY, files), outside)
    e = results["analytes"][0]["method_detection_limit"]
    # MDL_s is still computed and shown: t(0.99; 6) x SD (scipy's t quantile, hand computation)
    assert e["spiked"] == pytest.approx(stats.t.ppf(0.99, 6) * np.std(spiked, ddof=1), rel=1e-12)
    # from memory: 40 CFR 136 App. B Rev. 2, II(2): a spiked result that is not a numerical result above
    # zero means the spiked samples are repeated at a higher concentration: no MDL, no verdict
    assert e["value"] is None and "5 of 7 spiked results are not above zero" in e["reason"]
    crit = _by_id(results)["method-detection-limit"]
    assert crit["pass"] is None and "not above zero" in crit["note"]
    assert results["analytes"][0]["verdict"] != "pass"


def test_a_mdl_above_the_spike_level_is_not_passed(make_study, outside):
    spiked = [0.9, 1.3, 0.7, 1.5, 1.1, 0.6, 1.4]      # SD 0.34..., MDL_s = 3.143 x SD > 1 (hand computation)
    files = {"calibration.csv": _cal(),
             "s.csv": "found,spike_level\n" + "".join(f"{v},1\n" for v in spiked), "b.csv": "found\n" + "ND\n" * 7}
    _, results = _run(make_study(MDL_BODY.replace("0.05", "5"), files), outside)
    e = results["analytes"][0]["method_detection_limit"]
    mdl_s = stats.t.ppf(0.99, 6) * np.std(spiked, ddof=1)       # scipy t quantile
    assert mdl_s > 1 and e["spiked"] == pytest.approx(mdl_s, rel=1e-12) and e["spike_level"] == 1
    # from memory: 40 CFR 136 App. B: an MDL above the spike level is not determined by those spikes
    assert e["value"] is None and "above the spike level" in e["reason"]
    assert _by_id(results)["method-detection-limit"]["pass"] is None
    # below the spike level the MDL stands and is judged; without the column the null has its reason
    files["s.csv"] = "found,spike_level\n" + "".join(f"{v},5\n" for v in spiked)
    _, results = _run(make_study(MDL_BODY.replace("0.05", "5"), files), outside, "b")
    assert results["analytes"][0]["method_detection_limit"]["value"] == pytest.approx(mdl_s, rel=1e-12)
    assert _by_id(results)["method-detection-limit"]["pass"] is True
    files["s.csv"] = "found\n" + "".join(f"{v}\n" for v in spiked)
    _, results = _run(make_study(MDL_BODY, files), outside, "c")
    assert "no spike level" in _na(results)["method_detection_limit.spike_level"]


def test_a_spike_level_must_be_one_per_analyte(make_study):
    files = {"calibration.csv": _cal(), "s.csv": "found,spike_level\n1,1\n1.2,2\n", "b.csv": "found\nND\n"}
    with pytest.raises(DataError, match=r's.csv, row 3, column "spike_level"'):
        load_study(make_study(MDL_BODY, files))


# ------------------------------------------------------------------ B, C: EP17 limits that detect nothing
EP17_BODY = """\
[calibration]
data = "calibration.csv"
[limit_of_blank]
blanks = "blanks.csv"
low_samples = "low.csv"
purpose = "verification"
"""
OFFSETS = [-1.5, -1.0, -0.7, -0.4, -0.2, 0.0, 0.2, 0.4, 0.7, 1.0]     # invented spread, mean 0


def _ep17_files(blank_centre, blank_sd, low_centre, low_sd, low_nominal=1.0):
    blanks = "sample,found\n" + "".join(f"b{s},{blank_centre + blank_sd * d}\n" for s in (1, 2) for d in OFFSETS)
    low = "sample,found,nominal\n" + "".join(f"L{s},{low_centre + low_sd * d},{low_nominal}\n"
                                             for s in (0, 1) for d in OFFSETS)
    return {"calibration.csv": _cal(), "blanks.csv": blanks, "low.csv": low}


def test_b_lod_fails_when_the_low_level_results_sit_below_the_lob(make_study, outside):
    body = EP17_BODY + "lob_max = 1.2\nlod_max = 1.3\n"
    _, results = _run(make_study(body, _ep17_files(1.0, 0.05, 0.5, 0.05)), outside)
    lod = results["analytes"][0]["limit_of_blank"]["lod"]
    # hand computation: every low-level result (0.425 to 0.55) lies below every blank (0.925 to 1.05)
    assert lod["above_blank"] == [{"lot": "1", "n": 20, "n_above": 0, "fraction": 0.0,
                                   # scipy: smallest k with binom.cdf(k, 20, 0.95) >= 0.05 is 17
                                   "minimum_count": int(stats.binom.ppf(0.05, 20, 0.95)), "passed": False}]
    assert lod["above_blank"][0]["minimum_count"] == 17   # from memory: EP17-A2 sec. 6 table, 85 % of 20
    crit = _by_id(results)
    assert crit["limit-of-blank"]["pass"] is True                      # the LoB itself is a fair estimate
    assert crit["limit-of-detection"]["value"] <= 1.3                  # the value alone would be met ...
    assert crit["limit-of-detection"]["pass"] is False                 # ... but the low samples do not support it
    assert "0 of 20 low-level results above the LoB" in crit["limit-of-detection"]["note"]
    assert results["analytes"][0]["verdict"] == "fail"


def test_b_minimum_count_above_blank_against_scipy_binomial():
    from validator.sector.ep17 import above_blank, minimum_count_above_blank
    for n in (20, 30, 40, 60, 120):
        k = minimum_count_above_blank(n)
        # cross-check: scipy binomial, k is the smallest count with P(X <= k) >= 0.05 under p = 0.95
        assert stats.binom.cdf(k, n, 0.95) >= 0.05 > stats.binom.cdf(k - 1, n, 0.95)
    # hand count: 17 of 20 above 0 pass, 16 do not
    assert above_blank([1.0] * 17 + [-1.0] * 3, 0.0)[0].passed is True
    assert above_blank([1.0] * 16 + [-1.0] * 4, 0.0)[0].passed is False


def test_c_limits_not_above_zero_are_not_applicable(make_study, outside):
    body = EP17_BODY.replace('purpose = "verification"', 'method = "parametric"') + \
        "lob_max = 1.2\nlod_max = 1.3\nloq_max_cv_pct = 50\nloq_max = 2\n"
    _, results = _run(make_study(body, _ep17_files(-1.0, 0.05, -0.5, 0.05, low_nominal=0.5)), outside)
    e = results["analytes"][0]["limit_of_blank"]
    # hand computation: LoB = mean + c_p SD, mean -1.005, < 0; the LoD also below zero
    assert e["lob"]["value"] < 0 and e["lod"]["value"] < 0
    crit = _by_id(results)
    for cid in ("limit-of-blank", "limit-of-detection"):
        assert crit[cid]["pass"] is None and "not a detection capability" in crit[cid]["note"], cid
    # the LoQ floor, the LoD, is not above zero: the LoQ is not judged either (the stated rule LoQ >= LoD)
    assert crit["limit-of-quantitation"]["pass"] is None
    assert results["analytes"][0]["verdict"] == "incomplete"


def test_c_zero_blanks_and_constant_low_samples_pass_nothing(make_study, outside):
    # 20 blanks of 0 from 2 samples, low-level samples constant 0.05 (verification minimum met)
    files = _ep17_files(0.0, 0.0, 0.05, 0.0, low_nominal=0.05)
    body = EP17_BODY + "lob_max = 1.2\nlod_max = 1.3\nloq_max_cv_pct = 20\nloq_max = 2\n"
    _, results = _run(make_study(body, files), outside)
    e = results["analytes"][0]["limit_of_blank"]
    assert e["lob"]["value"] == 0.0                     # rank 19.5 of twenty zeros (hand computation)
    assert e["lod"]["value"] is None and "SD_L = 0" in e["lod"]["reason"]
    assert e["loq"]["value"] is None and e["loq"]["levels"][0]["meets_goal"] is None
    crit = _by_id(results)
    assert all(crit[c]["pass"] is None for c in ("limit-of-blank", "limit-of-detection", "limit-of-quantitation"))
    assert results["analytes"][0]["verdict"] == "incomplete"


def test_c_loq_without_its_lod_floor_is_not_judged(make_study, outside):
    # parametric LoB of blanks all 0 does not exist (SD 0), so neither does the LoD: the LoQ (nominal 1,
    # CV about 5 %) has no floor to be checked against (stated rule: EP17-A2 LoQ >= LoD)
    files = _ep17_files(0.0, 0.0, 1.0, 0.05)
    body = EP17_BODY.replace('purpose = "verification"', 'method = "parametric"') + "loq_max_cv_pct = 20\nloq_max = 2\n"
    _, results = _run(make_study(body, files), outside)
    e = results["analytes"][0]["limit_of_blank"]
    assert e["loq"]["value"] == 1.0 and e["lod"] is None
    crit = _by_id(results)["limit-of-quantitation"]
    assert crit["pass"] is None and "the LoQ is never below the LoD" in crit["note"]


# ------------------------------------------------------------------ D: stability judged on a zero-width interval
STAB_BODY = """\
[calibration]
data = "calibration.csv"
[stability]
data = "stability.csv"
judged_on = "interval"
"""


def test_d_stability_interval_of_identical_results_is_not_judged(make_study, outside):
    files = {"calibration.csv": _cal(), "stability.csv": "condition,nominal,found\n" + "ft,3,3.0\n" * 3}
    _, results = _run(make_study(STAB_BODY, files), outside)
    c = _by_id(results)["stability-ft-3"]
    # stated rule ("not shown is not passed", like precision on main): SD exactly 0 shows no spread
    assert c["pass"] is None and "no spread at all" in c["note"]
    fresh = files | {"stability.csv": "condition,nominal,found\n" + "ft,3,3.0\n" * 3 + "fresh,3,3.0\n" * 3}
    _, results = _run(make_study(STAB_BODY + 'reference = "fresh"\n', fresh), outside, "fresh")
    c = _by_id(results)["stability-ft-3"]
    assert c["pass"] is None and "stored and fresh results show no spread" in c["note"]
    # with spread the interval is judged: t interval by hand, mean 3, SD 0.1, t(0.975; 2) (scipy)
    spread = files | {"stability.csv": "condition,nominal,found\nft,3,2.9\nft,3,3.0\nft,3,3.1\n"}
    _, results = _run(make_study(STAB_BODY, spread), outside, "spread")
    c = _by_id(results)["stability-ft-3"]
    half = 100 * stats.t.ppf(0.975, 2) * 0.1 / math.sqrt(3) / 3
    assert c["value"] == pytest.approx([-half, half], rel=1e-9) and c["pass"] is True


# ------------------------------------------------------------------ E: clear failures must fail
def test_e_dilution_bias_fails_even_with_an_undefined_cv(make_study, outside):
    body = '[calibration]\ndata = "calibration.csv"\n[dilution_integrity]\ndata = "d.csv"\n'
    files = {"calibration.csv": _cal(), "d.csv": "factor,nominal,found\n" + "2,3,0\n" * 5}
    _, results = _run(make_study(body, files), outside)
    crit = _by_id(results)
    # hand computation: mean 0, accuracy 0 %, bias -100 % outside ±15 % (ICH M10 3.2.7, from memory)
    assert crit["dilution-accuracy-2x-3"]["value"] == -100 and crit["dilution-accuracy-2x-3"]["pass"] is False
    assert crit["dilution-cv-2x-3"]["pass"] is None and "mean is zero" in crit["dilution-cv-2x-3"]["note"]
    assert "dilution_integrity.levels.0.cv_percent" in _na(results)
    assert results["analytes"][0]["verdict"] == "fail"
    # identical non-zero results: the accuracy is judged (met), the CV of 0 % is not shown (SD 0)
    files["d.csv"] = "factor,nominal,found\n" + "2,3,1.5\n" * 5
    _, results = _run(make_study(body, files), outside, "flat")
    crit = _by_id(results)
    assert crit["dilution-accuracy-2x-3"]["pass"] is True and crit["dilution-cv-2x-3"]["pass"] is None
    assert "no spread at all" in crit["dilution-cv-2x-3"]["note"]


def test_e_matrix_lot_reading_zero_fails_the_level(make_study, outside):
    body = '[calibration]\ndata = "calibration.csv"\n[matrix_effect]\nlots_data = "lots.csv"\n'
    rows = "".join(f"L{k},3,{v}\n" for k in range(5) for v in (2.9, 3.0, 3.1)) + "L5,3,0\n" * 3
    _, results = _run(make_study(body, {"calibration.csv": _cal(), "lots.csv": "lot,nominal,found\n" + rows}),
                      outside)
    lots = results["analytes"][0]["matrix_effect"]["lots"][0]
    # hand computation: lot L5 mean 0, accuracy 0 %, outside ±15 % (ICH M10 3.2.3, from memory)
    assert lots["lots"][5]["accuracy_percent"] == 0 and lots["lots"][5]["passed"] is False
    assert lots["passed"] is False and _by_id(results)["matrix-lots-3"]["pass"] is False
    assert "CV undefined: the mean is zero" in _na(results)["matrix_effect.lots.0.lots.5.cv_percent"]


# ------------------------------------------------------------------ F: every null of a sector section has its reason
def _uncovered(results):
    from test_numerics_not_applicable import covered, nulls
    out = []
    for analyte in results["analytes"]:
        sector = {k: v for k, v in analyte.items() if k in SECTOR}
        out += [p for p in nulls(sector) if not covered(p, analyte)]
    return out


SECTOR = ("limit_of_blank", "method_detection_limit", "matrix_effect", "carry_over", "selectivity", "stability",
          "dilution_integrity", "reanalysis")


def test_f_every_sector_null_has_its_reason(make_study, outside):
    body = """\
[calibration]
data = "calibration.csv"
[limit_of_blank]
blanks = "blanks.csv"
low_samples = "low.csv"
lob_max = 5
[selectivity]
data = "sel.csv"
[carry_over]
data = "carry.csv"
[reanalysis]
data = "isr.csv"
[dilution_integrity]
data = "d.csv"
[method_detection_limit]
spiked = "s.csv"
blanks = "b.csv"
"""
    files = _ep17_files(0.1, 0.05, 1.0, 0.05)
    files.update({
        "sel.csv": "lot,kind,response\n,lloq,100\n" + "".join(f"L{k},blank,5\n" for k in range(6)),
        "carry.csv": "kind,response\nlloq,100\nblank,3\n",
        "isr.csv": "sample,original,repeat\nS1,0,0\nS2,10,11\nS3,10,10.5\n",
        "d.csv": "factor,nominal,found\n" + "2,3,0\n" * 5,
        "s.csv": "found\n" + "".join(f"{v}\n" for v in (0.9, 1.3, 0.7, 1.5, 1.1, 0.6, 1.4)),
        "b.csv": "found\n" + "ND\n" * 7})
    _, results = _run(make_study(body, files), outside)
    assert _uncovered(results) == [], _uncovered(results)
    # a parametric LoB and a LoQ with one goal: rank and the other goal are null, with their reasons
    body2 = body.replace("lob_max = 5\n", 'lob_max = 5\nmethod = "parametric"\nloq_max_cv_pct = 20\n')
    _, results = _run(make_study(body2, files), outside, "param")
    assert _uncovered(results) == [], _uncovered(results)


def test_f_example_study_nulls_have_reasons(outside):
    from pathlib import Path
    study = Path(__file__).resolve().parent.parent / "example_studies" / "plasma-lcms-bioanalytical" / "study.toml"
    _, results = _run(study, outside)
    assert _uncovered(results) == [], _uncovered(results)


# ------------------------------------------------------------------ G, H: names compared ignoring case; unique ids
@pytest.mark.parametrize("body, name, content, match", [
    ('[selectivity]\ndata = "sel.csv"\n', "sel.csv",
     "lot,kind,response\n,lloq,100\nA,blank,1\na,blank,1\n", r'sel.csv, row 4, column "lot".*"a" and "A" \(row 3\)'),
    ('[matrix_effect]\nlots_data = "lots.csv"\n', "lots.csv",
     "lot,nominal,found\nL1,3,3\nl1,3,3\n", r'lots.csv, row 3, column "lot"'),
    ('[matrix_effect]\nfactor_data = "mf.csv"\n', "mf.csv",
     "lot,analyte_response,internal_standard_response\nneat,1,1\nL1,1,1\nl1,1,1\n", r'mf.csv, row 4, column "lot"'),
    ('[stability]\ndata = "st.csv"\n', "st.csv",
     "condition,nominal,found\nft,3,3\nFT,3,3\n", r'st.csv, row 3, column "condition".*one criterion id'),
    ('[stability]\ndata = "st.csv"\n', "st.csv",
     "condition,nominal,found\nbench top,3,3\nbench-top,3,3\n", r'st.csv, row 3, column "condition"'),
    ('[reanalysis]\ndata = "isr.csv"\n', "isr.csv",
     "sample,original,repeat\nS1,1,1\ns1,1,1\n", r'isr.csv, row 3, column "sample"'),
    ('[limit_of_blank]\nblanks = "bl.csv"\n', "bl.csv", "sample,lot,found\nb,A,0\nb,a,0\n",
     r'bl.csv, row 3, column "lot"'),
    ('[method_detection_limit]\nspiked = "s.csv"\nblanks = "b.csv"\n', "s.csv", "found,batch\n1,B1\n1,b1\n",
     r's.csv, row 3, column "batch"'),
])
def test_g_two_spellings_of_one_name_are_an_error(make_study, body, name, content, match):
    # stated rule (README, "sector characteristics"): lot, sample, batch and condition names compare ignoring
    # case; two spellings of one name for an analyte are an error naming both rows
    files = {"calibration.csv": _cal(), name: content, "b.csv": "found\nND\n"}
    with pytest.raises(DataError, match=match):
        load_study(make_study('[calibration]\ndata = "calibration.csv"\n' + body, files))


def test_g_stripped_and_same_case_names_are_one_lot(make_study, outside):
    # " A" and "A " are the same lot (cells are stripped): one lot, not two (hand count)
    body = '[calibration]\ndata = "calibration.csv"\n[selectivity]\ndata = "sel.csv"\nmin_lots = 2\n'
    files = {"calibration.csv": _cal(), "sel.csv": "lot,kind,response\n,lloq,100\n A,blank,1\nA ,blank,1\n"}
    _, results = _run(make_study(body, files), outside)
    sel = results["analytes"][0]["selectivity"]
    assert sel["n_lots"] == 1 and _by_id(results)["selectivity"]["pass"] is None


def test_h_criterion_ids_are_unique_for_every_characteristic(make_study, outside):
    from pathlib import Path
    body = """\
[calibration]
data = "calibration.csv"
[limit_of_blank]
blanks = "blanks.csv"
low_samples = "low.csv"
lob_max = 5
lod_max = 5
loq_max = 5
loq_max_cv_pct = 20
[method_detection_limit]
spiked = "s.csv"
blanks = "b.csv"
mdl_max = 5
[matrix_effect]
lots_data = "lots.csv"
factor_data = "mf.csv"
solvent_data = "solvent.csv"
judge_slope_ratio = true
[carry_over]
data = "carry.csv"
[selectivity]
data = "sel.csv"
[stability]
data = "st.csv"
[dilution_integrity]
data = "d.csv"
[reanalysis]
data = "isr.csv"
"""
    files = _ep17_files(0.1, 0.05, 1.0, 0.05)
    # nominals 3 and 3.0000001 (":g" writes both as 3), conditions that differ in words
    files.update({
        "s.csv": "found\n" + "".join(f"{v}\n" for v in (0.9, 1.3, 0.7, 1.5, 1.1, 0.6, 1.4)),
        "b.csv": "found\n" + "ND\n" * 7,
        "lots.csv": "lot,nominal,found\n" + "".join(f"L{k},{n},{n}\n" for k in range(3) for n in (3, 3.0000001)),
        "mf.csv": "lot,analyte_response,internal_standard_response\nneat,1,1\nL1,1,1\nL2,1.1,1\n",
        "solvent.csv": _cal(),
        "carry.csv": "kind,response,internal_standard_response\nlloq,100,10\nblank,3,0.1\n",
        "sel.csv": "lot,kind,response\n,lloq,100\n" + "".join(f"L{k},blank,5\n" for k in range(6)),
        "st.csv": "condition,nominal,found\n" + "".join(f"{c},{n},{n}\n" for c in ("ft", "bench top", "冷凍")
                                                         for n in (3, 3.0000001) for _ in range(3)),
        "d.csv": "factor,nominal,found\n" + "".join(f"{f},{n},{n / f}\n" for f in (2, 2.0000001)
                                                      for n in (3, 3.0000001) for _ in range(5)),
        "isr.csv": "sample,original,repeat\nS1,10,11\n"})
    _, results = _run(make_study(body, files), outside)
    ids = [c["id"] for c in results["analytes"][0]["criteria"]]
    assert len(ids) == len(set(ids)), sorted(i for i in ids if ids.count(i) > 1)
    # every sector section judged something here, so every one of them was checked for its ids
    assert {i.split("-")[0] for i in ids} >= {"limit", "method", "matrix", "carry", "selectivity", "stability",
                                               "dilution", "incurred"}
    assert "stability-3-0000001" not in ids and "stability-ft-3.0000001" in ids and "stability-冷凍-3" in ids
    root = Path(__file__).resolve().parent.parent / "example_studies"
    for example in ("plasma-lcms-bioanalytical", "anions-drinking-water"):
        _, results = _run(root / example / "study.toml", outside, example)
        for analyte in results["analytes"]:
            ids = [c["id"] for c in analyte["criteria"]]
            assert len(ids) == len(set(ids)), example


# ------------------------------------------------------------------ I: matrix factors of extreme magnitude
def test_i_normalised_matrix_factor_cv_at_extreme_magnitude():
    from fractions import Fraction
    from validator.sector.matrix_effect import normalised_matrix_factor
    rel = [1.0, 1.1, 0.9, 1.05, 0.95, 1.0]
    # analyte 1e50 x rel in matrix over 1e-50 neat, IS 1e-50 in matrix over 1e50 neat: factors 1e200 x rel
    res = normalised_matrix_factor([1e50 * r for r in rel], [1e-50] * 6, [f"L{k}" for k in range(6)],
                                   [1e-50], [1e50])
    # exact arithmetic (fractions): the CV does not depend on the scale, so it is that of rel
    fr = [Fraction(r) for r in rel]
    mean = sum(fr) / 6
    var = sum((x - mean) ** 2 for x in fr) / 5
    assert res.cv_percent == pytest.approx(100 * math.sqrt(var) / float(mean), rel=1e-12)
    assert res.mean == pytest.approx(1e200 * float(mean), rel=1e-12) and res.passed is True
    # one lot: the true reason (one lot), not an overflow or a count of six
    one = normalised_matrix_factor([1.0, 1.0], [1.0, 1.0], ["L1", "L1"], [1.0], [1.0], min_lots=2)
    assert one.cv_percent is None and "1 lot: the CV across lots needs at least two" in one.reason


# ------------------------------------------------------------------ J: ISR size under the ICH M10 preset
ISR_HEAD = ('[study]\nid = "T"\ntitle = "t"\nconcentration_unit = "ng/mL"\nresponse_unit = "a"\n'
            'guideline = "ich-m10"\n')


def test_j_isr_under_ich_m10_needs_its_size(make_study, outside):
    from validator.sector.bioanalytical import reanalysis_sample_count
    body = '[calibration]\ndata = "calibration.csv"\n[reanalysis]\ndata = "isr.csv"\n'
    files = {"calibration.csv": _cal(), "isr.csv": "sample,original,repeat\nS1,10,11\n"}
    _, results = _run(make_study(body, files, head=ISR_HEAD), outside)
    c = _by_id(results)["incurred-sample-reanalysis"]
    assert c["pass"] is None and "study_samples" in c["note"]
    # 1 judged sample with 400 study samples: ICH M10 (from memory, sec. 5) asks for 10 % = 40
    assert reanalysis_sample_count(400) == 40 and reanalysis_sample_count(1200) == 110   # hand: 100 + 10
    _, results = _run(make_study(body + "study_samples = 400\n", files, head=ISR_HEAD), outside, "size")
    e = results["analytes"][0]["reanalysis"]
    assert e["required_samples"] == 40 and e["passed"] is None and "fewer than the 40" in e["reason"]
    # 10 study samples: 1 reanalysed sample is the M10 size; judged (difference 100 x 1/10.5 = 9.5 %, hand)
    _, results = _run(make_study(body + "study_samples = 10\n", files, head=ISR_HEAD), outside, "ten")
    assert _by_id(results)["incurred-sample-reanalysis"]["pass"] is True
    # without a preset and without study_samples the verdict stands, with sector2's note (the null has its reason)
    from conftest import STUDY_HEAD
    _, results = _run(make_study(body, files, head=STUDY_HEAD), outside, "plain")
    assert _by_id(results)["incurred-sample-reanalysis"]["pass"] is True
    assert "study_samples" in _na(results)["reanalysis.study_samples"]


# ------------------------------------------------------------------ K: presets say what they did and did not do
def test_k_sante_matrix_effect_is_reported_not_judged_and_says_why(make_study, outside):
    head = ISR_HEAD.replace("ich-m10", "sante-11312-2021")
    body = '[calibration]\ndata = "calibration.csv"\n[matrix_effect]\nsolvent_data = "solvent.csv"\n'
    # solvent slope half the matrix-matched slope (2.0 in conftest's calibration): ME about +100 %
    solvent = "concentration,response\n" + "".join(f"{x},{0.01 + 1.0 * x + d}\n" for x, d in
                                                   [(1, 0.01), (2, -0.01), (4, 0.02), (8, -0.02), (16, 0.01)])
    _, results = _run(make_study(body, {"calibration.csv": _cal(), "solvent.csv": solvent}, head=head), outside)
    me = results["analytes"][0]["matrix_effect"]
    assert me["slope_ratio"]["statistic"] > 90 and me["slope_ratio"]["beyond_limit"] is True
    assert me["slope_ratio_judged"] is False and "reported, not judged" in me["slope_ratio_note"]
    assert "matrix-effect-slope-ratio" not in _by_id(results)
    assert results["guideline"]["note"] == ""
    # judged on request: the same ME fails (stated rule: |ME %| <= limit_pct)
    _, results = _run(make_study(body + "judge_slope_ratio = true\n",
                                 {"calibration.csv": _cal(), "solvent.csv": solvent}, head=head), outside, "judged")
    assert _by_id(results)["matrix-effect-slope-ratio"]["pass"] is False
    assert results["analytes"][0]["matrix_effect"]["slope_ratio_note"] == ""


def test_k_a_preset_that_supplies_nothing_says_so(make_study, outside):
    head = ISR_HEAD.replace("ich-m10", "clsi-ep17")
    body = '[calibration]\ndata = "calibration.csv"\n[reanalysis]\ndata = "isr.csv"\n'
    _, results = _run(make_study(body, {"calibration.csv": _cal(), "isr.csv": "sample,original,repeat\nS,1,1\n"},
                                 head=head), outside)
    g = results["guideline"]
    assert g["values"] == [] and "supplied nothing" in g["note"] and "[limit_of_blank]" in g["note"]


def test_k_readme_lists_every_preset_key():
    from pathlib import Path
    from validator.sector.presets import PRESETS
    readme = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")
    table = readme[readme.index("| preset | keys it sets"):]
    table = table[:table.index("\n\n")]
    for preset in PRESETS.values():
        row = next(line for line in table.splitlines() if line.startswith(f"| `{preset.name}`"))
        for pv in preset.values:
            section, key = pv.key.split(".")
            assert f"`{pv.key}`" in row or (section in row and f"`.{key}`" in row), pv.key


# ------------------------------------------------------------------ L: min_lots below 2 refused
def test_l_matrix_min_lots_below_two_is_refused(make_study):
    body = '[calibration]\ndata = "calibration.csv"\n[matrix_effect]\nlots_data = "lots.csv"\nmin_lots = 1\n'
    files = {"calibration.csv": _cal(), "lots.csv": "lot,nominal,found\nL1,3,3\n"}
    with pytest.raises(StudyError) as info:
        load_study(make_study(body, files))
    # stated rule: the CV across lots needs two lots (README, [matrix_effect]); the message names key and value
    assert "key matrix_effect.min_lots: must be 2 <= min_lots <= 10000; got 1" in str(info.value)


def test_b_dossier_says_why_the_lod_fails(make_study, outside):
    body = EP17_BODY + "lob_max = 1.2\nlod_max = 1.3\n"
    out = outside / "html"
    main(["run", str(make_study(body, _ep17_files(1.0, 0.05, 0.5, 0.05))), "--out", str(out), "--format", "json,html"])
    html = (out / "dossier.html").read_text(encoding="utf-8")
    assert "lot 1: 0 of 20 results above the LoB, fewer than the 17 needed" in html
