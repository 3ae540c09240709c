"""Reading .xlsx exports (validator.inputs.workbook).

Each workbook is made here with openpyxl and saved in tmp_path; the expected
numbers are the ones written into it (hand computation: a float written and
read back must be the same float). Expected messages are this project's own
wording (common practice, no published source); the message form
``file, sheet S, cell D14: problem`` is the one asked for in issue #12.
"""

from __future__ import annotations

import datetime
import io
import math
import re
import zipfile
from decimal import Decimal

import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from validator.inputs.tables import read_table
from validator.errors import DataError, StudyError
from validator.inputs.workbook import (CellError, WorkbookTable, read_workbook, sheet_names, sniff_workbook,
                                workbook_instead_of_csv)

REQUIRED = ("sample", "concentration", "response")
OPTIONAL = ("replicate",)
CONCENTRATIONS = [0.5, 1.25, 2.5, 5.0, 10.0, 12.75, 0.1, 0.3, 1e-05, 123456.789, 7.0]
RESPONSES = [0.0123, 0.0251, 0.0498, 0.1002, 0.2003, 0.2551, 0.0021, 0.0060, 2.1e-07, 2469.1, 0.14]


def save(tmp_path, wb, name="run-3.xlsx") -> bytes:
    path = tmp_path / name
    wb.save(path)
    return path.read_bytes()


def results_book(header_at: int = 3, title: bool = True):
    """Sheet "Results": optional title in A1, header on row ``header_at`` (A-D), 11 data rows."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Results"
    if title:
        ws["A1"] = "Run 3, exported 2026-11-30"
        ws.merge_cells("A1:D1")           # a merged title above the table is fine
    for col, name in enumerate(["Sample", "Concentration", "Replicate", "Response"], start=1):
        ws.cell(header_at, col, name)
    for i, (c, r) in enumerate(zip(CONCENTRATIONS, RESPONSES)):
        row = header_at + 1 + i
        ws.cell(row, 1, f"S{i + 1}")
        ws.cell(row, 2, c)
        ws.cell(row, 3, i % 2 + 1)
        ws.cell(row, 4, r)
    return wb, ws


def read(data, **kw):
    return read_workbook(data, "run-3.xlsx", required=REQUIRED, optional=OPTIONAL, **kw)


def message(data, column="response", **kw) -> str:
    with pytest.raises(DataError) as info:
        table = read(data, **kw)
        if column == "sample":
            table.texts(column, max_length=100)
        else:
            table.numbers(column, ".")
    return str(info.value)


def test_a_clean_sheet_reads_back_the_numbers_written(tmp_path):
    wb, _ = results_book()
    table = read(save(tmp_path, wb), header_row=3)
    assert isinstance(table, WorkbookTable)
    assert (table.sheet, table.header_row, table.rows) == ("Results", 3, tuple(range(4, 15)))
    assert table.numbers("concentration", ".") == CONCENTRATIONS     # the values written
    assert table.numbers("response", ",") == RESPONSES               # decimal is moot for number cells
    assert table.texts("sample", max_length=100) == [f"S{i}" for i in range(1, 12)]
    assert table.numbers("replicate", ".") == [1.0, 2.0] * 5 + [1.0]
    assert table.cell("response", 14) == "D14"
    # exact centring: the difference of the written decimals, computed exactly (hand computation)
    offset, centred = table.centred_numbers("concentration", ".")
    assert offset == 0.5
    assert list(centred) == [float(Decimal(repr(c)) - Decimal("0.5")) for c in CONCENTRATIONS]


def test_header_on_row_3_is_found_by_default_when_rows_above_are_empty(tmp_path):
    wb, _ = results_book(title=False)
    table = read(save(tmp_path, wb))
    assert table.header_row == 3 and table.rows[0] == 4


def test_a_title_row_is_taken_as_the_header_unless_the_header_row_is_given(tmp_path):
    wb, _ = results_book()
    assert message(save(tmp_path, wb)) == (
        'run-3.xlsx, sheet Results, cell A1: unknown column "run 3, exported 2026-11-30"; expected '
        '"sample", "concentration", "response", "replicate" (row 1, the first non-empty row, was taken '
        "as the header; give header_row = ... if the header is lower)")


def test_text_in_a_numeric_column_names_sheet_and_cell(tmp_path):
    wb, ws = results_book()
    ws["D14"] = "n.a."
    assert message(save(tmp_path, wb), header_row=3) == \
        'run-3.xlsx, sheet Results, cell D14: "n.a." is not a number'


def test_a_number_stored_as_text_is_refused(tmp_path):
    wb, ws = results_book()
    ws["D5"] = "0.0251"
    assert message(save(tmp_path, wb), header_row=3) == (
        'run-3.xlsx, sheet Results, cell D5: "0.0251" is text, not a number; store the column as '
        "numbers in the workbook")


def test_a_formula_without_a_saved_value(tmp_path):
    wb, ws = results_book()
    ws["D7"] = "=B7*0.02"                 # openpyxl saves formulas without a calculated value
    assert message(save(tmp_path, wb), header_row=3) == (
        "run-3.xlsx, sheet Results, cell D7: the cell is a formula without a saved value; open the "
        "workbook in its spreadsheet program, let it calculate and save it")


def test_a_formula_with_a_saved_value_gives_that_value(tmp_path):
    wb, ws = results_book()
    ws["D7"] = "=B7*0.02"
    data = save(tmp_path, wb)
    # write the value a spreadsheet program would have saved beside the formula
    patched = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(data)) as src, zipfile.ZipFile(patched, "w") as dst:
        for info in src.infolist():
            body = src.read(info)
            if info.filename == "xl/worksheets/sheet1.xml":
                body, count = re.subn(rb'(<c r="D7"[^>]*>\s*<f>B7\*0.02</f>)\s*(<v\s*/>|<v></v>)?',
                                      rb"\1<v>0.1</v>", body)
                assert count == 1
            dst.writestr(info, body)
    table = read(patched.getvalue(), header_row=3)
    assert table.numbers("response", ".")[3] == 0.1      # the saved value, 5.0 * 0.02 in decimal


def test_a_formula_whose_saved_result_is_empty_text_is_an_empty_cell(tmp_path):
    wb, ws = results_book()
    ws["D7"] = '=""'
    data = _patched(save(tmp_path, wb), "xl/worksheets/sheet1.xml",
                    lambda body: body.replace(b'<c r="D7"><f>""</f><v /></c>',
                                              b'<c r="D7" t="str"><f>""</f><v></v></c>'))
    assert message(data, header_row=3) == "run-3.xlsx, sheet Results, cell D7: the cell is empty"


def test_merged_cells_in_the_data_area(tmp_path):
    wb, ws = results_book()
    ws.merge_cells("B5:B6")
    assert message(save(tmp_path, wb), header_row=3) == (
        "run-3.xlsx, sheet Results, cell B5: cells B5:B6 are merged; a table must have one value per "
        "cell, so unmerge them")


def test_a_date_where_a_number_belongs(tmp_path):
    wb, ws = results_book()
    ws["B9"] = datetime.datetime(2026, 3, 1)
    assert message(save(tmp_path, wb), column="concentration", header_row=3) == (
        "run-3.xlsx, sheet Results, cell B9: 2026-03-01T00:00:00 is a date or time, not a number (the "
        "cell is formatted as a date); format the column as numbers")


def test_a_boolean_where_a_number_or_a_name_belongs(tmp_path):
    wb, ws = results_book()
    ws["D10"] = True
    ws["A11"] = False
    data = save(tmp_path, wb)
    assert message(data, header_row=3) == \
        "run-3.xlsx, sheet Results, cell D10: TRUE is a true/false value, not a number"
    assert message(data, column="sample", header_row=3) == \
        "run-3.xlsx, sheet Results, cell A11: FALSE is a true/false value, not a name"


def test_an_error_value(tmp_path):
    wb, ws = results_book()
    ws["D8"] = "#DIV/0!"                  # openpyxl stores this as an error cell
    assert message(save(tmp_path, wb), header_row=3) == \
        'run-3.xlsx, sheet Results, cell D8: the cell holds the error value "#DIV/0!"'


def test_an_empty_cell_in_a_numeric_column(tmp_path):
    wb, ws = results_book()
    ws["D6"] = None
    assert message(save(tmp_path, wb), header_row=3) == \
        "run-3.xlsx, sheet Results, cell D6: the cell is empty"


def test_a_value_right_of_the_table(tmp_path):
    wb, ws = results_book()
    ws["F8"] = "re-injected"
    assert message(save(tmp_path, wb), header_row=3) == (
        'run-3.xlsx, sheet Results, cell F8: "re-injected" is outside the table (the header spans A to '
        "D); give the column a name or clear the cell")


def test_a_second_sheet_chosen_by_name(tmp_path):
    wb = openpyxl.Workbook()
    summary = wb.active
    summary.title = "Summary"
    summary["A1"] = "see sheet Run 3"
    ws = wb.create_sheet("Run 3")
    ws.append(["sample", "concentration", "response"])
    ws.append(["S1", 1, 0.5])
    ws.append(["S2", 2, "n.a."])
    data = save(tmp_path, wb)
    table = read(data, sheet="Run 3")
    assert table.sheet == "Run 3" and table.numbers("concentration", ".") == [1.0, 2.0]
    assert message(data, sheet="Run 3") == 'run-3.xlsx, sheet "Run 3", cell C3: "n.a." is not a number'
    assert sheet_names(data) == ["Summary", "Run 3"]
    with pytest.raises(DataError) as info:
        read(data, sheet="run 3")
    assert str(info.value) == ('run-3.xlsx: has no sheet "run 3" (sheets: "Summary", "Run 3"); '
                               'did you mean "Run 3"?')


def test_a_hidden_first_sheet_is_not_read_by_default(tmp_path):
    wb, ws = results_book()
    other = wb.create_sheet("Raw")
    ws.sheet_state = "hidden"
    other["A1"] = "x"
    with pytest.raises(CellError) as info:
        read(save(tmp_path, wb))
    assert str(info.value) == ('run-3.xlsx, sheet Results: the first sheet is hidden; give sheet = ... '
                               'to read it on purpose (sheets: "Results", "Raw")')


def test_header_problems_name_the_cell(tmp_path):
    wb, ws = results_book()
    ws["C3"] = "Response"
    assert message(save(tmp_path, wb), header_row=3) == \
        'run-3.xlsx, sheet Results, cell D3: the header names column "response" twice'
    wb, ws = results_book()
    ws["C3"] = None
    assert message(save(tmp_path, wb), header_row=3) == \
        "run-3.xlsx, sheet Results, cell C3: the header has an empty column name"
    wb, ws = results_book()
    ws["B3"] = 5
    assert message(save(tmp_path, wb), header_row=3) == \
        "run-3.xlsx, sheet Results, cell B3: the header cell holds the number 5, not a column name"
    wb, _ = results_book()
    assert message(save(tmp_path, wb), header_row=2) == \
        "run-3.xlsx, sheet Results: the header row 2 is empty"


def test_the_error_is_a_data_error_with_its_location(tmp_path):
    wb, ws = results_book()
    ws["D14"] = "n.a."
    table = read(save(tmp_path, wb), header_row=3)
    with pytest.raises(CellError) as info:
        table.numbers("response", ".")
    err = info.value
    assert isinstance(err, DataError) and isinstance(err, StudyError) and isinstance(err, ValueError)
    assert (err.file, err.sheet, err.cell, err.row, err.column, err.value) == \
        ("run-3.xlsx", "Results", "D14", 14, "response", "n.a.")


def test_limits_and_non_workbooks(tmp_path):
    wb, _ = results_book()
    data = save(tmp_path, wb)
    with pytest.raises(DataError, match=r"^run-3\.xlsx: sheet Results has more than 5 data rows; refused$"):
        read(data, header_row=3, max_rows=5)
    with pytest.raises(DataError, match=r"^run-3\.xlsx: unpacks to \d+ bytes, over the limit of 1000 bytes$"):
        read(data, header_row=3, max_unpacked_bytes=1000)
    with pytest.raises(DataError) as info:
        read(b"sample,concentration,response\n")
    assert str(info.value) == ("run-3.xlsx: is not an .xlsx workbook (it is not a ZIP archive holding "
                               "xl/workbook.xml)")
    with pytest.raises(ValueError, match=r"header_row must be an integer of at least 1; got 0"):
        read(data, header_row=0)


ODS = b"PK\x03\x04" + b"\x00" * 26 + b"mimetypeapplication/vnd.oasis.opendocument.spreadsheet" + b"\x00" * 40
XLS = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 504


def test_workbooks_are_told_from_their_first_bytes(tmp_path):
    # signatures: ECMA-376 (ZIP with xl/workbook.xml), OpenDocument 1.2 part 3 section 3.3
    # (stored "mimetype" first), [MS-CFB] 2.2 (OLE2 header signature)
    wb, _ = results_book()
    assert sniff_workbook(save(tmp_path, wb)) == "xlsx"
    assert sniff_workbook(ODS) == "ods"
    assert sniff_workbook(XLS) == "xls"
    assert sniff_workbook(b"concentration,response\n1,2\n") is None
    assert workbook_instead_of_csv(b"concentration,response\n1,2\n", "c.csv") is None


def test_a_workbook_named_as_data_is_read_as_a_workbook(tmp_path):
    # read_table tells an .xlsx file from its bytes (not its name) and reads the sheet;
    # a problem names file, sheet and cell (the project's own wording, no published source)
    wb, _ = results_book()
    wb.create_sheet("Summary")
    data = save(tmp_path, wb)
    table = read_table(data, "calibration.csv", required=REQUIRED, optional=OPTIONAL, header_row=3)
    assert table.sheet == "Results" and table.numbers("concentration") == CONCENTRATIONS   # as written
    with pytest.raises(DataError) as info:
        read_table(data, "calibration.csv", delimiter=",", required=("concentration", "response"))
    assert str(info.value).startswith(
        'calibration.csv, sheet Results, cell A1: unknown column "run 3, exported 2026-11-30"')
    with pytest.raises(DataError) as info:
        read_table(data, "calibration.csv", required=REQUIRED, optional=OPTIONAL, sheet="Resluts")
    assert str(info.value).startswith('calibration.csv: has no sheet "Resluts" (sheets: "Results", "Summary")')
    with pytest.raises(DataError) as info:
        read_table(XLS, "calibration.csv", delimiter=",", required=("concentration",))
    assert str(info.value) == (
        "calibration.csv: is an Excel 97-2003 workbook (.xls) or another OLE2 compound file, not CSV "
        'text; save it as .xlsx and give sheet = "..." for this file in the study, or export the sheet '
        "as CSV (UTF-8)")
    with pytest.raises(DataError) as info:
        read_table(ODS, "calibration.csv", delimiter=",", required=("concentration",))
    assert str(info.value) == (
        "calibration.csv: is an OpenDocument spreadsheet (.ods), not CSV text; save it as .xlsx and give "
        'sheet = "..." for this file in the study, or export the sheet as CSV (UTF-8)')
    with pytest.raises(DataError) as info:
        read(ODS)
    assert str(info.value) == ("run-3.xlsx: is an OpenDocument spreadsheet (.ods), which cannot be read; "
                               "save it as .xlsx or export the sheet as CSV (UTF-8)")


def _patched(data: bytes, part: str, change) -> bytes:
    out = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(data)) as src, zipfile.ZipFile(out, "w") as dst:
        for info in src.infolist():
            body = src.read(info)
            dst.writestr(info, change(body) if info.filename == part else body)
    return out.getvalue()


@pytest.mark.parametrize("stored,expected", [
    (b"1e999", "run-3.xlsx, sheet Sheet, cell A2: the number is too large (the largest magnitude is "
               "about 1.8e308)"),
    (b"abc", "run-3.xlsx, sheet Sheet: the sheet cannot be read after row 1 (ValueError: invalid literal "
             "for int() with base 10: 'abc')"),
])
def test_a_corrupt_cell_value_is_a_data_error(tmp_path, stored, expected):
    wb = openpyxl.Workbook()
    wb.active.append(["a"])
    wb.active.append([1.5])
    data = _patched(save(tmp_path, wb), "xl/worksheets/sheet1.xml",
                    lambda body: body.replace(b"<v>1.5</v>", b"<v>" + stored + b"</v>"))
    with pytest.raises(DataError) as info:
        read_workbook(data, "run-3.xlsx", required=("a",)).numbers("a", ".")
    assert str(info.value) == expected


def test_a_corrupt_workbook_part_is_a_data_error(tmp_path):
    wb, _ = results_book()
    data = _patched(save(tmp_path, wb), "xl/workbook.xml", lambda body: b"garbage")
    with pytest.raises(DataError) as info:
        read(data)
    assert str(info.value) == ("run-3.xlsx: is not a readable .xlsx workbook (ParseError: syntax error: "
                               "line 1, column 0)")


@settings(max_examples=30, deadline=None)
@given(st.lists(st.floats(allow_nan=False, allow_infinity=False), min_size=1, max_size=20))
def test_any_finite_float_written_reads_back_as_stored(tmp_path_factory, values):
    """Property: a number cell comes back as the float of the text stored in the file.

    openpyxl writes floats with 16 significant digits ("%.16g", openpyxl/compat/strings.py), so the
    expected value is the float of that text: the reader adds no loss of its own.
    """
    wb = openpyxl.Workbook()
    wb.active.append(["response"])
    for v in values:
        wb.active.append([v])
    path = tmp_path_factory.mktemp("roundtrip") / "r.xlsx"
    wb.save(path)
    table = read_workbook(path.read_bytes(), "r.xlsx", required=("response",))
    stored = [float("%.16g" % v) for v in values]
    if all(math.isfinite(v) for v in stored):
        assert table.numbers("response", ".") == stored
    else:       # 16 digits of a value near the float limit round beyond it: refused, never inf
        with pytest.raises(CellError, match=r"the number is too large"):
            table.numbers("response", ".")


@pytest.mark.parametrize("stored", ["2.2921523851807028e+16", "0.30000000000000004", "5e-324",
                                    "-1.7976931348623157e+308", "123456789.12345679"])
def test_seventeen_significant_digits_in_the_file_are_kept(tmp_path, stored):
    """A value stored with 17 significant digits (as spreadsheet programs write them) is read exactly.

    Expected value: Python's correctly rounded float() of the stored text.
    """
    wb = openpyxl.Workbook()
    wb.active.append(["response"])
    wb.active.append([1.5])
    data = _patched(save(tmp_path, wb), "xl/worksheets/sheet1.xml",
                    lambda body: body.replace(b"<v>1.5</v>", b"<v>" + stored.encode() + b"</v>"))
    table = read_workbook(data, "r.xlsx", required=("response",))
    assert table.numbers("response", ".") == [float(stored)]
    assert table.columns["response"] == [repr(float(stored))]
