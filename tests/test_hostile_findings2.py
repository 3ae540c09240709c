"""Findings of the second hostile black-box run (notes: FINDINGS.md numbers), each kept as a test.

The rules are the README's and the formulas page's (common practice, no published source, unless
a test names one); expected numbers are hand computations from the formula beside them.
"""

from __future__ import annotations

import json
import shutil
from fractions import Fraction

import numpy as np
import pytest

from conftest import CALIBRATION, REPO
from validator._common import LIMIT_RELATIVE_TOLERANCE, no_relative_sd, not_above, not_below
from validator.characteristics.precision.analysis import assess_precision_level, precision_criteria
from validator.characteristics.recovery.analysis import assess_recovery
from validator.characteristics.working_range.analysis import LoqLevel, verify_loq
from validator.cli import main
from validator.criteria import at_least, at_most, interval_within
from validator.sector.bioanalytical import carry_over, dilution_integrity, incurred_sample_reanalysis, stability
from validator.sector.ep17 import limit_of_quantitation
from validator.sector.matrix_effect import lot_accuracy

PLASMA = REPO / "example_studies" / "plasma-lcms-bioanalytical"


def _run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _criteria(results: dict) -> dict:
    return {c["id"]: c for a in results["analytes"] for c in a["criteria"]}


# ----------------------------------------------------------------------------- 9: RSD of a mean <= 0
PRECISION_AROUND_ZERO = ("level,series,found\n0.1,a,0.05\n0.1,a,-0.30\n0.1,b,0.20\n0.1,b,-0.10\n"
                         "0.1,c,-0.25\n0.1,c,0.15\n")


def test_precision_with_a_negative_mean_is_not_applicable_never_met(make_study, outside, capsys):
    # FINDINGS 9: results scattered +/-0.3 around a nominal 0.1 gave RSD -598 % "<= 5 %: met" and PASS
    study = make_study(body='[calibration]\ndata = "calibration.csv"\n[precision]\ndata = "precision.csv"\n'
                            'repeatability_rsd_max_pct = 5\nintermediate_rsd_max_pct = 8\n',
                       files={"calibration.csv": CALIBRATION, "precision.csv": PRECISION_AROUND_ZERO})
    code, out, err = _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    r = json.loads((outside / "o" / "results.json").read_text())
    level = r["analytes"][0]["precision"]["levels"][0]
    # hand computation: mean = (0.05 - 0.30 + 0.20 - 0.10 - 0.25 + 0.15) / 6 = -0.25 / 6 = -0.041666...
    assert level["mean"] == pytest.approx(-0.25 / 6, rel=1e-12)
    assert level["repeatability_rsd_pct"] is None and level["intermediate_rsd_pct"] is None
    crit = _criteria(r)
    for cid in ("repeatability-rsd-0.1", "intermediate-rsd-0.1"):
        assert crit[cid]["pass"] is None and crit[cid]["value"] is None
        assert crit[cid]["note"].startswith("not applicable: the mean is negative (-0.04167), so an RSD (CV) "
                                            "is not meaningful")
    assert r["verdict"] != "pass" and code != 0, (out, err)


def test_all_negative_results_give_no_rsd():
    # FINDINGS 9, second case: found -1.0, -1.02, -0.99, -1.01 at level 1 gave RSD -1.4 % "met"
    lv = assess_precision_level(1.0, [-1.0, -1.02, -0.99, -1.01], ["a", "a", "b", "b"])
    assert lv.mean == pytest.approx(-1.005, rel=1e-12)        # hand computation: -4.02 / 4
    assert lv.repeatability_rsd_pct is None and lv.intermediate_rsd_pct is None
    crits = precision_criteria(lv, (5.0, 8.0))
    assert [c.passed for c in crits] == [None, None]
    assert all("the mean is negative (-1.005)" in c.note for c in crits)


def test_nested_design_and_upper_bounds_give_no_rsd_for_a_negative_mean():
    lv = assess_precision_level(1.0, [-1.0, -1.02, -0.99, -1.01, -1.0, -0.98, -1.03, -1.0],
                                list("aabbccdd"), design=["day", "run"],
                                factors=[["d1"] * 4 + ["d2"] * 4, ["r1", "r1", "r2", "r2"] * 2])
    (r_rsd, r_up, r_why), (i_rsd, i_up, i_why) = lv.decisive
    assert (r_rsd, r_up, i_rsd, i_up) == (None, None, None, None)
    assert "the mean is negative" in r_why and "the mean is negative" in i_why
    for on_intervals in (False, True):
        assert [c.passed for c in precision_criteria(lv, (5.0, 8.0), on_intervals=on_intervals)] == [None, None]
    bounds = assess_precision_level(1.0, [-1.0, -1.02, -0.99, -1.01], ["a", "a", "b", "b"], bounds=True)
    assert bounds.rsd_upper_bounds.repeatability_rsd_upper_pct is None
    assert bounds.rsd_upper_bounds.intermediate_rsd_upper_pct is None


def test_a_precision_claim_needs_a_positive_mean():
    lv = assess_precision_level(1.0, [-1.0, -1.02, -0.99, -1.01], ["a", "a", "b", "b"], claims=(2.0, 3.0))
    assert all(c.verified is None and "the mean is negative" in c.reason for c in lv.claims)


def test_recovery_rsd_needs_a_positive_mean_recovery():
    rec = assess_recovery(np.array([1.0, 1.0, 1.0]), np.array([-0.1, -0.12, -0.11]))
    level = rec.levels[0]
    assert level.mean_pct == pytest.approx(-11.0, rel=1e-12)   # hand computation: 100 x mean(found) / added
    assert level.rsd_pct is None and "the mean recovery is negative" in level.reason


def test_loq_check_with_a_level_without_rsd_is_not_applicable():
    # one level up to 2 x LOQ with an RSD of 3 % (met) and one without an RSD (its mean is negative): the
    # LOQ is not shown at the second, so the check is not met either (not shown is not passed)
    class P:
        def __init__(self, level, rsd):
            self.level, self.repeatability_rsd_pct = level, rsd
    check = verify_loq(1.0, [P(1.0, 3.0), P(2.0, None)], [], 20.0)
    assert check.passed is None and check.reason == "no RSD exists at precision level 2 (see its section)"
    assert check.levels[1] == LoqLevel("precision", 2.0, None, None)
    # a level that exceeds the maximum fails whatever the others show
    assert verify_loq(1.0, [P(1.0, 25.0), P(2.0, None)], [], 20.0).passed is False
    assert verify_loq(1.0, [P(1.0, 3.0), P(2.0, 20.0)], [], 20.0).passed is True


@pytest.mark.parametrize("mean, words", [(0.0, "is zero"), (-2.5, "is negative (-2.5)"), (None, "does not exist")])
def test_no_relative_sd_reasons(mean, words):
    assert words in no_relative_sd(mean)
    assert no_relative_sd(1e-300) == ""


def test_sector_cvs_need_a_positive_mean():
    # dilution: a negative mean (accuracy far off) fails on accuracy; its CV is not judged and says why
    d = dilution_integrity([-10.0, -10.5, -9.5, -10.2, -9.8], 10, 100.0)
    assert d.cv_percent is None and d.cv_passed is None and "the mean is negative" in d.cv_reason
    assert d.accuracy_passed is False and d.passed is False
    # matrix lots: a lot whose mean is negative has no CV
    lots = lot_accuracy([-1.0, -1.1, -0.9] * 6, [f"L{i}" for i in range(6) for _ in range(3)], 1.0,
                        max_bias_percent=1000.0)
    assert all(lv.cv_percent is None and lv.passed is None and "the mean is negative" in lv.reason
               for lv in lots.lots)
    assert lots.passed is None
    # EP17 LoQ precision goal: a level whose mean is negative does not meet a CV goal (CV = SD / |mean|
    # would call -1.0, -1.02, -0.99, -1.01 precise to 1.4 %)
    loq = limit_of_quantitation([-1.0, -1.02, -0.99, -1.01], ["s"] * 4, [1.0] * 4, max_cv_percent=20.0)
    assert loq.levels[0].cv_percent is None and loq.levels[0].meets_goal is None
    assert "the mean is negative" in loq.levels[0].reason and loq.value is None


# ----------------------------------------------------------------------------- 2, 3, 4: on the limit
def test_exactly_on_the_limit_through_binary_floating_point_is_on_the_limit():
    # exact arithmetic: 100 x 0.14 / 0.7 = 20 and 100 (2.55 / 3 - 1) = -15
    assert Fraction("0.14") * 100 / Fraction("0.7") == 20
    assert 100 * (Fraction("2.55") / 3 - 1) == -15
    carry = 100.0 * 0.14 / 0.7
    dev = 100.0 * (2.55 / 3 - 1)
    assert carry > 20 and dev < -15        # binary floating point lands beyond the limit
    assert at_most(carry, 20) is True and interval_within([dev, dev], [-15, 15]) is True
    assert at_least(100.0 * (0.7 / 0.14) / 25 - 1e-14, 20) is True     # hand computation: 100 x 5 / 25 = 20
    # the rule is relative 1e-9 of the limit (this tool's choice, no published source): beyond it, beyond
    assert LIMIT_RELATIVE_TOLERANCE == 1e-9
    assert at_most(20 * (1 + 2e-9), 20) is False and at_most(20.0001, 20) is False
    assert at_least(20 * (1 - 2e-9), 20) is False
    assert not_above(0.0, 0.0) and not not_above(1e-300, 0.0)          # a limit of 0 is compared exactly
    assert not_below(np.array([19.99999999999, 19.9]), 20).tolist() == [True, False]


def test_carry_over_exactly_at_20_percent_is_met():
    # FINDINGS 2: LLOQ 0.7, blank 0.14: 100 x 0.14 / 0.7 = 20 % (hand computation) "at most 20 %"
    c = carry_over([0.14], [0.7])
    assert c.max_analyte_percent == pytest.approx(20.0, rel=1e-15) and c.passed is True


def test_stability_exactly_at_minus_15_percent_is_met():
    # FINDINGS 3: 3 x (nominal 3, found 2.55): deviation 100 (2.55 / 3 - 1) = -15 % (hand computation)
    s = stability([2.55, 2.55, 2.55], nominal=3.0)
    assert s.deviation_percent == pytest.approx(-15.0, rel=1e-15) and s.passed is True


def test_isr_difference_exactly_20_percent_is_within():
    # FINDINGS 4: original 0.9, repeat 1.1: 100 (1.1 - 0.9) / 1.0 = 20 % (hand computation) "within 20 %"
    isr = incurred_sample_reanalysis([0.9] * 3, [1.1] * 3, sample=["A", "B", "C"])
    assert all(s.within for s in isr.samples) and isr.n_within == 3 and isr.passed is True


def test_on_the_limit_end_to_end(make_study, outside, capsys):
    study = make_study('[calibration]\ndata = "calibration.csv"\n[carry_over]\ndata = "carry-over.csv"\n'
                       '[stability]\ndata = "stability.csv"\n',
                       {"calibration.csv": CALIBRATION,
                        "carry-over.csv": "kind,response,internal_standard_response\nlloq,0.7,1000\nblank,0.14,10\n",
                        "stability.csv": "condition,nominal,found\n" + "bench,3,2.55\n" * 3})
    code, _, err = _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    crit = _criteria(json.loads((outside / "o" / "results.json").read_text()))
    assert crit["carry-over"]["pass"] is True and crit["stability-bench-3"]["pass"] is True, err
    assert code == 0, err


# ----------------------------------------------------------------------------- 13: zero spread
def test_identical_matrix_factors_are_not_applicable_like_other_zero_spreads():
    # FINDINGS 13: six lots with bit-identical analyte and IS areas gave a matrix-factor CV of 0 % "met",
    # while a dilution CV of identical results is not applicable (not shown is not passed)
    from validator.sector.matrix_effect import normalised_matrix_factor
    lots = [f"donor-{i}" for i in range(1, 7)]
    mf = normalised_matrix_factor([140187.0] * 6, [234037.0] * 6, lots, [149782.0], [244869.0])
    assert mf.cv_percent == 0.0 and mf.passed is None
    assert mf.reason.startswith("the IS-normalised matrix factors of all 6 lots are identical (SD exactly 0)")
    d = dilution_integrity([200.0] * 5, 10, 2000.0)
    assert d.cv_percent == 0.0 and d.cv_passed is None and d.passed is None
    # a factor that varies is judged: CV of (1, 1.1) x scale, hand computation 100 x 0.0707107 / 1.05
    mf = normalised_matrix_factor([100.0, 110.0], [100.0, 100.0], ["a", "b"], [100.0], [100.0], min_lots=2)
    assert mf.cv_percent == pytest.approx(100 * np.std([1.0, 1.1], ddof=1) / 1.05, rel=1e-12)
    assert mf.passed is True


def test_matrix_factor_cv_end_to_end_not_applicable(tmp_path, outside, capsys):
    folder = tmp_path / "p"
    shutil.copytree(PLASMA, folder)
    (folder / "matrix-factor.csv").write_text("lot,analyte_response,internal_standard_response\n"
                                              "neat,149782,244869\n"
                                              + "".join(f"donor-0{i},140187,234037\n" for i in range(1, 7)),
                                              encoding="utf-8")
    _run(capsys, "run", folder / "study.toml", "--out", outside / "o", "--format", "json")
    crit = _criteria(json.loads((outside / "o" / "results.json").read_text()))["matrix-factor-cv"]
    assert crit["pass"] is None and crit["value"] == 0.0
    assert crit["note"].startswith("not applicable: the IS-normalised matrix factors of all 6 lots are identical")


# ----------------------------------------------------------------------------- 14: negative blank areas
@pytest.mark.parametrize("file, content, row, column, value", [
    ("carry-over.csv", "kind,response,internal_standard_response\nlloq,3700,257266\nlloq,3700,257266\n"
                       "blank,-500,1410\n", 4, "response", "-500"),
    ("carry-over.csv", "kind,response,internal_standard_response\nlloq,3700,257266\nblank,5,-1\n",
     3, "internal_standard_response", "-1"),
    ("selectivity.csv", "lot,kind,response\n,lloq,3700\n" + "".join(f"L{i},blank,10\n" for i in range(5))
     + "L5,blank,-0.5\n", 8, "response", "-0.5"),
    ("matrix-factor.csv", "lot,analyte_response,internal_standard_response\nneat,100,100\nL1,-3,100\n",
     3, "analyte_response", "-3"),
])
def test_negative_responses_in_sector_files_are_refused(make_study, outside, capsys, file, content, row, column,
                                                        value):
    # FINDINGS 14: a blank area of -500 gave carry-over -13.5 % "met"; run exports refuse negative areas
    table = {"carry-over.csv": "[carry_over]\ndata = \"carry-over.csv\"\n",
             "selectivity.csv": "[selectivity]\ndata = \"selectivity.csv\"\n",
             "matrix-factor.csv": "[matrix_effect]\nfactor_data = \"matrix-factor.csv\"\n"}[file]
    study = make_study('[calibration]\ndata = "calibration.csv"\n' + table,
                       {"calibration.csv": CALIBRATION, file: content})
    code, _, err = _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    assert (code, err) == (2, f'validator: error: {file}, row {row}, column "{column}": {column} {value} is '
                              "negative: a response (peak area) cannot be below zero\n")


# ----------------------------------------------------------------------------- 8: matrix effect in the summary


def _matrix_effect_study(make_study, judged: str = "", guideline: bool = True):
    # solvent slope 3.3 x the matrix slope: ME % = 100 (1/3.3 - 1) = -69.7 % (hand computation)
    solvent = "concentration,response\n" + "".join(f"{x},{3.3 * 2.0 * x + 0.01}\n" for x in (1, 2, 4, 8, 16))
    head = ('[study]\nid = "G-1"\ntitle = "t"\nconcentration_unit = "ng/mL"\nresponse_unit = "ratio"\n'
            + ('guideline = "sante-11312-2021"\n' if guideline else ""))
    body = ('[calibration]\ndata = "calibration.csv"\n[matrix_effect]\nsolvent_data = "solvent.csv"\n'
            + ("" if guideline else "limit_pct = 20\n") + judged)
    return make_study(body=body, head=head, files={"calibration.csv": CALIBRATION, "solvent.csv": solvent})


def test_a_matrix_effect_beyond_the_preset_limit_is_a_summary_remark(make_study, outside, capsys):
    # FINDINGS 8: under the SANTE preset ME % of -70 % gave PASS and the summary said nothing
    from validator.report.summary import remarks
    code, _, err = _run(capsys, "run", _matrix_effect_study(make_study), "--out", outside / "o",
                        "--format", "json,html")
    r = json.loads((outside / "o" / "results.json").read_text())
    sr = r["analytes"][0]["matrix_effect"]["slope_ratio"]
    # hand computation from the formula ME % = 100 (b_matrix / b_solvent - 1), about 100 (1/3.3 - 1) = -69.7 %
    assert sr["statistic"] == pytest.approx(100 * (sr["slope_matrix"] / sr["slope_solvent"] - 1), rel=1e-12)
    assert sr["statistic"] == pytest.approx(100 * (1 / 3.3 - 1), abs=0.05) and sr["beyond_limit"] is True
    texts = [m.text for m in remarks(r["analytes"][0], "ng/mL", r.get("guideline")) if m.kind == "matrix-effect-beyond-limit"]
    assert texts == ['the matrix effect ME % = -69.7 % (slope in matrix / slope in solvent − 1) lies beyond ±20 %, '
                     'the SANTE/11312/2021 preset\'s limit (guideline = "sante-11312-2021"; SANTE/11312/2021, matrix '
                     'effects (sec. D, calibration), from memory): beyond it SANTE/11312/2021 calls for matrix-matched '
                     'calibration (or another calibration that compensates the effect), as quantification against '
                     'solvent standards would be biased. It is reported, not judged (judge_slope_ratio = false), so '
                     'the verdict does not depend on it: confirm that samples are quantified against the '
                     'matrix-matched [calibration], or set judge_slope_ratio = true.']
    summary_page = (outside / "o" / "dossier.html").read_text(encoding="utf-8").split('id="remarks"')[1]
    assert "the matrix effect ME % = -69.7 %" in summary_page.split("</ul>")[0]


def test_a_judged_matrix_effect_remark_names_its_criterion(make_study, outside, capsys):
    from validator.report.summary import remarks
    _run(capsys, "run", _matrix_effect_study(make_study, "judge_slope_ratio = true\n", guideline=False),
         "--out", outside / "o", "--format", "json")
    r = json.loads((outside / "o" / "results.json").read_text())
    (text,) = [m.text for m in remarks(r["analytes"][0], "ng/mL", r.get("guideline"))
               if m.kind == "matrix-effect-beyond-limit"]
    assert "the study's limit ([matrix_effect] limit_pct): beyond it quantification against solvent" in text
    assert text.endswith("It is judged (judge_slope_ratio = true): criterion matrix-effect-slope-ratio, NOT MET.")


# ----------------------------------------------------------------------------- 5: empty cells of a one-column file
MDL_SPIKED = "found\n0.05\n0.06\n0.04\n0.055\n0.045\n0.06\n0.05\n"
MDL_BODY = ('[calibration]\ndata = "calibration.csv"\n[method_detection_limit]\nspiked = "mdl-spiked.csv"\n'
            'blanks = "mdl-blanks.csv"\nmdl_max = 0.05\n')


@pytest.mark.parametrize("blanks", ["found\n0.02\n\n0.03\n\n0.05\n", "found\n0.02\nND\n0.03\nND\n0.05\n",
                                    "found\n0.02\n\n0.03\n\n0.05\n\n\n"])
def test_empty_lines_of_a_one_column_blank_file_are_results_without_a_number(make_study, outside, capsys, blanks):
    # FINDINGS 5: the two empty results were dropped as blank lines: n 3, rule "mean + t s", MDL 0.1397 not met
    study = make_study(body=MDL_BODY, files={"calibration.csv": CALIBRATION, "mdl-spiked.csv": MDL_SPIKED,
                                             "mdl-blanks.csv": blanks})
    _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    mdl = a["method_detection_limit"]
    # 40 CFR 136 Appendix B Rev. 2 (as the README reads it): with blanks that give no numerical result,
    # MDL_b is the highest blank result when there are at most 100: here 0.05 of 5 blanks
    assert (mdl["n_blanks"], mdl["n_blanks_numerical"], mdl["blank_rule"]) == (5, 3, "highest blank")
    assert mdl["blank"] == 0.05
    assert next(c for c in a["criteria"] if c["id"] == "method-detection-limit")["pass"] is True


def test_one_column_files_keep_interior_empty_lines_as_rows():
    from validator.inputs.tables import read_table
    t = read_table(b"found\n1\n\n2\n  \n3\n\n\n", "f.csv", required=("found",))
    assert t.columns["found"] == ["1", "", "2", "", "3"] and t.rows == (2, 3, 4, 5, 6)
    # a file of two columns still skips blank lines (an empty line there is not one cell)
    t = read_table(b"a,b\n1,2\n\n3,4\n", "f.csv", required=("a", "b"))
    assert t.columns["a"] == ["1", "3"] and t.rows == (2, 4)


def test_one_column_sheets_keep_interior_empty_rows(tmp_path):
    import openpyxl
    from validator.inputs.workbook import read_workbook
    wb = openpyxl.Workbook()
    ws = wb.active
    for row, value in ((1, "found"), (2, 0.02), (4, 0.03), (6, 0.05)):
        ws.cell(row, 1, value)
    ws.cell(5, 1, None)
    path = tmp_path / "b.xlsx"
    wb.save(path)
    t = read_workbook(path.read_bytes(), "b.xlsx", required=("found",))
    assert t.columns["found"] == ["0.02", "", "0.03", "", "0.05"] and t.rows == (2, 3, 4, 5, 6)


# ----------------------------------------------------------------------------- 6: lots typed several ways
def _load(study):
    from validator.inputs.loading import load_study
    return load_study(study)


@pytest.mark.parametrize("body, name, content, row, value, first", [
    ('[selectivity]\ndata = "sel.csv"\n', "sel.csv",
     "lot,kind,response\n,lloq,3995\n" + "".join(f"{lot},blank,121\n" for lot in
                                                ("d1", "d 1", "d-1", "d_1", "d.1", "d1.")), 4, "d 1", "d1"),
    ('[matrix_effect]\nlots_data = "lots.csv"\n', "lots.csv", "lot,nominal,found\nP-1,3,3\nP1,3,3\n",
     3, "P1", "P-1"),
    ('[matrix_effect]\nfactor_data = "mf.csv"\n', "mf.csv",
     "lot,analyte_response,internal_standard_response\nneat,1,1\nL 1,1,1\nl1.,1,1\n", 4, "l1.", "L 1"),
    ('[limit_of_blank]\nblanks = "bl.csv"\n', "bl.csv", "sample,lot,found\nb,lot_A,0\nb,LOT-A,0\n",
     3, "LOT-A", "lot_A"),
])
def test_lot_names_differing_only_in_case_spaces_or_punctuation_are_one_lot(make_study, body, name, content,
                                                                           row, value, first):
    # FINDINGS 6: six spellings of one donor counted as the 6 lots ICH M10 asks for (common practice, no
    # published source: lots are compared on their letters and digits)
    from validator.errors import DataError
    files = {"calibration.csv": CALIBRATION, name: content}
    with pytest.raises(DataError) as info:
        _load(make_study('[calibration]\ndata = "calibration.csv"\n' + body, files))
    assert str(info.value) == (f'{name}, row {row}, column "lot": lot "{value}" and "{first}" (row {row - 1}) differ '
                               "only in letter case, spaces or punctuation (one lot typed two ways would count twice "
                               "towards the minimum number of lots): names are compared ignoring case, spaces and "
                               "punctuation, so they would be one lot; write it one way")


def test_lots_one_character_apart_stay_distinct(make_study, outside, capsys):
    # "d1" and "d2" are two donors (unlike sample ids, lots one character apart are not suspicious)
    from validator.inputs.sector_names import lot_key
    assert [lot_key(s) for s in ("d1", "d 1", "D-1", "d_1", "d.1", "d1.")] == ["d1"] * 6
    assert lot_key("d1") != lot_key("d2")
    sel = "lot,kind,response\n,lloq,3995\n" + "".join(f"d{i},blank,121\n" for i in range(1, 7))
    study = make_study('[calibration]\ndata = "calibration.csv"\n[selectivity]\ndata = "sel.csv"\n',
                       {"calibration.csv": CALIBRATION, "sel.csv": sel})
    _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    assert a["selectivity"]["n_lots"] == 6
