"""Data files as laboratories have them: .xlsx sheets, CSV dialects told from the file, plain values.

Expected numbers are the ones written into the files by the test (hand computation: the value
is the text or number written in the cell); a study read from a workbook must give exactly the
results of the same study read from CSV (the same floats go in). Expected messages are this
project's own wording (common practice, no published source).
"""

from __future__ import annotations

import json

import openpyxl
import pytest

from conftest import CALIBRATION, STUDY_HEAD
from validator.cli import main
from validator.errors import DataError
from validator.inputs.loading import load_study
from validator.inputs.tables import read_table

LEGAL = [(",", "."), (";", "."), (";", ","), ("tab", "."), ("tab", ",")]
CHARACTER = {",": ",", ";": ";", "tab": "\t"}
# the conftest calibration, rounded to 6 digits: a workbook keeps at most 15 significant digits
CAL_ROWS = [(c, f"{float(r):.6g}") for c, r in (line.split(",") for line in CALIBRATION.strip().splitlines()[1:])]


def calibration_text(delimiter: str, decimal: str) -> str:
    sep = CHARACTER[delimiter]
    return "concentration" + sep + "response\n" + "".join(
        f"{c.replace('.', decimal)}{sep}{r.replace('.', decimal)}\n" for c, r in CAL_ROWS)


def calibration_book(path, header_at: int = 3, sheet: str = "Results"):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = sheet
    ws["A1"] = "Batch 7 export"
    ws.cell(header_at, 1, "Concentration")
    ws.cell(header_at, 2, "Response")
    for i, (c, r) in enumerate(CAL_ROWS, start=header_at + 1):
        ws.cell(i, 1, float(c))
        ws.cell(i, 2, float(r))
    wb.save(path)
    return ws


def run(study, out):
    code = main(["run", str(study), "--out", str(out), "--format", "json"])
    assert code == 0
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


@pytest.mark.parametrize("bom", [False, True], ids=["no-bom", "bom"])
@pytest.mark.parametrize("delimiter,decimal", LEGAL)
def test_read_table_detects_each_combination(delimiter, decimal, bom):
    data = calibration_text(delimiter, decimal).encode()
    data = (b"\xef\xbb\xbf" if bom else b"") + data
    table = read_table(data, "cal.csv", required=("concentration", "response"))
    assert (table.delimiter, table.decimal, table.dialect) == (delimiter, decimal, "detected")
    assert table.numbers("response") == [float(r) for _, r in CAL_ROWS]     # the values written


def test_a_file_disagreeing_with_both_stated_keys_gets_one_message_naming_both_fixes():
    data = calibration_text(";", ",").encode()
    with pytest.raises(DataError) as info:
        read_table(data, "cal.csv", delimiter=",", decimal=".", required=("concentration", "response"))
    assert str(info.value) == ('cal.csv: the file uses ";" between fields and "," as decimal mark; '
                               'set delimiter = ";" and decimal = "," in [study]')
    data = calibration_text(",", ".").encode()
    with pytest.raises(DataError) as info:
        read_table(data, "cal.csv", delimiter=";", decimal=",", required=("concentration", "response"))
    assert str(info.value) == ('cal.csv: the file uses "," between fields and "." as decimal mark; '
                               'set delimiter = "," and decimal = "." in [study]')


def test_a_study_without_dialect_keys_reads_a_semicolon_decimal_comma_file(make_study, tmp_path, outside):
    study = make_study(files={"calibration.csv": calibration_text(";", ",")})
    results = run(study, outside / "a")
    entry = results["inputs"][1]
    assert (entry["delimiter"], entry["decimal"], entry["dialect"]) == (";", ",", "detected")
    # the same numbers as the comma/point file (the same floats are read)
    (tmp_path / "calibration.csv").write_text(calibration_text(",", "."), encoding="utf-8")
    again = run(study, outside / "b")
    assert again["analytes"][0]["calibration"] == results["analytes"][0]["calibration"]


def test_a_workbook_gives_the_same_results_as_csv(make_study, tmp_path, outside):
    calibration_book(tmp_path / "cal.xlsx")
    csv_results = run(make_study(files={"calibration.csv": calibration_text(",", ".")}), outside / "csv")
    study = make_study('[calibration]\ndata = "cal.xlsx"\nsheet = "Results"\nheader_row = 3\n')
    xlsx_results = run(study, outside / "xlsx")
    assert xlsx_results["analytes"][0]["calibration"] == csv_results["analytes"][0]["calibration"]
    assert xlsx_results["inputs"][1]["sheet"] == "Results" and "delimiter" not in xlsx_results["inputs"][1]


def test_workbook_errors_name_file_sheet_and_cell(make_study, tmp_path, capsys):
    ws = calibration_book(tmp_path / "cal.xlsx")
    wb = ws.parent
    ws["B6"] = "n.a."
    wb.save(tmp_path / "cal.xlsx")
    study = make_study('[calibration]\ndata = "cal.xlsx"\nheader_row = 3\n')
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err == (
        'validator: error: cal.xlsx, sheet Results, cell B6: "n.a." is not a number\n')


def test_sheet_on_a_csv_file_is_refused(make_study, capsys):
    study = make_study('[calibration]\ndata = "calibration.csv"\nsheet = "Results"\n')
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err == (
        'validator: error: calibration.csv: is CSV text, not an .xlsx workbook, so sheet = "Results" '
        "cannot apply; remove sheet = ... for this file\n")


def test_csv_header_row_skips_a_preamble_and_keeps_row_numbers(make_study, capsys):
    lines = CALIBRATION.splitlines(keepends=True)
    text = "Exported by the instrument;;\n\n" + lines[0] + "1,x\n" + "".join(lines[2:])
    study = make_study('[calibration]\ndata = "calibration.csv"\nheader_row = 3\n',
                       files={"calibration.csv": text})
    assert main(["check", str(study)]) == 2
    # row 4 of the file is the first data row (header on row 3)
    assert capsys.readouterr().err == (
        'validator: error: calibration.csv, row 4, column "response": "x" is not a number\n')


# --- friendlier values -------------------------------------------------------------------

def test_enumerated_values_ignore_case(make_study):
    study = make_study('[calibration]\ndata = "calibration.csv"\nmodel = "Linear"\nweighting = "1/X"\n'
                       '[detection]\nreporting_basis = "ICH-Residual-SD"\n')
    cfg = load_study(study).config
    assert (cfg.calibration.model, cfg.calibration.weighting) == ("linear", "1/x")
    assert cfg.detection.reporting_basis == "ich-residual-sd"


@pytest.mark.parametrize("body, expected", [
    ('[recovery]\ndata = "r.csv"\nrange_pct = "95-105"\n',
     "key recovery.range_pct: must be a list in square brackets, for example range_pct = [90, 110]; "
     "got '95-105'"),
    ('[comparison]\ndata = "c.csv"\nslope_limits = "0.9-1.1"\n',
     "key comparison.slope_limits: must be a list in square brackets: slope_limits = [low, high], "
     "for example slope_limits = [0.95, 1.05]; got '0.9-1.1'"),
    ('[recovery]\ndata = "r.csv"\nlevels = 5\n',
     "key recovery.levels: must be a list in square brackets, for example levels = "
     "[{ added = ..., range_pct = ... }, ...]; got 5"),
    ('[detection]\nreadings_per_sample = 1.5\n',
     "key detection.readings_per_sample: must be a whole number (without quotes); got 1.5"),
    ('[detection]\nreporting_basis = "blanks"\n',
     "key detection.reporting_basis: must be one of 'ich-residual-sd', 'ich-intercept-sd' or "
     "'blank-sd' (upper or lower case); got 'blanks'"),
])
def test_wrong_values_are_said_plainly_with_an_example(make_study, capsys, body, expected):
    study = make_study('[calibration]\ndata = "calibration.csv"\n' + body)
    assert main(["check", str(study)]) == 2
    err = capsys.readouterr().err
    assert err.endswith(expected + "\n")
    assert "Input should" not in err and "valid list" not in err
