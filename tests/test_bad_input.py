"""Catalogue of bad inputs: one case each, the exact one-line message and exit code 2.

Messages name the file, the row (line number in the file, header = row 1)
or the key, and the offending value.
"""

import os
import stat

import pytest

from conftest import STUDY_HEAD
from validator.cli import main

CAL = "concentration,response\n1,2.01\n1,1.98\n2,4.02\n2,3.99\n4,8.02\n4,7.99\n8,15.99\n8,16.02\n"
CALIB = '[calibration]\ndata = "calibration.csv"\n'
WITH_SAMPLES = CALIB + '[samples]\ndata = "s.csv"\n'
SEMI = STUDY_HEAD + 'delimiter = ";"\n'

# (id, study body, files, extra study head, expected message; {dir} is the study folder)
CATALOGUE = [
    ("toml-syntax", '[calibration]\ndata = "calibration.csv\n', None, "",
     "{dir}/study.toml: TOML syntax error: Illegal character '\\n' (at line 7, column 24)"),
    ("unknown-key", CALIB + "modle = \"linear\"\n", None, "",
     '{dir}/study.toml, line 8, key calibration.modle: unknown key; did you mean "model"?'),
    ("unknown-section", CALIB + '[blank]\ndata = "b.csv"\n', None, "",
     '{dir}/study.toml, line 8, key blank: unknown section; did you mean "blanks"?'),
    ("wrong-type", "[calibration]\ndata = 5\n", None, "",
     "{dir}/study.toml, line 7, key calibration.data: must be text in quotes (\"...\"); got 5"),
    ("missing-key", '[calibration]\nmodel = "linear"\n', None, "",
     "{dir}/study.toml, key calibration.data: required key is missing"),
    ("missing-section", "", None, "",
     "{dir}/study.toml, key calibration: required section is missing"),
    ("template-override", CALIB + '[report]\ntemplate = "mine.html"\n', None, "",
     "{dir}/study.toml, line 8, key report: unknown section; allowed: study, calibration, samples, "
     "criteria, blanks, detection, recovery, precision, accuracy_profile, uncertainty, reference_material, "
     "revalidation, comparison, sample_preparation, limit_of_blank, method_detection_limit, matrix_effect, "
     "carry_over, selectivity, stability, dilution_integrity, reanalysis, exclusions, runs, columns, types, "
     "analyte_settings, design, protocol"),
    ("data-missing", '[calibration]\ndata = "nope.csv"\n', {}, "",
     "nope.csv: data file not found (looked for {dir}/nope.csv); `validator protocol` works without data, "
     "`check` and `run` need it"),
    ("data-empty", CALIB, {"calibration.csv": ""}, "", "calibration.csv: is empty (no header row)"),
    ("data-directory", CALIB, {"calibration.csv": None}, "", "calibration.csv: is a directory, not a data file"),
    ("missing-column", CALIB, {"calibration.csv": "concentration\n1\n"}, "",
     'calibration.csv, row 1: the header has no column "response" (found: "concentration")'),
    ("duplicate-column", CALIB, {"calibration.csv": "concentration,response,Response\n1,1,1\n"}, "",
     'calibration.csv, row 1: the header names column "response" twice'),
    ("non-numeric", CALIB, {"calibration.csv": "concentration,response\n1,1\n2,abc\n"}, "",
     'calibration.csv, row 3, column "response": "abc" is not a number'),
    # the study states decimal = "." (when it states nothing, the decimal comma is detected)
    ("decimal-comma", CALIB, {"calibration.csv": "concentration;response\n1;2,5\n"},
     'delimiter = ";"\ndecimal = "."\n',
     'calibration.csv, row 2, column "response": "2,5" uses a decimal comma but the study declares '
     'decimal = "."; set decimal = "," in [study]'),
    ("decimal-point", CALIB, {"calibration.csv": "concentration;response\n1;2.5\n"},
     'delimiter = ";"\ndecimal = ","\n',
     'calibration.csv, row 2, column "response": "2.5" uses a decimal point but the study declares '
     'decimal = ","; set decimal = "." in [study]'),
    ("decimal-comma-in-comma-file", CALIB, {"calibration.csv": "concentration,response\n1,2,5\n"}, "",
     'calibration.csv, row 2, column "response": "2,5" reads as 3 cells but the header has 2; is there a decimal comma or a thousands '
     'separator? Files with decimal commas need delimiter = ";" and decimal = "," in [study]'),
    ("thousands", CALIB, {"calibration.csv": 'concentration,response\n1,"1,234.5"\n'}, "",
     'calibration.csv, row 2, column "response": "1,234.5" has thousands separators; write the number without them'),
    ("unit-in-cell", CALIB, {"calibration.csv": "concentration,response\n12.5 mg/L,3\n"}, "",
     'calibration.csv, row 2, column "concentration": "12.5 mg/L" has text after the number ("mg/L"); '
     "give units in the study file, not in data cells"),
    ("nan", CALIB, {"calibration.csv": "concentration,response\n1,NaN\n"}, "",
     'calibration.csv, row 2, column "response": "NaN" is not a finite number'),
    ("inf", CALIB, {"calibration.csv": "concentration,response\n1,-inf\n"}, "",
     'calibration.csv, row 2, column "response": "-inf" is not a finite number'),
    ("negative-concentration", CALIB, {"calibration.csv": "concentration,response\n1,1\n-2,2\n3,3\n"}, "",
     'calibration.csv, row 3, column "concentration": concentration -2 is negative'),
    ("empty-cell", CALIB, {"calibration.csv": "concentration,response\n1,\n"}, "",
     'calibration.csv, row 2, column "response": the cell is empty'),
    ("two-concentrations", CALIB, {"calibration.csv": "concentration,response\n1,1\n2,2\n2,2.1\n"}, "",
     'calibration.csv, row 2, column "concentration": the calibration has 2 distinct concentration(s); '
     "at least 3 are needed for this model"),
    ("zero-with-1/x", CALIB + 'weighting = "1/x"\n', {"calibration.csv": "concentration,response\n0,0.1\n1,1\n2,2\n4,4\n"}, "",
     'calibration.csv, row 2, column "concentration": concentration 0 cannot be weighted by 1/x; '
     'use weighting = "none" or "1/y", or remove the zero calibrator'),
    ("constant-response", CALIB, {"calibration.csv": "concentration,response\n1,5\n2,5\n3,5\n"}, "",
     'calibration.csv, row 2, column "response": every response of analyte "T-1" is 5: the instrument '
     "does not respond to concentration"),
    ("all-identical", CALIB, {"calibration.csv": "concentration,response\n2,5\n2,5\n2,5\n"}, "",
     'calibration.csv, row 2, column "concentration": the calibration has 1 distinct concentration(s); '
     "at least 3 are needed for this model"),
    ("sample-id-spelling", WITH_SAMPLES, {"calibration.csv": CAL, "s.csv": "sample,response\nS-01,3\ns-01 ,3.1\n"}, "",
     's.csv, row 3, column "sample": sample id "s-01" differs only in case or spacing from "S-01" (row 2); '
     "use one spelling per sample"),
    ("sample-unknown-analyte", WITH_SAMPLES, {"calibration.csv": CAL, "s.csv": "sample,analyte,response\nS-01,lead,3\n"}, "",
     's.csv, row 2, column "analyte": analyte "lead" is not in the calibration data (known: "T-1")'),
    ("not-utf8", CALIB, {"calibration.csv": b"concentration,response\n1,2\n2,4\n3,6\n# \xe9t\xe9\n"}, "",
     "calibration.csv: is not UTF-8 text (byte 0xe9 at byte offset 37); save it as UTF-8"),
    ("device", '[calibration]\ndata = "/dev/zero"\n', {}, "",
     "/dev/zero: is not a regular file (device, FIFO or socket); refused"),
    ("over-size-limit", CALIB, {"calibration.csv": "concentration,response\n" + "1,1\n" * 300_000},
     "max_data_file_mb = 1\n", "calibration.csv: is 1200023 bytes, over the limit of 1048576 bytes"),
    ("bad-range", CALIB + '[recovery]\ndata = "r.csv"\nrange_pct = [110, 90]\n', None, "",
     "{dir}/study.toml, line 8, key recovery: range_pct must be [low, high] with low < high, got [110.0, 90.0]"),
    # a key checked against the data after the study file was read still gets its line and a hint
    ("analyte-typo", CALIB + '[reference_material]\ndata = "rm.csv"\ncertified_value = 2\nstandard_uncertainty = 0.01\n'
     'analyte = "nitrat"\n',
     {"calibration.csv": "analyte,concentration,response\n" + "".join(
         f"{a},{x},{2 * x + d}\n" for a in ("nitrate", "nitrite") for x in (1, 2, 4, 8) for d in (0.01, -0.01)),
      "rm.csv": "found\n2.01\n1.99\n"}, "",
     '{dir}/study.toml, line 12, key reference_material.analyte: analyte "nitrat" is not in the calibration '
     'data; did you mean "nitrate"?'),
]


@pytest.mark.parametrize("case_id, body, files, head, expected", CATALOGUE, ids=[c[0] for c in CATALOGUE])
def test_catalogue(make_study, tmp_path, capsys, case_id, body, files, head, expected):
    files = {"calibration.csv": CAL} if files is None else files
    for name, content in list(files.items()):
        if content is None:
            (tmp_path / name).mkdir()
            del files[name]
    study = make_study(body, files, head=STUDY_HEAD + head)
    code = main(["check", str(study)])
    out, err = capsys.readouterr()
    assert (code, err) == (2, f"validator: error: {expected.format(dir=tmp_path)}\n")
    assert out == "" and "Traceback" not in err
    # `run` refuses the same way and writes nothing
    code = main(["run", str(study), "--out", str(tmp_path / "out")])
    assert code == 2 and not (tmp_path / "out").exists()


def test_fifo_is_refused_without_hanging(make_study, tmp_path, capsys):
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    assert stat.S_ISFIFO(os.stat(fifo).st_mode)
    study = make_study('[calibration]\ndata = "pipe.csv"\n', {})
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err == ("validator: error: pipe.csv: is not a regular file "
                                       "(device, FIFO or socket); refused\n")


@pytest.mark.slow
def test_ten_million_rows_is_refused(make_study, tmp_path, capsys):
    big = tmp_path / "calibration.csv"
    with open(big, "w") as fh:
        fh.write("concentration,response\n")
        block = "1,1\n" * 100_000
        for _ in range(100):
            fh.write(block)
    study = make_study(CALIB, {})
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err == "validator: error: calibration.csv: has more than 1000000 data rows; refused\n"


def test_single_replicates_make_tests_not_applicable(make_study, outside):
    import json
    study = make_study(CALIB, {"calibration.csv": "concentration,response\n1,2.01\n2,3.98\n4,8.03\n8,15.96\n"})
    # not shown is not passed: the lack-of-fit criterion cannot be evaluated, so the run is INCOMPLETE (exit 1)
    assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json"]) == 1
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    assert a["verdict"] == "incomplete"
    assert a["calibration"]["lack_of_fit"] is None
    assert {"item": "lack_of_fit", "reason": "no concentration is replicated, so there is no pure error"} \
        in a["not_applicable"]
    lof = next(c for c in a["criteria"] if c["id"] == "lack-of-fit")
    assert lof["pass"] is None and lof["note"].startswith("not applicable")
