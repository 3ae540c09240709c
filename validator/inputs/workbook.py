"""Reading one sheet of an .xlsx workbook into the same table as a CSV file.

Instrument software often exports .xlsx workbooks. :func:`read_workbook`
takes the bytes of such a file (the caller reads them, with the same size
checks as for CSV), picks a sheet and a header row, and returns a
:class:`WorkbookTable`: a :class:`~validator.inputs.tables.Table` whose raw strings
go through the same strict number parsing and messages, and which knows the
sheet and cell of every value so that each message names them::

    run-3.xlsx, sheet Results, cell D14: "n.a." is not a number

What a workbook can hold that a CSV file cannot is refused with a message
naming the cell: a formula whose value was never calculated and saved, merged
cells in the table, an error value (``#DIV/0!``), and in a column read as
numbers a date or time, a true/false value or text.

:func:`sniff_workbook` tells a workbook (.xlsx, .xlsm, .xlsb, .xls, .ods) from
its first bytes, and :func:`workbook_instead_of_csv` turns that into the
message to give when such a file is named where CSV text is expected.

Parsing is done by openpyxl in read-only (streaming) mode; the package never
writes to the workbook and never evaluates formulas.
"""

from __future__ import annotations

import io
import math
import re
import warnings
import zipfile
from dataclasses import dataclass, field
from datetime import date, datetime, time, timedelta
from xml.etree import ElementTree

from .tables import DEFAULT_MAX_ROWS, MAX_NAME_LENGTH, Table, exact_centre
from .dialect import is_number
from ..errors import DataError, escape_control, shorten, show

__all__ = ["WorkbookTable", "CellError", "read_workbook", "sniff_workbook", "workbook_instead_of_csv",
           "sheet_names", "DEFAULT_MAX_UNPACKED_BYTES"]

DEFAULT_MAX_UNPACKED_BYTES = 1024 * 1024 * 1024   # the parts of one .xlsx, uncompressed
_MAIN_NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_MERGE_CELL = f"{{{_MAIN_NS}}}mergeCell"
_CELL = f"{{{_MAIN_NS}}}c"
_FORMULA = f"{{{_MAIN_NS}}}f"
_VALUE = f"{{{_MAIN_NS}}}v"
_ROW = f"{{{_MAIN_NS}}}row"
_SHEET = f"{{{_MAIN_NS}}}sheet"
_OLE2 = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_ZIP = (b"PK\x03\x04", b"PK\x05\x06")
_PLAIN_SHEET_NAME = re.compile(r"[A-Za-z0-9_.\-]+")

# kinds of cell value, as kept per cell
NUMBER, TEXT, EMPTY, BOOLEAN, DATE = "number", "text", "empty", "boolean", "date"


def _sheet_label(sheet: str) -> str:
    """A sheet name as written in messages: bare when plain, else in double quotes."""
    s = show(sheet, 100)
    return s if _PLAIN_SHEET_NAME.fullmatch(sheet) else f'"{s}"'


def _column_letter(index: int) -> str:
    """Spreadsheet column letters of a 1-based column index (1 -> A, 27 -> AA)."""
    letters = ""
    while index:
        index, rest = divmod(index - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


class CellError(DataError):
    """A :class:`~validator.errors.DataError` located by sheet and cell.

    Attributes
    ----------
    sheet : str
        The sheet's name.
    cell : str or None
        The cell reference (``"D14"``), or None for a problem of the whole sheet.

    ``row`` is the sheet's row number and ``column`` the header name (when
    known), as for CSV files, so that code handling :class:`DataError` keeps
    working. The message reads ``file, sheet S, cell D14: problem``.
    """

    def __init__(self, problem: str, *, file: str, sheet: str, cell: str | None = None,
                 row: int | None = None, column: str | None = None, value: object = None):
        super().__init__(problem, file=file, row=row, column=column, value=value)
        self.sheet = sheet
        self.cell = cell
        where = f"{show(file, 300)}, sheet {_sheet_label(sheet)}"
        if cell is not None:
            where += f", cell {cell}"
        self.args = (escape_control(f"{where}: {problem}"),)


@dataclass(frozen=True)
class WorkbookTable(Table):
    """One sheet of a workbook read into columns, each value with its cell.

    ``columns`` holds raw strings as for a CSV file: a number cell as the
    shortest text that reads back to the same float (``repr``), a text cell
    as its text (stripped), a date as ISO 8601 text, an empty cell as ``""``.
    ``rows`` holds the sheet's row numbers.

    Attributes
    ----------
    sheet : str
        The sheet read.
    header_row : int
        The sheet row holding the column names.
    letters : dict
        Column name -> column letters in the sheet (``"D"``).
    kinds : dict
        Column name -> tuple of ``"number"``, ``"text"``, ``"empty"``,
        ``"boolean"`` or ``"date"``, one per row: what the cell held.
    hidden_rows : tuple of int
        The data rows the sheet hides (by hand or by a filter); the caller decides
        (:meth:`validator.inputs.loading.Reader.table` refuses those not excluded).
    """

    sheet: str = ""
    header_row: int = 1
    hidden_rows: tuple[int, ...] = ()
    letters: dict = field(default_factory=dict)
    kinds: dict = field(default_factory=dict)

    def cell(self, name: str, row: int) -> str:
        """The cell reference of column ``name`` in sheet row ``row`` (``"D14"``)."""
        return f"{self.letters[name]}{row}"

    def error(self, problem: str, *, column: str, row: int, value: object = None) -> CellError:
        """A :class:`CellError` for the cell of ``column`` in sheet row ``row``."""
        return CellError(problem, file=self.path, sheet=self.sheet, cell=self.cell(column, row),
                         row=row, column=column, value=value)

    def numbers(self, name: str, decimal: str = ".") -> list:
        """Column ``name`` as finite floats; every cell must be a number cell.

        ``decimal`` is accepted for the same call as on a CSV :class:`Table`
        and ignored: a number cell holds a binary number, not text with a
        decimal mark.
        """
        out = []
        for text, kind, row in zip(self.columns[name], self.kinds[name], self.rows):
            if kind == NUMBER:
                try:
                    value = float(text)
                except OverflowError:
                    value = math.inf
                if math.isinf(value):      # the stored text was beyond the float range
                    raise self.error("the number is too large (the largest magnitude is about 1.8e308)",
                                     column=name, row=row, value=text)
                if math.isnan(value):
                    raise self.error('the cell holds "not a number" (NaN), not a finite number',
                                     column=name, row=row, value=text)
                out.append(value)
                continue
            if kind == EMPTY:
                raise self.error("the cell is empty", column=name, row=row, value=text)
            if kind == DATE:
                raise self.error(f"{text} is a date or time, not a number (the cell is formatted as a "
                                 "date); format the column as numbers", column=name, row=row, value=text)
            if kind == BOOLEAN:
                raise self.error(f"{text} is a true/false value, not a number", column=name, row=row,
                                 value=text)
            problem = f'"{show(text)}" is not a number'
            if _looks_numeric(text):
                problem = (f'"{show(text)}" is text, not a number; store the column as numbers in the '
                           "workbook")
            raise self.error(problem, column=name, row=row, value=text)
        return out

    def centred_numbers(self, name: str, decimal: str = "."):
        """Column ``name`` as (offset, values - offset), the subtraction done exactly (see Table)."""
        self.numbers(name)
        return exact_centre(self.columns[name], ".")

    def texts(self, name: str, max_length: int | None = None) -> list:
        """Column ``name`` as stripped strings, as for a CSV table; true/false cells are refused."""
        for text, kind, row in zip(self.columns[name], self.kinds[name], self.rows):
            if kind == BOOLEAN:
                raise self.error(f"{text} is a true/false value, not a name", column=name, row=row,
                                 value=text)
        try:
            return super().texts(name, max_length)
        except DataError as exc:
            raise self.error(exc.problem, column=name, row=exc.row, value=exc.value) from None


def _looks_numeric(text: str) -> bool:
    return is_number(text, ".") or is_number(text, ",")


def sniff_workbook(data: bytes) -> str | None:
    """The kind of workbook ``data`` is, from its first bytes and parts list, or None.

    Returns ``"xlsx"`` (also .xlsm), ``"xlsb"``, ``"ods"``, ``"xls"`` (an OLE2
    compound file, as Excel 97-2003 wrote; Word .doc files share the
    signature) or ``None`` (not a workbook this function knows).

    Notes
    -----
    OLE2 compound files start with the 8 bytes D0 CF 11 E0 A1 B1 1A E1.
    Office Open XML (.xlsx, .xlsm, .xlsb) and OpenDocument (.ods) files are
    ZIP archives (signature ``PK\\x03\\x04``): an .xlsx holds the part
    ``xl/workbook.xml``, an .xlsb ``xl/workbook.bin``; an .ods starts with a
    stored part ``mimetype`` holding
    ``application/vnd.oasis.opendocument.spreadsheet``.

    References
    ----------
    .. [1] ECMA-376, Office Open XML File Formats, Part 2: Open Packaging Conventions.
    .. [2] OASIS Open Document Format for Office Applications (OpenDocument) v1.2,
       Part 3: Packages, section 3.3 (MIME type stream).
    .. [3] Microsoft, [MS-CFB] Compound File Binary File Format, section 2.2 (header signature).
    """
    if data.startswith(_OLE2):
        return "xls"
    if not data.startswith(_ZIP):
        return None
    if data[30:38] == b"mimetype" and b"application/vnd.oasis.opendocument.spreadsheet" in data[38:120]:
        return "ods"
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as archive:
            names = set(archive.namelist())
    except (zipfile.BadZipFile, ValueError, OSError):
        return None
    if "xl/workbook.xml" in names:
        return "xlsx"
    if "xl/workbook.bin" in names:
        return "xlsb"
    if "content.xml" in names and "mimetype" in names:
        try:
            with zipfile.ZipFile(io.BytesIO(data)) as archive:
                if archive.read("mimetype")[:100].startswith(b"application/vnd.oasis.opendocument.spreadsheet"):
                    return "ods"
        except (zipfile.BadZipFile, ValueError, OSError, KeyError):
            return None
    return None


def sheet_names(data: bytes) -> list | None:
    """The sheet names of an .xlsx workbook in tab order, from ``xl/workbook.xml``; None if unreadable."""
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as archive:
            info = archive.getinfo("xl/workbook.xml")
            if info.file_size > 10 * 1024 * 1024:
                return None
            root = ElementTree.fromstring(archive.read(info))
    except (zipfile.BadZipFile, KeyError, ValueError, OSError, ElementTree.ParseError):
        return None
    return [s.get("name", "") for s in root.iter(_SHEET)]


def workbook_instead_of_csv(data: bytes, file: str) -> DataError | None:
    """The error to raise when a workbook is given where CSV text is expected, or None.

    Call it before decoding the bytes as text: a workbook is binary and would
    otherwise be reported as "not UTF-8 text".
    """
    kind = sniff_workbook(data)
    if kind is None:
        return None
    if kind == "xlsx":
        names = sheet_names(data) or []
        listed = ", ".join(f'"{show(n, 40)}"' for n in names[:10]) + (", ..." if len(names) > 10 else "")
        first = f'"{show(names[0], 40)}"' if names else '"..."'
        sheets = f" (sheets: {listed})" if names else ""
        return DataError(f"is an .xlsx workbook{sheets}, not CSV text; give sheet = {first} for this "
                         "file in the study, or export the sheet as CSV (UTF-8)", file=file)
    what = {"xlsb": "an .xlsb (binary) workbook", "xls": "an Excel 97-2003 workbook (.xls) or another "
            "OLE2 compound file", "ods": "an OpenDocument spreadsheet (.ods)"}[kind]
    return DataError(f"is {what}, not CSV text; save it as .xlsx and give sheet = \"...\" for this file "
                     "in the study, or export the sheet as CSV (UTF-8)", file=file)


def _check_archive(data: bytes, file: str, max_unpacked_bytes: int) -> None:
    kind = sniff_workbook(data)
    if kind is None:
        raise DataError("is not an .xlsx workbook (it is not a ZIP archive holding xl/workbook.xml)",
                        file=file)
    if kind != "xlsx":
        what = {"xlsb": "an .xlsb (binary) workbook", "xls": "an Excel 97-2003 workbook (.xls)",
                "ods": "an OpenDocument spreadsheet (.ods)"}[kind]
        raise DataError(f"is {what}, which cannot be read; save it as .xlsx or export the sheet as "
                        "CSV (UTF-8)", file=file)
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        total = sum(i.file_size for i in archive.infolist())
    if total > max_unpacked_bytes:
        raise DataError(f"unpacks to {total} bytes, over the limit of {max_unpacked_bytes} bytes", file=file)


def _scan_sheet(source, file: str, sheet: str):
    """Merged ranges, formula cells without a saved value and hidden rows (hidden by hand or by a
    filter: ``<row hidden="1">``, ECMA-376 Part 1, 18.3.1.73), from the sheet's XML."""
    merged, uncalculated, hidden = [], [], set()
    try:
        for _, element in ElementTree.iterparse(source):
            if element.tag == _ROW:
                if element.get("hidden") in ("1", "true") and (element.get("r") or "").isdigit():
                    hidden.add(int(element.get("r")))
                element.clear()
            elif element.tag == _CELL:
                if element.find(_FORMULA) is not None:
                    v = element.find(_VALUE)
                    # a saved empty text result is <v></v> in a cell of type "str"
                    if v is None or (not v.text and element.get("t") != "str"):
                        uncalculated.append(element.get("r"))
                element.clear()
            elif element.tag == _MERGE_CELL:
                merged.append(element.get("ref"))
    except ElementTree.ParseError as exc:
        raise CellError(f"the sheet's XML cannot be read ({exc})", file=file, sheet=sheet) from None
    return merged, uncalculated, hidden


def _range_bounds(ref: str):
    """(min_col, min_row, max_col, max_row) of a range such as "B3:D4"."""
    from openpyxl.utils.cell import range_boundaries
    return range_boundaries(ref)


def _cell_text(cell) -> tuple:
    """(kind, raw string) of one read-only cell."""
    value = cell.value
    if value is None:
        return EMPTY, ""
    if isinstance(value, bool):
        return BOOLEAN, "TRUE" if value else "FALSE"
    if isinstance(value, (datetime, date, time)):
        return DATE, value.isoformat()
    if isinstance(value, timedelta):
        return DATE, str(value)
    if isinstance(value, int):
        return NUMBER, str(value)
    if isinstance(value, float):
        return NUMBER, repr(value)
    text = str(value).strip()
    return (EMPTY, "") if text == "" else (TEXT, text)


def read_workbook(data: bytes, file: str, *, required: tuple, optional: tuple = (),
                  sheet: str | None = None, header_row: int | None = None,
                  max_rows: int = DEFAULT_MAX_ROWS, other_columns: str = "refuse",
                  max_unpacked_bytes: int = DEFAULT_MAX_UNPACKED_BYTES) -> WorkbookTable:
    """Read one sheet of an .xlsx workbook into a :class:`WorkbookTable`.

    Parameters
    ----------
    data : bytes
        The whole file (the caller reads it with the size checks used for CSV).
    file : str
        The file as written in the study, for messages.
    required, optional : tuple of str, keyword-only
        Lower-case column names, as for :func:`validator.inputs.tables.read_table`:
        other columns are refused, so that a misspelt header is not ignored.
    sheet : str or None
        The sheet's name; by default the first sheet in tab order (it must be
        a visible worksheet).
    header_row : int or None
        The sheet row (1-based) holding the column names; by default the first
        row with a non-empty cell. Rows above it are ignored.
    max_rows, max_unpacked_bytes : int
        Limits on data rows and on the workbook's uncompressed size.
    other_columns : {"refuse", "ignore"}
        What to do with a column that is neither required nor optional: refuse
        it (a misspelt header), or leave it unread (an instrument export used
        as it is, whose other columns the study does not map).

    Returns
    -------
    WorkbookTable

    Raises
    ------
    DataError
        (a :class:`CellError` where a sheet is concerned) for a file that is
        not a readable .xlsx, an unknown sheet, a hidden or chart first sheet,
        an empty header row, merged cells in the table, a formula without a
        saved value, an error value, a value right of the header, and the
        header problems a CSV file can have.
    ValueError
        For ``header_row`` below 1 or a non-positive limit.

    Notes
    -----
    The table spans the header's columns, from the first to the last
    non-empty header cell, and every row below the header; rows whose cells
    there are all empty are skipped, except in a one-column table, where an empty
    row between data rows is a row with an empty cell (empty rows after the last
    data row end the table). Formula cells give the value the
    spreadsheet program saved with them; validator computes no formula.
    Dates are recognised by openpyxl from the cell's number format.

    References
    ----------
    .. [1] ECMA-376, Office Open XML File Formats, Part 1, section 18.3
       (worksheets: cells, formulas, merged cells).
    """
    if header_row is not None and (isinstance(header_row, bool) or not isinstance(header_row, int)
                                   or header_row < 1):
        raise ValueError(f"header_row must be an integer of at least 1; got {header_row!r}")
    if sheet is not None and not isinstance(sheet, str):
        raise ValueError(f"sheet must be a sheet name (text) or None; got {sheet!r}")
    if max_rows < 1 or max_unpacked_bytes < 1:
        raise ValueError(f"max_rows and max_unpacked_bytes must be at least 1; got {max_rows!r}, "
                         f"{max_unpacked_bytes!r}")
    _check_archive(data, file, max_unpacked_bytes)

    import openpyxl

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")      # openpyxl's notes on unsupported extensions
            book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True,
                                          keep_links=False)
    except Exception as exc:     # noqa: BLE001 - any failure to parse user data is the user's file
        raise DataError(f"is not a readable .xlsx workbook ({type(exc).__name__}: "
                        f"{show(str(exc))})", file=file) from None
    try:
        return _read_sheet(book, file, required=required, optional=optional, sheet=sheet,
                           header_row=header_row, max_rows=max_rows, other_columns=other_columns)
    finally:
        book.close()


def _choose_sheet(book, file: str, sheet: str | None):
    names = book.sheetnames
    listed = ", ".join(f'"{show(n, 40)}"' for n in names[:20]) + (", ..." if len(names) > 20 else "")
    if sheet is None:
        if not names:
            raise DataError("has no sheets", file=file)
        ws = book[names[0]]
        state = getattr(ws, "sheet_state", "visible")
        if not hasattr(ws, "iter_rows"):
            raise CellError(f"the first sheet is a chart, not a table; give sheet = ... (sheets: {listed})",
                            file=file, sheet=names[0])
        if state != "visible":
            raise CellError(f"the first sheet is {state}; give sheet = ... to read it on purpose "
                            f"(sheets: {listed})", file=file, sheet=names[0])
        return ws
    if sheet not in names:
        hint = ""
        folded = [n for n in names if n.strip().casefold() == sheet.strip().casefold()]
        if folded:
            hint = f'; did you mean "{show(folded[0], 40)}"?'
        raise DataError(f'has no sheet "{show(sheet, 100)}" (sheets: {listed}){hint}', file=file)
    ws = book[sheet]
    if not hasattr(ws, "iter_rows"):
        raise CellError("is a chart, not a table", file=file, sheet=sheet)
    return ws


def _rows(ws, file: str, sheet: str):
    """The sheet's rows as (row number, cells), converting openpyxl's failures to DataError."""
    ws.reset_dimensions()      # do not trust the stored dimension: read the cells themselves
    iterator = iter(ws.iter_rows())
    number = 0
    while True:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                cells = next(iterator)
        except StopIteration:
            return
        except Exception as exc:     # noqa: BLE001 - a malformed sheet is the user's file
            raise CellError(f"the sheet cannot be read after row {number} ({type(exc).__name__}: "
                            f"{show(str(exc))})", file=file, sheet=sheet) from None
        number += 1
        real = [c for c in cells if getattr(c, "row", None) is not None]
        if real:
            number = real[0].row
        yield number, real


def _read_sheet(book, file, *, required, optional, sheet, header_row, max_rows,
                other_columns="refuse") -> WorkbookTable:
    ws = _choose_sheet(book, file, sheet)
    name = ws.title

    def err(problem, cell=None, **kw):
        return CellError(problem, file=file, sheet=name, cell=cell, **kw)

    with ws._get_source() as source:     # openpyxl's read-only worksheet keeps the part's path
        merged, uncalculated, hidden = _scan_sheet(source, file, name)
    uncalculated = set(uncalculated)

    header = None           # list of (column index, name)
    found_header_row = None
    records = []            # (row number, {column index: cell})
    for row_number, cells in _rows(ws, file, name):
        if header is None:
            if header_row is not None and row_number < header_row:
                continue
            filled = [c for c in cells if _cell_text(c)[0] != EMPTY or c.coordinate in uncalculated]
            if not filled:
                if header_row is not None and row_number >= header_row:
                    raise err(f"the header row {header_row} is empty")
                continue
            if header_row is not None and row_number > header_row:
                raise err(f"the header row {header_row} is empty")
            found_header_row = row_number
            first, last = filled[0].column, filled[-1].column
            by_column = {c.column: c for c in cells}
            header = []
            for col in range(first, last + 1):
                ref = f"{_column_letter(col)}{row_number}"
                c = by_column.get(col)
                if ref in uncalculated:
                    raise err("the header cell is a formula without a saved value; open the workbook in "
                              "its spreadsheet program, let it calculate and save it", ref)
                kind, text = _cell_text(c) if c is not None else (EMPTY, "")
                if kind == EMPTY:
                    raise err("the header has an empty column name", ref)
                if c.data_type == "e":
                    raise err(f'the header cell holds the error value "{show(text)}"', ref)
                if kind != TEXT:
                    raise err(f"the header cell holds the {kind} {show(text)}, not a column name", ref)
                header.append((col, text.lower()))
            continue
        if len(records) >= max_rows:
            raise DataError(f"sheet {_sheet_label(name)} has more than {max_rows} data rows; refused",
                            file=file)
        records.append((row_number, {c.column: c for c in cells}))

    if header is None:
        if header_row is not None:
            raise err(f"the header row {header_row} is empty")
        raise err("is empty (no header row)")

    first_col, last_col = header[0][0], header[-1][0]
    names = [n for _, n in header]
    seen = set()
    for col, n in header:
        if n in seen:
            raise err(f'the header names column "{show(n)}" twice', f"{_column_letter(col)}{found_header_row}")
        seen.add(n)
    allowed = set(required) | set(optional)
    if other_columns == "ignore":       # columns the study does not read are left unread
        header = [(col, n) for col, n in header if n in allowed]
        names = [n for _, n in header]
    for col, n in header:
        if n not in allowed:
            expected = ", ".join(f'"{c}"' for c in (*required, *optional))
            hint = ""
            if header_row is None:
                hint = (f" (row {found_header_row}, the first non-empty row, was taken as the header; "
                        "give header_row = ... if the header is lower)")
            raise err(f'unknown column "{show(n)}"; expected {expected}{hint}',
                      f"{_column_letter(col)}{found_header_row}")
    for n in required:
        if n not in names:
            found = shorten(", ".join(f'"{c}"' for c in names), 4 * MAX_NAME_LENGTH)
            raise err(f'the header row {found_header_row} has no column "{n}" (found: {found})')

    # merged cells that touch the table (header row and below, header columns)
    for ref in merged:
        min_col, min_row, max_col, max_row = _range_bounds(ref)
        if max_row >= found_header_row and min_col <= last_col and max_col >= first_col:
            raise err(f"cells {ref} are merged; a table must have one value per cell, so unmerge them",
                      ref.split(":")[0])

    columns = {n: [] for n in names}
    kinds = {n: [] for n in names}
    rows = []
    # a one-column table writes an empty value as an empty row: between data rows it is a row whose
    # cell is empty (as in a one-column CSV file), never dropped; empty rows after the last data row end it
    one_column = len(header) == 1 and other_columns == "refuse"
    previous = found_header_row
    for row_number, by_column in records:
        values = []
        for col, n in header:
            ref = f"{_column_letter(col)}{row_number}"
            c = by_column.get(col)
            if ref in uncalculated:
                raise err("the cell is a formula without a saved value; open the workbook in its "
                          "spreadsheet program, let it calculate and save it", ref, row=row_number, column=n)
            if c is None:
                values.append((EMPTY, ""))
                continue
            kind, text = _cell_text(c)
            if c.data_type == "e":
                raise err(f'the cell holds the error value "{show(text)}"', ref, row=row_number, column=n,
                          value=text)
            values.append((kind, text))
        beyond = [c for col, c in by_column.items() if (col < first_col or col > last_col)
                  and (_cell_text(c)[0] != EMPTY or c.coordinate in uncalculated)]
        if all(kind == EMPTY for kind, _ in values):
            if beyond:
                c = beyond[0]
                raise err(f'"{show(_cell_text(c)[1])}" is outside the table (the header spans '
                          f"{_column_letter(first_col)} to {_column_letter(last_col)})", c.coordinate,
                          row=row_number)
            continue
        if beyond:
            c = beyond[0]
            raise err(f'"{show(_cell_text(c)[1])}" is outside the table (the header spans '
                      f"{_column_letter(first_col)} to {_column_letter(last_col)}); give the column a "
                      "name or clear the cell", c.coordinate, row=row_number)
        if one_column:
            for empty_row in range(previous + 1, row_number):
                columns[names[0]].append("")
                kinds[names[0]].append(EMPTY)
                rows.append(empty_row)
        previous = row_number
        for (kind, text), n in zip(values, names):
            columns[n].append(text)
            kinds[n].append(kind)
        rows.append(row_number)
    if not rows:
        raise err(f"has a header (row {found_header_row}) but no data rows")
    return WorkbookTable(path=file, columns=columns, rows=tuple(rows), sheet=name,
                         header_row=found_header_row, hidden_rows=tuple(r for r in rows if r in hidden),
                         letters={n: _column_letter(col) for col, n in header},
                         kinds={n: tuple(k) for n, k in kinds.items()})
