"""Findings of a hostile test run against the command line, each kept as a test.

Every expected message is our own wording; the rules are the README's
(common practice, no published source).
"""

from __future__ import annotations

import json
import shutil

import pytest

from conftest import CALIBRATION, REPO, STUDY_HEAD
from validator.cli import main

MAINTENANCE = REPO / "example_studies" / "anions-after-maintenance"


def _run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_revalidation_purpose_needs_its_section(make_study, capsys):
    # a re-validation that names no previous run would compare nothing and pass
    study = make_study(head=STUDY_HEAD + 'purpose = "revalidation"\n')
    code, _, err = _run(capsys, "check", study)
    assert (code, err) == (2, f'validator: error: {study}, line 6, key study.purpose: purpose = "revalidation" '
                              'needs a [revalidation] section naming the previous results.json (previous = "..."); '
                              "without it nothing would be compared\n")


def test_previous_results_in_another_response_unit_are_refused(tmp_path, outside, capsys):
    folder = tmp_path / "m"
    shutil.copytree(MAINTENANCE, folder)
    prev = json.loads((folder / "previous-results.json").read_text(encoding="utf-8"))
    prev["study"]["response_unit"] = "mAU"
    (folder / "previous-results.json").write_text(json.dumps(prev), encoding="utf-8")
    code, _, err = _run(capsys, "run", folder / "study.toml", "--out", outside / "o", "--format", "json")
    assert (code, err) == (2, 'validator: error: previous-results.json: uses response unit "mAU" but this study '
                              'uses "µS·min"; results in different units cannot be compared\n')


def test_a_numerically_singular_quadratic_makes_mandel_not_applicable(make_study, outside, capsys):
    # formerly exit 3: levels 0, 1 and 1e20 leave the quadratic numerically singular
    cal = "concentration,response\n0,0.001\n0,0.0012\n1,1\n1,1.01\n1e20,1e20\n1e20,1.01e20\n"
    study = make_study(files={"calibration.csv": cal})
    code, _, err = _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    assert code in (0, 1), err
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    assert a["calibration"]["mandel"] is None
    reason = next(e["reason"] for e in a["not_applicable"] if e["item"] == "mandel")
    assert reason.startswith("the quadratic cannot be fitted to these concentrations")


@pytest.mark.parametrize("cell", ["１６", "٣"])
def test_only_ascii_digits_are_numbers(make_study, capsys, cell):
    cal = f"concentration,response\n1,2\n2,4\n4,{cell}\n8,16\n"
    study = make_study(files={"calibration.csv": cal})
    code, _, err = _run(capsys, "check", study)
    assert (code, err) == (2, f'validator: error: calibration.csv, row 4, column "response": "{cell}" is not a '
                              "number\n")


@pytest.mark.parametrize("out, message", [
    ("", "--out is empty; name the output folder"),
    ("~", '~: "~" is not expanded by validator (it would make a folder named "~"); give the folder\'s full path'),
    ("~/results", '~/results: "~" is not expanded by validator (it would make a folder named "~"); give the '
                  "folder's full path"),
])
def test_empty_or_tilde_out_is_refused(make_study, tmp_path, monkeypatch, capsys, out, message):
    study = make_study()
    monkeypatch.chdir(tmp_path)
    code, _, err = _run(capsys, "run", study, "--out", out, "--format", "json")
    assert (code, err) == (2, f"validator: error: {message}\n")
    assert not (tmp_path / "~").exists()


def test_a_blank_unit_is_refused(make_study, capsys):
    study = make_study(head=STUDY_HEAD.replace('concentration_unit = "mg/L"', 'concentration_unit = "   "'))
    code, _, err = _run(capsys, "check", study)
    assert code == 2 and "key study.concentration_unit" in err and err.count("\n") == 1


def test_verify_without_study_says_the_inputs_were_not_checked(make_study, outside, capsys):
    study = make_study()
    assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json"]) == 0
    capsys.readouterr()
    code, out, _ = _run(capsys, "verify", outside / "o")
    assert code == 0
    assert (f"validator: {outside / 'o'} is intact: every output matches its recorded SHA-256 (the inputs were "
            "not checked; add --study STUDY.toml to check them too)\n") in out
    code, out, _ = _run(capsys, "verify", outside / "o", "--study", study)
    assert code == 0 and "every output and input matches its recorded SHA-256" in out


def test_an_loq_above_every_calibrator_fails_the_working_range(make_study, outside, capsys):
    # formerly PASS with working_range null: the LOQ (about 14.5) lies above the highest calibrator (14),
    # so the method was shown to quantify nothing
    rows = [(10, 11.3), (10, 8.7), (11, 12.3), (11, 9.7), (12, 13.3), (12, 10.7), (13, 14.3), (13, 11.7),
            (14, 15.3), (14, 12.7)]
    cal = "concentration,response\n" + "".join(f"{x},{y}\n" for x, y in rows)
    study = make_study(files={"calibration.csv": cal})
    code, out, _ = _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    loq = next(e for e in a["detection"]["estimates"] if e["method"] == "ich-residual-sd")["loq"]
    assert loq > 14                                                   # the premise of the scenario
    assert a["working_range"]["low"] is None and a["working_range"]["passing_levels"] == 0
    crit = next(c for c in a["criteria"] if c["id"] == "working-range")
    assert crit["pass"] is False and crit["value"] == 0 and crit["note"].startswith("no range remains")
    assert code == 1 and out.startswith("validator: FAIL:")


def test_working_range_criterion_counts_passing_levels_inside():
    # hand computation: passing calibrators 1, 2, 5, 10 with LOQ 1.5 leave 2, 5, 10 inside [1.5, 10]
    from validator.characteristics.calibration import BackCalculated
    from validator.characteristics.working_range import working_range_criterion
    from validator.characteristics.working_range import working_range
    back = [BackCalculated(c, 0.0, c, 0.0, 15.0, True) for c in (1.0, 2.0, 5.0, 10.0)]
    wr = working_range(back, 1.5, "ich-residual-sd", [], [])
    assert (wr.low, wr.high, wr.passing_levels) == (1.5, 10.0, 3)
    assert working_range_criterion(wr).passed is True
    wr = working_range(back, 12.0, "ich-residual-sd", [], [])
    assert (wr.low, wr.passing_levels) == (None, 0) and working_range_criterion(wr).passed is False


def test_a_quadratic_turning_over_inside_the_range_fails(make_study, outside, capsys):
    # formerly PASS: y = 1.2 x - 0.1 x^2 peaks at x = 6 inside 1..8; a response of 3.2 matches x = 4 and x = 8
    import numpy as np
    rng = np.random.default_rng(7)
    x = np.repeat(np.arange(1.0, 9.0), 3)
    y = 1.2 * x - 0.1 * x**2 + rng.normal(0, 0.01, x.size)
    cal = "concentration,response\n" + "".join(f"{float(a)!r},{float(b)!r}\n" for a, b in zip(x, y))
    study = make_study('[calibration]\ndata = "calibration.csv"\nmodel = "quadratic"\n', {"calibration.csv": cal})
    code, out, _ = _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    b1 = a["calibration"]["coefficients"]["slope"]["estimate"]
    b2 = a["calibration"]["coefficients"]["quadratic"]["estimate"]
    # hand computation: f'(x) = b1 + 2 b2 x; ratio of the slope at the flatter end over the steeper end
    ends = [b1 + 2 * b2 * 1.0, b1 + 2 * b2 * 8.0]
    steep, flat = max(ends, key=abs), min(ends, key=abs)
    assert a["calibration"]["sensitivity_ratio"] == pytest.approx(flat / steep, rel=1e-9)
    crit = next(c for c in a["criteria"] if c["id"] == "monotonic")
    assert crit["pass"] is False and "turns over" in crit["note"]
    assert code == 1


def test_a_straight_line_is_monotonic(make_study, outside, capsys):
    study = make_study()
    assert _run(capsys, "run", study, "--out", outside / "o", "--format", "json")[0] == 0
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    assert a["calibration"]["sensitivity_ratio"] == pytest.approx(1.0, rel=1e-12)   # f' is constant
    assert next(c for c in a["criteria"] if c["id"] == "monotonic")["pass"] is True


def _maintenance_copy(tmp_path, scale=1.0, extra=""):
    folder = tmp_path / "m"
    shutil.copytree(MAINTENANCE, folder)
    if scale != 1.0:
        lines = (folder / "calibration.csv").read_text().splitlines()
        rows = [lines[0]]
        for line in lines[1:]:
            name, x, y, series = line.split(",")
            rows.append(f"{name},{float(x) * scale!r},{float(y) * scale!r},{series}")
        (folder / "calibration.csv").write_text("\n".join(rows) + "\n")
    if extra:
        study = (folder / "study.toml").read_text().replace('previous = "previous-results.json"\n',
                                                          'previous = "previous-results.json"\n' + extra)
        (folder / "study.toml").write_text(study)
    return folder


def test_straight_lines_over_ranges_that_do_not_overlap_are_not_compared(tmp_path, outside, capsys):
    # formerly "equivalent": 50..4000 mg/L now against 0.5..40 before; a slope is compared only over a
    # range both runs calibrated (the quadratic analyte was already refused)
    folder = _maintenance_copy(tmp_path, scale=100.0)
    code, out, _ = _run(capsys, "run", folder / "study.toml", "--out", outside / "o", "--format", "json")
    a = {x["name"]: x for x in json.loads((outside / "o" / "results.json").read_text())["analytes"]}
    slope = a["nitrate"]["revalidation"]["slope"]
    assert slope["verdict"] == "not applicable" and "do not overlap" in slope["reason"]
    crit = next(c for c in a["nitrate"]["criteria"] if c["id"] == "slope-equivalence")
    assert crit["pass"] is None
    assert code == 1


def test_an_analyte_without_a_counterpart_leaves_the_revalidation_incomplete(tmp_path, outside, capsys):
    # formerly PASS with revalidation null: mapping fluoride onto nitrate leaves nitrate unmatched
    folder = _maintenance_copy(tmp_path, extra='analytes = {fluoride = "nitrate"}\n')
    code, _, _ = _run(capsys, "run", folder / "study.toml", "--out", outside / "o", "--format", "json")
    a = {x["name"]: x for x in json.loads((outside / "o" / "results.json").read_text())["analytes"]}
    assert a["nitrate"]["revalidation"] is None
    crit = next(c for c in a["nitrate"]["criteria"] if c["id"] == "slope-equivalence")
    assert crit["pass"] is None and "no analyte matching this one" in crit["note"]
    assert a["nitrate"]["verdict"] != "pass" and code == 1


def test_a_declared_level_without_data_is_an_input_error(make_study, capsys):
    # formerly PASS: a limit for added = 5 with data only at added = 2 judged nothing
    rec = "added,found\n2,1.98\n2,2.01\n2,2.03\n"
    study = make_study('[calibration]\ndata = "calibration.csv"\n[recovery]\ndata = "recovery.csv"\n'
                       'levels = [{added = 5, range_pct = [99, 101]}]\n',
                       {"calibration.csv": CALIBRATION, "recovery.csv": rec})
    code, _, err = _run(capsys, "check", study)
    assert (code, err) == (2, f"validator: error: {study}, line 10, key recovery.levels[0].added: no recovery result has "
                              "added = 5, so this limit would judge nothing (the data have added 2)\n")


def test_a_repeated_comparison_sample_is_an_input_error(make_study, capsys):
    comp = "sample,reference,test\nA,1,1.1\nB,2,2.1\nA,3,2.9\nC,4,4.2\n"
    study = make_study('[calibration]\ndata = "calibration.csv"\n[comparison]\ndata = "comparison.csv"\n',
                       {"calibration.csv": CALIBRATION, "comparison.csv": comp})
    code, _, err = _run(capsys, "check", study)
    assert (code, err) == (2, 'validator: error: comparison.csv, row 4, column "sample": sample "A" appears again '
                              "(first at row 2); the comparison takes one reference and one test result per "
                              "sample\n")


@pytest.mark.parametrize("names, message", [
    (("Nitrate", "nitrate"), 'analyte "nitrate" differs only in upper/lower case from "Nitrate" (row 2); use one '
                             "spelling per analyte"),
    (("nitrate", "nitr\u200bate"), '"nitr\u200bate" contains an invisible character (U+200B, ZERO WIDTH SPACE); '
                                   "retype the name"),
])
def test_names_that_only_look_alike_are_refused(make_study, capsys, names, message):
    rows = "".join(f"{names[i % 2]},{x},{2 * x}\n" for i, x in enumerate([1, 1, 2, 2, 4, 4, 8, 8]))
    study = make_study(files={"calibration.csv": "analyte,concentration,response\n" + rows})
    code, _, err = _run(capsys, "check", study)
    assert code == 2 and err.endswith(f"{message}\n") and err.count("\n") == 1


def test_one_name_in_two_unicode_forms_is_one_analyte(make_study, outside, capsys):
    # "café" typed as one character (U+00E9) in one file and as e + combining accent in the other
    composed, decomposed = "caf\u00e9", "cafe\u0301"
    cal = "analyte,concentration,response\n" + "".join(f"{composed},{x},{2 * x + 0.01 * (-1) ** i}\n"
                                                       for i, x in enumerate([1, 1, 2, 2, 4, 4, 8, 8]))
    samples = f"sample,analyte,response\nS1,{decomposed},5\n"
    study = make_study('[calibration]\ndata = "calibration.csv"\n[samples]\ndata = "samples.csv"\n',
                       {"calibration.csv": cal, "samples.csv": samples})
    code, _, err = _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    assert code in (0, 1), err
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    assert a["name"] == composed and [s["id"] for s in a["samples"]] == ["S1"]


def test_no_loq_on_the_reported_basis_leaves_the_working_range_unshown(make_study, outside, capsys):
    # formerly PASS: blank-sd basis with one blank gives no LOQ; the range's low end was never checked
    study = make_study('[calibration]\ndata = "calibration.csv"\n[blanks]\ndata = "blanks.csv"\n'
                       '[detection]\nreporting_basis = "blank-sd"\n',
                       {"calibration.csv": CALIBRATION, "blanks.csv": "response\n0.01\n"})
    code, out, _ = _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    crit = next(c for c in a["criteria"] if c["id"] == "working-range")
    assert crit["pass"] is None and "no LOQ on the reported basis (needs at least 2 blank readings)" in crit["note"]
    assert code == 1 and out.startswith("validator: INCOMPLETE:")


def test_force_over_an_output_missing_a_listed_file_is_exit_2(make_study, outside, capsys):
    # second hostile pass: a previous output with results.json deleted gave exit 3 (FileNotFoundError)
    study = make_study()
    out = outside / "o"
    assert main(["run", str(study), "--out", str(out), "--format", "json"]) == 0
    (out / "results.json").unlink()
    code, _, err = _run(capsys, "run", study, "--out", out, "--format", "json", "--force")
    assert (code, err) == (2, f'validator: error: {out}: its file "results.json" is missing; --force replaces only '
                              "a previous validator output\n")


def test_force_never_replaces_a_protocol(make_study, outside, capsys):
    # second hostile pass: run --force replaced an approved protocol folder with run results
    study = make_study()
    assert main(["protocol", str(study), "--out", str(outside / "p")]) == 0
    before = sorted(p.name for p in (outside / "p").iterdir())
    capsys.readouterr()
    code, _, err = _run(capsys, "run", study, "--out", outside / "p", "--format", "json", "--force")
    assert (code, err) == (2, f"validator: error: {outside / 'p'}: holds a protocol (protocol.json); a protocol is "
                              "never replaced, not even with --force; choose another --out\n")
    assert sorted(p.name for p in (outside / "p").iterdir()) == before


def test_a_deeply_nested_case_file_is_exit_2(tmp_path, outside, capsys):
    # second hostile pass: 50,000 nested arrays gave exit 3 (RecursionError)
    cases = tmp_path / "cases.toml"
    cases.write_text("x = " + "[" * 50000 + "]" * 50000 + "\n")
    code, _, err = _run(capsys, "qualify", "--out", outside / "q", "--cases", cases)
    assert code == 2 and "nested too deeply" in err and err.count("\n") == 1


def test_breusch_pagan_without_information_is_not_applicable(make_study, outside, capsys):
    # second hostile run: every residual of size 1.3 makes e^2 constant; the statistic was null beside p = 1.0
    rows = [(10, 11.3), (10, 8.7), (11, 12.3), (11, 9.7), (12, 13.3), (12, 10.7), (13, 14.3), (13, 11.7),
            (14, 15.3), (14, 12.7)]
    study = make_study(files={"calibration.csv": "concentration,response\n" + "".join(f"{x},{y}\n" for x, y in rows)})
    _run(capsys, "run", study, "--out", outside / "o", "--format", "json")
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    assert a["calibration"]["heteroscedasticity"] is None
    assert {"item": "heteroscedasticity", "reason": "the squared residuals do not vary (every residual has the same "
            "size), so the test has no information"} in a["not_applicable"]
