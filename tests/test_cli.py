"""The command line in-process: exit codes and whole one-line messages."""

import json

import jsonschema
import pytest

from validator.cli import main
from validator.results import load_schema


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def test_run_writes_valid_results_and_exit_0(make_study, outside, capsys):
    study = make_study()
    code, out, err = run(capsys, "run", study, "--out", outside / "out", "--format", "json")
    assert code == 0, err
    results = json.loads((outside / "out" / "results.json").read_text())
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    assert results["verdict"] == "pass"
    assert "PASS" in out


def test_failed_criterion_gives_exit_1(make_study, outside, capsys):
    study = make_study('[calibration]\ndata = "calibration.csv"\n[criteria]\nr_squared_min = 0.9999999\n')
    code, out, _ = run(capsys, "run", study, "--out", outside / "out", "--format", "json")
    assert code == 1
    results = json.loads((outside / "out" / "results.json").read_text())
    assert results["verdict"] == "fail"
    crit = {c["id"]: c for c in results["analytes"][0]["criteria"]}
    assert crit["r-squared"]["pass"] is False


def test_existing_output_is_not_overwritten(make_study, outside, capsys):
    study = make_study()
    out = outside / "out"
    out.mkdir()
    (out / "keep.txt").write_text("mine")
    code, _, err = run(capsys, "run", study, "--out", out, "--format", "json")
    assert code == 2
    assert err == f"validator: error: {out}: output folder exists; choose another --out or add --force\n"
    assert (out / "keep.txt").read_text() == "mine"
    # --force replaces only a previous validator output, never a folder holding the user's files
    code, _, err = run(capsys, "run", study, "--out", out, "--format", "json", "--force")
    assert code == 2 and (out / "keep.txt").read_text() == "mine"
    assert err == (f'validator: error: {out}: holds no readable manifest.json written by validator; '
                   "--force replaces only a previous validator output\n")


def test_check_reports_summary(make_study, capsys):
    study = make_study()
    code, out, _ = run(capsys, "check", study)
    assert code == 0
    assert out == f"validator: {study} is valid: 1 analyte(s), 10 calibration point(s), 1 data file(s)\n"


CASES = [
    # (study body, files, expected message after "validator: error: ")
    ('[calibration]\ndata = "calibration.csv"\nweigting = "1/x"\n', None,
     'study.toml, line 8, key calibration.weigting: unknown key; did you mean "weighting"?'),
    ('[calibraton]\ndata = "calibration.csv"\n', None,
     'study.toml, line 6, key calibraton: unknown section; did you mean "calibration"?'),
    ('[calibration]\ndata = "calibration.csv"\nmodel = "cubic"\n', None,
     "study.toml, line 8, key calibration.model: must be one of 'linear', 'quadratic' or 'auto' (upper or lower case); got 'cubic'"),
    ('[calibration]\ndata = "calibration.csv"\nthrough_origin = "yes"\n', None,
     "study.toml, line 8, key calibration.through_origin: must be true or false (without quotes); got 'yes'"),
    ('[calibration]\ndata = "calibration.csv"\n[criteria]\nalpha = 0.7\n', None,
     "study.toml, line 9, key criteria.alpha: must be 1e-06 <= alpha < 0.5; got 0.7"),
    ('[calibration]\ndata = \n', None,
     "study.toml: TOML syntax error: Invalid value (at line 7, column 8)"),
    ('[calibration]\ndata = "calibration.csv"\n', {"calibration.csv": "concentration,response\n1,1\n2,1.2.3\n"},
     'calibration.csv, row 3, column "response": "1.2.3" is not a number'),
    ('[calibration]\ndata = "calibration.csv"\n', {"calibration.csv": "concentration,response\n1,12.5 mg/L\n"},
     'calibration.csv, row 2, column "response": "12.5 mg/L" has text after the number ("mg/L"); '
     'give units in the study file, not in data cells'),
    ('[calibration]\ndata = "calibration.csv"\n', {"calibration.csv": "concentration,response\n-1,1\n2,2\n3,3\n"},
     'calibration.csv, row 2, column "concentration": concentration -1 is negative'),
    ('[calibration]\ndata = "calibration.csv"\n', {"calibration.csv": "concentration,signal\n1,1\n"},
     'calibration.csv, row 1: unknown column "signal"; expected "concentration", "response", "analyte", "series"'),
    ('[calibration]\ndata = "calibration.csv"\n', {"calibration.csv": "concentration,response\n1,1\n2,2\n1,1.1\n"},
     'calibration.csv, row 2, column "concentration": the calibration has 2 distinct concentration(s); '
     'at least 3 are needed for this model'),
    ('[calibration]\ndata = "calibration.csv"\nweighting = "1/x"\n',
     {"calibration.csv": "concentration,response\n0,0.1\n1,1\n2,2\n3,3\n"},
     'calibration.csv, row 2, column "concentration": concentration 0 cannot be weighted by 1/x; '
     'use weighting = "none" or "1/y", or remove the zero calibrator'),
    ('[calibration]\ndata = "missing.csv"\n', {},
     "missing.csv: data file not found (looked for {tmp}/missing.csv); `validator protocol` works without data, "
     "`check` and `run` need it"),
]


@pytest.mark.parametrize("body, files, expected", CASES)
def test_bad_input_is_one_line_exit_2(make_study, tmp_path, capsys, body, files, expected):
    study = make_study(body, files)
    code, out, err = run(capsys, "check", study)
    assert code == 2
    expected = expected.replace("{tmp}", str(tmp_path))
    assert err == f"validator: error: {tmp_path}/{expected}\n" if expected.startswith("study.toml") \
        else err == f"validator: error: {expected}\n"
    assert "Traceback" not in err and out == ""


def test_missing_study_file(capsys, tmp_path):
    code, _, err = run(capsys, "check", tmp_path / "none.toml")
    assert code == 2 and err == f"validator: error: {tmp_path}/none.toml: study file not found\n"


def test_usage_error_is_exit_2(capsys):
    code, _, err = run(capsys, "run")
    assert code == 2
    assert err.startswith("validator: error: usage: ") and err.count("\n") == 1


def test_python_dash_m(make_study, tmp_path):
    import subprocess
    import sys
    study = make_study()
    proc = subprocess.run([sys.executable, "-m", "validator", "check", str(study)],
                          capture_output=True, text=True)
    assert proc.returncode == 0 and "is valid" in proc.stdout


def test_not_applicable_criterion_makes_the_run_incomplete_not_a_pass(make_study, outside, capsys):
    # "not shown is not passed": no replicate, so lack of fit cannot be tested; nothing failed,
    # but the run is INCOMPLETE (exit 1), and the dossier's cover says so
    study = make_study(files={"calibration.csv": "concentration,response\n1,2.01\n2,3.98\n4,8.03\n8,15.96\n"})
    out = outside / "o"
    code, stdout, err = run(capsys, "run", study, "--out", out, "--format", "json,html")
    assert (code, err) == (1, "")
    # 2 not applicable: lack-of-fit, and working-range, which rests on the calibration's criteria (README)
    assert stdout == (f"validator: INCOMPLETE: 1 analyte(s), 0 criterion/criteria not met, 2 not applicable; "
                      f"output in {out}\n")
    results = json.loads((out / "results.json").read_text())
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    assert results["verdict"] == results["analytes"][0]["verdict"] == "incomplete"
    assert "INCOMPLETE: no criterion failed, but not every criterion could be evaluated" in \
        (out / "dossier.html").read_text()
