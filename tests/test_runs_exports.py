"""Run exports read untouched through [columns] and [types] (validator.inputs.runs).

Expected values are the numbers written into the exports by the test; the internal-standard
ratio is checked against the division done here with fractions (exact arithmetic), rounded
once to a float. Messages are this project's own wording (common practice, no published source).
"""

from __future__ import annotations

from fractions import Fraction

import openpyxl
import pytest

from conftest import STUDY_HEAD
from validator.errors import DataError
from validator.inputs import loading
from validator.inputs.runs import read_runs
from validator.inputs.study import ColumnsSection, RunSource, TypesSection, read_study_file

Reader = getattr(loading, "Reader", None) or loading._Reader

COLUMNS = ColumnsSection(sample="Sample Name", type="Sample Type", level="Level", response="Area",
                         internal_standard="ISTD Area", analyte="Compound")
TYPES = TypesSection(calibrator=["Cal Std"], blank=["Blank"], qc=["QC"], sample=["Unknown"])
HEADER = ["Sample Name", "Sample Type", "Compound", "Level", "Area", "ISTD Area", "RT"]
ROWS = [["Cal 1", "Cal Std", "enro", 1.0, 1520.0, 10100.0, 3.21],
        ["Cal 2", "cal std", "enro", 5.0, 7480.0, 9950.0, 3.22],
        ["Blank", "Blank", "enro", None, 3.0, 10020.0, 3.20],
        ["QC low", "QC", "enro", 2.5, 3810.0, 10080.0, 3.21],
        ["S-17", "Unknown", "enro", None, 2290.0, 9870.0, 3.21]]


def book(path, rows=ROWS):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Results"
    ws.append(["Run 1 export"])
    ws.append(HEADER)
    for r in rows:
        ws.append(r)
    wb.save(path)


def reader_for(make_study):
    study = make_study()
    return Reader(read_study_file(study)), study.parent


def test_an_xlsx_export_is_read_through_the_mapping(make_study):
    reader, folder = reader_for(make_study)
    book(folder / "run-1.xlsx")
    # the export's "Blank" holds the internal standard: a zero sample (a blank has neither analyte nor IS)
    types = TypesSection(calibrator=["Cal Std"], blank=[], zero=["Blank"], qc=["QC"], sample=["Unknown"])
    injections = read_runs(reader, [RunSource(data="run-1.xlsx", header_row=2, day="2026-11-30")], COLUMNS, types,
                           "T-1")
    assert [i.type for i in injections] == ["calibrator", "calibrator", "zero", "qc", "sample"]
    assert [i.row for i in injections] == [3, 4, 5, 6, 7]                   # sheet rows
    assert {(i.run, i.day, i.analyte, i.sheet) for i in injections} == {("run 1", "2026-11-30", "enro", "Results")}
    for inj, written in zip(injections, ROWS):
        # exact arithmetic: area / IS area, rounded once (fractions)
        assert inj.response == float(Fraction(written[4]) / Fraction(written[5]))
        assert (inj.analyte_response, inj.internal_standard_response) == (written[4], written[5])
        assert inj.level == written[3]
    assert reader.inputs[-1].role == "runs" and reader.inputs[-1].sheet == "Results"


def test_a_csv_export_with_a_run_column_and_no_internal_standard(make_study):
    reader, folder = reader_for(make_study)
    (folder / "batch.csv").write_text(
        "Batch;Name;Kind;Conc;Peak Area\nB1;c1;Cal Std;1,0;100,5\nB1;q1;QC;2,0;201\nB2;c1;Cal Std;1,0;99,5\n",
        encoding="utf-8")
    columns = ColumnsSection(sample="Name", type="Kind", level="Conc", response="Peak Area", run="Batch")
    injections = read_runs(reader, [RunSource(data="batch.csv")], columns, TYPES, "T-1")
    assert [(i.run, i.day, i.response, i.internal_standard_response) for i in injections] == [
        ("B1", "B1", 100.5, None), ("B1", "B1", 201.0, None), ("B2", "B2", 99.5, None)]
    assert reader.inputs[-1].dialect == "detected"


@pytest.mark.parametrize("change, expected", [
    ((1, 5, None), "run-1.xlsx, sheet Results, cell F4: the internal-standard area is missing; a calibrator "
                   "injection needs one to compute the response ratio (only blank and matrix_blank injections may "
                   "have none)"),
    ((1, 5, 0.0), "run-1.xlsx, sheet Results, cell F4: the internal-standard area is 0; the response ratio of a "
                  "calibrator injection needs an area above zero (only blank and matrix_blank injections may have "
                  "none)"),
    ((2, 5, -1.0), "run-1.xlsx, sheet Results, cell F5: the internal-standard area is -1; the response ratio of a "
                   "blank injection needs an area above zero"),
    ((4, 5, None), "run-1.xlsx, sheet Results, cell F7: the internal-standard area is missing; a sample "
                   "injection needs one"),
    ((2, 1, "Solvent"), 'run-1.xlsx, sheet Results, cell B5: injection type "Solvent" is not listed in [types] '
                        '(listed: "Cal Std", "Blank", "QC", "spiked", "unspiked", "reference", "Unknown"); add it '
                        "to the type it means"),
    ((3, 3, None), "run-1.xlsx, sheet Results, cell D6: a qc injection needs a level (its nominal concentration)"),
])
def test_export_errors_name_the_cell(make_study, change, expected):
    reader, folder = reader_for(make_study)
    rows = [list(r) for r in ROWS]
    i, j, value = change
    rows[i][j] = value
    book(folder / "run-1.xlsx", rows)
    with pytest.raises(DataError) as info:
        read_runs(reader, [RunSource(data="run-1.xlsx", header_row=2)], COLUMNS, TYPES, "T-1")
    assert str(info.value).startswith(expected)


@pytest.mark.parametrize("area", [None, 0.0, 10020.0])
def test_a_blank_without_internal_standard_has_no_ratio(make_study, area):
    # ICH M10: a blank has neither analyte nor internal standard; its IS area may be missing or 0, and an IS
    # area it shows (IS carry-over, or blank matrix with IS typed as a blank) gives no ratio either
    reader, folder = reader_for(make_study)
    rows = [list(r) for r in ROWS]
    rows[2][5] = area
    book(folder / "run-1.xlsx", rows)
    blank = read_runs(reader, [RunSource(data="run-1.xlsx", header_row=2)], COLUMNS, TYPES, "T-1")[2]
    assert (blank.type, blank.response, blank.analyte_response) == ("blank", None, 3.0)
    assert blank.internal_standard_response == area


def test_a_mapped_header_missing_from_the_export_is_named(make_study):
    reader, folder = reader_for(make_study)
    book(folder / "run-1.xlsx")
    columns = COLUMNS.model_copy(update={"response": "Height"})
    with pytest.raises(DataError) as info:
        read_runs(reader, [RunSource(data="run-1.xlsx", header_row=2)], columns, TYPES, "T-1")
    assert 'has no column "height"' in str(info.value)
