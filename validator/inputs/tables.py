"""Reading the study's data files (CSV text or one .xlsx sheet) into plain columns.

This is the only module that opens data files. It turns a CSV export, or one
sheet of an .xlsx workbook (:mod:`validator.inputs.workbook`, errors naming
sheet and cell), into a :class:`Table` of strings and numbers, and turns everything it cannot read
into a :class:`~validator.errors.DataError` that names the file, the row (the
line number in the file, header = row 1), the column and the value.

Numbers are parsed strictly: a cell is a number only if it is one number in
the declared decimal style. Thousands separators, units pasted after the
number, NaN and infinity are refused with a message saying which, and so is a
number too large for a float (``1e999``). Files are read in chunks up to
their size limit, never by allocating the limit up front.

A CSV file's delimiter and decimal mark are those the study states; what it
does not state is detected from the file (:mod:`validator.inputs.dialect`),
and a file that disagrees with what the study states gets one message naming
every key to change. The table records which dialect it was read with and
whether it was stated or detected, for the audit trail.
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
import stat
import unicodedata
from dataclasses import dataclass
from pathlib import Path

from ..errors import DataError, control_character, shorten, show

__all__ = ["Table", "read_table", "read_limited", "DEFAULT_MAX_BYTES", "DEFAULT_MAX_ROWS",
           "MAX_NAME_LENGTH"]

DEFAULT_MAX_BYTES = 100 * 1024 * 1024
DEFAULT_MAX_ROWS = 1_000_000
MAX_NAME_LENGTH = 100          # characters of an analyte name or sample id
_CHUNK = 1024 * 1024

_DELIMITERS = {",": ",", ";": ";", "tab": "\t"}
_NUMBER = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?", re.ASCII)   # ASCII digits only
_NUMBER_THEN_TEXT = re.compile(r"([+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?)\s*([^\d\s.,+-].*)", re.ASCII)
_THOUSANDS = re.compile(r"[+-]?\d{1,3}([,.' ]\d{3})+([.,]\d+)?", re.ASCII)


@dataclass(frozen=True)
class Table:
    """A CSV file read into columns.

    ``rows`` holds the file row number of each record, so that later checks
    (a negative concentration, a duplicate id) can point at the line.
    """

    path: str            # as written in the study file
    columns: dict[str, list[str]]     # canonical (lower-case) name -> raw strings
    rows: tuple[int, ...]             # file row number of each record
    decimal: str = "."                # the decimal mark the cells were read with
    delimiter: str | None = None      # ",", ";" or "tab" for CSV; None for a workbook
    dialect: str = ""                 # "stated", "detected" or "stated and detected" (CSV); "" otherwise
    dialect_evidence: tuple[str, ...] = ()   # why, when anything was detected

    def __len__(self) -> int:
        return len(self.rows)

    def has(self, name: str) -> bool:
        return name in self.columns

    def numbers(self, name: str, decimal: str | None = None) -> list:
        """Column ``name`` parsed as finite floats (every cell required).

        ``decimal`` defaults to the mark the table was read with.
        """
        decimal = self.decimal if decimal is None else decimal
        return [parse_number(v, decimal=decimal, file=self.path, row=r, column=name)
                for v, r in zip(self.columns[name], self.rows)]

    def texts(self, name: str, max_length: int | None = None) -> list:
        """Column ``name`` as stripped strings; empty cells are an error.

        With ``max_length`` (names: analytes, samples), a longer cell or one with
        a control character or an invisible format character (zero-width space,
        ...) is an error too, and names are brought to Unicode NFC, so that "é"
        typed as one character or as e + accent is one name.
        """
        out = []
        for v, r in zip(self.columns[name], self.rows):
            if v == "":
                raise DataError("the cell is empty", file=self.path, row=r, column=name, value=v)
            if max_length is not None and len(v) > max_length:
                raise DataError(f'"{show(v)}" is {len(v)} characters long; at most {max_length} '
                                f"are allowed in this column", file=self.path, row=r, column=name, value=v)
            bad = control_character(v) if max_length is not None else None
            if bad:
                raise DataError(f'"{show(v)}" contains a control character ({bad}); names must not contain '
                                "control characters", file=self.path, row=r, column=name, value=v)
            if max_length is not None:
                hidden = next((c for c in v if unicodedata.category(c) == "Cf"), None)
                if hidden is not None:
                    raise DataError(f'"{show(v)}" contains an invisible character (U+{ord(hidden):04X}, '
                                    f"{unicodedata.name(hidden, 'format character')}); retype the name",
                                    file=self.path, row=r, column=name, value=v)
                v = unicodedata.normalize("NFC", v)
            out.append(v)
        return out


def exact_centre(cells, decimal: str = "."):
    """(offset, np.ndarray of value - offset) with the subtraction done in Decimal."""
    import numpy as np
    from decimal import Decimal

    vals = [Decimal(c.strip().replace(",", ".") if decimal == "," else c.strip()) for c in cells]
    offset = vals[0]
    return float(offset), np.array([float(v - offset) for v in vals])


def parse_number(text: str, *, decimal: str, file: str, row: int, column: str) -> float:
    """Parse one cell as a finite number in the declared decimal style."""
    s = text.strip()
    where = dict(file=file, row=row, column=column, value=text)
    if s == "":
        raise DataError("the cell is empty", **where)
    if s.lower().lstrip("+-") in {"nan", "inf", "infinity", "na", "n/a"}:
        raise DataError(f'"{show(s)}" is not a finite number', **where)
    other = "," if decimal == "." else "."
    if other not in s:
        candidate = s.replace(",", ".")
        if _NUMBER.fullmatch(candidate):
            value = float(candidate)
            if not math.isfinite(value):
                raise DataError(f'"{show(s)}" is too large for a number (the largest magnitude is '
                                "about 1.8e308)", **where)
            if value == 0 and re.search(r"[1-9]", re.split(r"[eE]", candidate)[0]):
                raise DataError(f'"{show(s)}" is too small for a number and would be read as 0 (the smallest '
                                "magnitude is about 2.2e-308)", **where)
            return value
    if _THOUSANDS.fullmatch(s) and (s.count(",") + s.count(".") + s.count("'") + s.count(" ")) > 1:
        raise DataError(f'"{show(s)}" has thousands separators; write the number without them', **where)
    if other in s and _NUMBER.fullmatch(s.replace(other, ".")) and s.count(other) == 1:
        if decimal == ".":
            raise DataError(f'"{show(s)}" uses a decimal comma but the study declares decimal = "."; '
                            'set decimal = "," in [study]', **where)
        raise DataError(f'"{show(s)}" uses a decimal point but the study declares decimal = ","; '
                        'set decimal = "." in [study]', **where)
    m = _NUMBER_THEN_TEXT.fullmatch(s)
    if m:
        raise DataError(f'"{show(s)}" has text after the number ("{show(m.group(5))}"); '
                        'give units in the study file, not in data cells', **where)
    raise DataError(f'"{show(s)}" is not a number', **where)


def _check_path(path: Path, shown: str, max_bytes: int) -> int:
    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise DataError(f"data file not found (looked for {path}); `validator protocol` works without "
                        "data, `check` and `run` need it", file=shown) from None
    except OSError as exc:
        raise DataError(f"data file cannot be read ({exc.strerror})", file=shown) from None
    except ValueError:      # a NUL in the path; the study schema refuses it earlier
        raise DataError("the path contains a NUL character", file=shown) from None
    if stat.S_ISDIR(st.st_mode):
        raise DataError("is a directory, not a data file", file=shown)
    if not stat.S_ISREG(st.st_mode):
        raise DataError("is not a regular file (device, FIFO or socket); refused", file=shown)
    if st.st_size > max_bytes:
        raise DataError(f"is {st.st_size} bytes, over the limit of {max_bytes} bytes", file=shown)
    return st.st_size


def read_limited(fh, max_bytes: int) -> bytes | None:
    """Up to ``max_bytes`` bytes of ``fh``, read in chunks; ``None`` if there are more.

    Memory grows with the file, never with the limit: a limit far larger than
    the file allocates nothing extra.
    """
    chunks, total = [], 0
    while True:
        chunk = fh.read(min(_CHUNK, max_bytes + 1 - total))
        if not chunk:
            return b"".join(chunks)
        chunks.append(chunk)
        total += len(chunk)
        if total > max_bytes:
            return None


def read_bytes(path: Path, shown: str, max_bytes: int = DEFAULT_MAX_BYTES) -> bytes:
    """Read a data file after checking it is a regular file under the size limit."""
    _check_path(path, shown, max_bytes)
    try:
        with open(path, "rb") as fh:
            data = read_limited(fh, max_bytes)
    except OSError as exc:
        raise DataError(f"data file cannot be read ({exc.strerror})", file=shown) from None
    if data is None:        # the file grew after it was checked
        raise DataError(f"is over the limit of {max_bytes} bytes", file=shown)
    return data


def decode_text(data: bytes, shown: str) -> str:
    """Decode UTF-8 (with or without BOM), naming the byte offset of a bad byte."""
    from .workbook import workbook_instead_of_csv      # a workbook is binary: say what it is
    workbook = workbook_instead_of_csv(data, shown)
    if workbook is not None:
        raise workbook
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise DataError(f"is not UTF-8 text (byte 0x{data[exc.start]:02x} at byte offset "
                        f"{exc.start}); save it as UTF-8", file=shown) from None
    if "\x00" in text:
        raise DataError(f"contains a NUL byte at character {text.index(chr(0))}; "
                        "it is not a text CSV file", file=shown)
    return text


def read_table(data: bytes, shown: str, *, delimiter: str | None = None, decimal: str | None = None,
               required: tuple, optional: tuple = (), sheet: str | None = None,
               header_row: int | None = None, max_rows: int = DEFAULT_MAX_ROWS,
               other_columns: str = "refuse") -> Table:
    """Parse a data file's bytes (CSV text or an .xlsx workbook) into a :class:`Table`.

    Header names are matched case-insensitively with surrounding spaces
    stripped. Blank lines are skipped, except in a one-column CSV file, where an
    empty line between data rows is a row with an empty cell (that is how such a
    file writes an empty value); empty lines after the last data row end it. Columns other than ``required`` and
    ``optional`` are refused, so that a misspelt header is not ignored.

    An .xlsx workbook (told from its bytes, not its name) is read with
    :func:`validator.inputs.workbook.read_workbook` from ``sheet`` (default:
    the first sheet) and ``header_row`` (default: the first non-empty row).
    For CSV text, ``header_row`` is the file row of the header (rows above it
    are ignored), ``sheet`` is refused, and ``delimiter`` and ``decimal`` are
    the study's declarations (None: detect it from the file, see
    :func:`validator.inputs.dialect.detect_dialect`). ``other_columns="ignore"``
    leaves columns that are neither required nor optional unread (an instrument
    export used as it is); by default they are refused (a misspelt header).
    """
    if other_columns not in ("refuse", "ignore"):
        raise ValueError(f"other_columns must be 'refuse' or 'ignore'; got {other_columns!r}")
    from .dialect import DialectError, detect_dialect
    from .workbook import read_workbook, sniff_workbook

    if sniff_workbook(data) == "xlsx":
        return read_workbook(data, shown, required=required, optional=optional, sheet=sheet,
                             header_row=header_row, max_rows=max_rows, other_columns=other_columns)
    text = decode_text(data, shown)     # other workbook kinds are refused here, with what to do
    if sheet is not None:
        raise DataError(f'is CSV text, not an .xlsx workbook, so sheet = "{show(sheet)}" cannot apply; '
                        "remove sheet = ... for this file", file=shown)
    if header_row is not None:
        lines = text.splitlines(keepends=True)
        if header_row > len(lines):
            raise DataError(f"has {len(lines)} rows, so header_row = {header_row} is beyond its end", file=shown)
        # rows above the header become blank lines: skipped, and every row keeps its number
        text = "".join("\n" for _ in lines[:header_row - 1]) + "".join(lines[header_row - 1:])
    if delimiter is not None and decimal is not None:
        # both stated: read as stated; only if that fails, ask whether the file reads otherwise,
        # so that one message names every key to change
        try:
            return _read_csv(text, shown, delimiter=delimiter, decimal=decimal, required=required,
                             optional=optional, max_rows=max_rows, other_columns=other_columns)
        except DataError as failure:
            try:
                found = detect_dialect(text, shown)
            except DataError:
                raise failure from None
            if (found.delimiter, found.decimal) != (delimiter, decimal):
                try:
                    detect_dialect(text, shown, delimiter=delimiter, decimal=decimal)
                except DialectError as mismatch:
                    if mismatch.kind == "mismatch":
                        raise mismatch from None
            raise failure from None
    try:
        dialect = detect_dialect(text, shown, delimiter=delimiter, decimal=decimal)
    except DialectError as exc:
        if exc.kind != "unreadable":
            raise
        # no reading is consistent: the message from reading it as stated (or with the usual
        # "," and ".") names the row that breaks it
        _read_csv(text, shown, delimiter=delimiter or ",", decimal=decimal or ".", required=required,
                  optional=optional, max_rows=max_rows, other_columns=other_columns)
        raise
    how = "detected" if delimiter is None and decimal is None else "stated and detected"
    return _read_csv(text, shown, delimiter=dialect.delimiter, decimal=dialect.decimal, required=required,
                     optional=optional, max_rows=max_rows, other_columns=other_columns, dialect=how, evidence=dialect.evidence)


def _read_csv(text: str, shown: str, *, delimiter: str, decimal: str, required: tuple, optional: tuple,
              max_rows: int, other_columns: str = "refuse", dialect: str = "stated", evidence: tuple = ()) -> Table:
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=_DELIMITERS[delimiter], strict=True)
    header = None
    header_row = 0
    records, rows = [], []
    end = 0
    blank_lines = []            # blank lines after the header, kept until the next data row
    try:
        for record in reader:
            line, end = end + 1, reader.line_num     # a quoted cell may span lines: the first one
            if not any(cell.strip() for cell in record):
                if header is not None:
                    blank_lines.append(line)
                continue
            if header is None:
                header, header_row = [c.strip().lower() for c in record], line
                continue
            if len(header) == 1 and other_columns == "refuse":
                # a one-column file writes an empty cell as an empty line: between data rows it is a
                # row whose value is empty (e.g. a blank result with no numerical result), never
                # dropped; empty lines after the last data row end the file
                for blank in blank_lines:
                    records.append([""])
                    rows.append(blank)
            blank_lines = []
            if len(records) >= max_rows:
                raise DataError(f"has more than {max_rows} data rows; refused", file=shown)
            records.append([c.strip() for c in record])
            rows.append(line)
    except csv.Error as exc:
        raise DataError(f"is not valid CSV ({exc})", file=shown, row=reader.line_num) from None
    if header is None:
        raise DataError("is empty (no header row)", file=shown)
    seen = set()
    allowed = set(required) | set(optional)
    ignored = other_columns == "ignore"
    for name in header:
        if name == "" and not ignored:
            raise DataError("the header has an empty column name", file=shown, row=header_row)
        if ignored and name not in allowed:
            continue            # an export's other columns: unread, whatever their names
        if name in seen:
            raise DataError(f'the header names column "{show(name)}" twice', file=shown, row=header_row)
        seen.add(name)
    for name in header:
        if name not in allowed and other_columns == "refuse":
            expected = ", ".join(f'"{c}"' for c in (*required, *optional))
            hint = ""
            if delimiter != "," and "," in name or delimiter == "," and ";" in name:
                hint = " (is the delimiter in [study] right?)"
            raise DataError(f'unknown column "{show(name)}"{hint}; expected {expected}',
                            file=shown, row=header_row)
    for name in required:
        if name not in header:
            found = shorten(", ".join(f'"{c}"' for c in header), 4 * MAX_NAME_LENGTH)
            raise DataError(f'the header has no column "{name}" (found: {found})', file=shown, row=header_row)
    if not records:
        raise DataError("has a header but no data rows", file=shown)
    columns = {name: [] for name in header if name in allowed or not ignored}
    for record, line in zip(records, rows):
        if len(record) != len(header):
            hint = ""
            if len(record) > len(header) and delimiter == ",":
                hint = ('; is there a decimal comma or a thousands separator? Files with decimal '
                        'commas need delimiter = ";" and decimal = "," in [study]')
            column, value = _cell_count_culprit(record, header)
            raise DataError(f'"{show(value)}" reads as {len(record)} cells but the header has {len(header)}{hint}',
                            file=shown, row=line, column=column, value=value)
        for name, cell in zip(header, record):
            if name in columns:
                columns[name].append(cell)
    return Table(path=shown, columns=columns, rows=tuple(rows), decimal=decimal, delimiter=delimiter,
                 dialect=dialect, dialect_evidence=tuple(evidence))


def _cell_count_culprit(record, header) -> tuple[str, str]:
    """The column and the text of a row whose cell count differs from the header's, for the message:
    with too many cells, the last run of cells that reads as one number split at a comma ("0" and
    "3735" of 0,3735) with as many cells as are extra, under the column the first of them stands in;
    otherwise the last column with the cells beyond it. With too few, the first column left empty."""
    extra = len(record) - len(header)
    if extra < 0:
        return header[len(record)], ""
    for group in (r"\s*\d{3}", r"\s*\d"):     # a decimal part or thousands group of 3 digits first
        for i in reversed(range(min(len(record) - extra, len(header)))):     # the last such pair
            part = record[i:i + extra + 1]
            if re.fullmatch(r"\s*[-+]?\d+\s*", part[0]) and all(re.match(group, c) for c in part[1:]):
                return header[i], ",".join(part)
    return header[-1], ",".join(record[len(header) - 1:])
