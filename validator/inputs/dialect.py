"""Telling a CSV file's delimiter and decimal mark from its text.

Laboratory exports come with "," or ";" or a tab between fields, and with "."
or "," as decimal mark, depending on the instrument software and the locale of
the computer that wrote them. :func:`detect_dialect` reads the decoded text of
one file and says which combination it uses, with the evidence, so that a
wrong or missing declaration in the study costs one message, not two rounds of
errors (first the delimiter, then the decimal mark).

The function is pure: it takes the text (already decoded, a leading byte-order
mark is ignored) and returns a :class:`Dialect` or raises
:class:`~validator.errors.DataError`. It never guesses: when two readings of
the file are both consistent and give different tables, it says so and asks
for the declaration.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass

from ..errors import DataError, show

__all__ = ["Dialect", "DialectError", "detect_dialect", "is_number", "DELIMITERS", "DECIMALS"]

# the study's spelling -> the character in the file
DELIMITERS = {",": ",", ";": ";", "tab": "\t"}
DECIMALS = (".", ",")
_SEPARATOR_CHARACTERS = frozenset(",;\t")
_SHOWN = {",": '","', ";": '";"', "tab": "a tab"}

# one finite number in either decimal style, as csvdata.parse_number accepts it
_NUMBER_POINT = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?")
_NUMBER_COMMA = re.compile(r"[+-]?(\d+(,\d*)?|,\d+)([eE][+-]?\d+)?")
_NUMBER = {".": _NUMBER_POINT, ",": _NUMBER_COMMA}


class DialectError(DataError):
    """A :class:`~validator.errors.DataError` from :func:`detect_dialect`, with its kind.

    ``kind`` is ``"mismatch"`` (the file reads consistently, but not as the
    study declares; the message names every fix), ``"ambiguous"`` (two
    readings give different tables) or ``"unreadable"`` (no reading is
    consistent), so that a caller can prefer a more precise message from
    reading the file as declared.
    """

    def __init__(self, problem: str, *, kind: str, file: str):
        super().__init__(problem, file=file)
        self.kind = kind


@dataclass(frozen=True)
class Dialect:
    """How one CSV file separates fields and writes decimal fractions.

    Attributes
    ----------
    delimiter : str
        In the study's spelling: ``","``, ``";"`` or ``"tab"``.
    decimal : str
        ``"."`` or ``","``.
    evidence : tuple of str
        Sentences saying why, in the order they were established (field
        counts, a cell with a decimal mark, a reading set aside), for the
        report and for a reviewer.
    decimal_seen : bool
        False when no number in the file has a decimal mark, so that either
        mark reads the file the same (``decimal`` is then the declared one, or
        ``"."``).
    delimiter_seen : bool
        False when the file has one column, so that any delimiter reads it the
        same (``delimiter`` is then the declared one, or ``","`` when allowed).
    """

    delimiter: str
    decimal: str
    evidence: tuple
    decimal_seen: bool = True
    delimiter_seen: bool = True

    @property
    def character(self) -> str:
        """The delimiter as the character in the file (``"\\t"`` for ``"tab"``)."""
        return DELIMITERS[self.delimiter]


@dataclass(frozen=True)
class _Reading:
    """The file read with one candidate delimiter and decimal mark."""

    delimiter: str
    decimal: str
    header: tuple
    records: tuple            # tuples of stripped cells
    lines: tuple              # file line of each record
    numeric: tuple            # per column: True if every non-empty data cell is a number here
    marked: tuple             # per column: (line, cell) of a number with a decimal mark, or None
    header_clash: str | None  # a header cell holding another delimiter, or None

    def outcome(self):
        """What the reading means: the cells, and the numbers where a column is numeric."""
        values = []
        for j, is_numeric in enumerate(self.numeric):
            if is_numeric:
                values.append(tuple(None if r[j] == "" else float(r[j].replace(",", "."))
                                    for r in self.records))
            else:
                values.append(None)
        return (self.header, self.records, tuple(values))


def is_number(cell: str, decimal: str) -> bool:
    """True when ``cell`` (stripped) is one number written with ``decimal`` as decimal mark.

    The form accepted by ``csvdata.parse_number`` (sign, digits, one decimal
    mark, exponent), without its range check.
    """
    return _NUMBER[decimal].fullmatch(cell.strip()) is not None


def _split(text: str, delimiter: str):
    """(header, records, lines) read with ``delimiter``, or a reason it cannot be."""
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=DELIMITERS[delimiter], strict=True)
    header, records, lines = None, [], []
    end = 0
    try:
        for record in reader:
            line, end = end + 1, reader.line_num
            if not any(c.strip() for c in record):
                continue
            cells = tuple(c.strip() for c in record)
            if header is None:
                header = cells
                continue
            if len(cells) != len(header):
                hint = ""
                if delimiter == "," and len(cells) > len(header):
                    hint = " (a decimal comma? a comma cannot separate both fields and decimals)"
                return f"row {line} has {len(cells)} fields but the header has {len(header)}{hint}"
            records.append(cells)
            lines.append(line)
    except csv.Error as exc:
        return f"the file is not valid CSV at row {reader.line_num} ({exc})"
    if header is None:
        return "the file is empty"
    if not records:
        return "the file has a header but no data rows"
    return tuple(header), tuple(records), tuple(lines)


def _read(split, delimiter: str, decimal: str) -> _Reading:
    header, records, lines = split
    numeric, marked = [], []
    for j in range(len(header)):
        cells = [(line, r[j]) for r, line in zip(records, lines) if r[j] != ""]
        is_numeric = bool(cells) and all(is_number(c, decimal) for _, c in cells)
        numeric.append(is_numeric)
        mark = None
        if is_numeric:
            mark = next(((line, c) for line, c in cells if decimal in c), None)
        marked.append(mark)
    own = DELIMITERS[delimiter]
    clash = next((h for h in header if (set(h) & _SEPARATOR_CHARACTERS) - {own}), None)
    return _Reading(delimiter, decimal, header, records, lines, tuple(numeric), tuple(marked), clash)


def _sniffed(text: str) -> str:
    sample = "\n".join(text.splitlines()[:50])
    try:
        found = csv.Sniffer().sniff(sample, delimiters=",;\t").delimiter
    except csv.Error:
        return "csv.Sniffer could not tell a delimiter"
    name = {",": ",", ";": ";", "\t": "tab"}[found]
    return f"csv.Sniffer's guess from the first lines: {_SHOWN[name]} (not used to decide)"


def _describe(r: _Reading) -> str:
    return f"{_SHOWN[r.delimiter]} between fields and \"{r.decimal}\" as decimal mark"


def _mismatch(group, delimiter, decimal) -> str:
    """One sentence naming what the file uses and every key to change."""
    # the reading closest to the declaration: same delimiter if possible, then same decimal
    detected = min(group, key=lambda r: (r.delimiter != (delimiter or ","), r.decimal != (decimal or ".")))
    one_column = len({r.delimiter for r in group}) > 1
    facts = [] if one_column else [f"uses {_SHOWN[detected.delimiter]} between fields"]
    if len({r.decimal for r in group}) == 1:
        facts.append(f'"{detected.decimal}" as decimal mark')
    fixes = []
    # every value that differs from the declared one, or from the default where none is declared
    # (",", "."), so that the study read with its defaults agrees with the file after the fix
    if one_column:
        if (delimiter or ",") not in {r.delimiter for r in group}:   # "," with a decimal comma
            facts = ["has one column"] + facts
            fixes.append(f'delimiter = "{detected.delimiter}"')
    elif detected.delimiter != (delimiter or ","):
        fixes.append(f'delimiter = "{detected.delimiter}"')
    if len({r.decimal for r in group}) == 1 and detected.decimal != (decimal or "."):
        fixes.append(f'decimal = "{detected.decimal}"')
    if not fixes:       # not reached: a reading matching every declared value would be chosen
        raise AssertionError("no fix for a file that disagrees with its declaration")
    text = " and ".join(facts)
    if not text.startswith(("uses", "has")):
        text = "uses " + text
    return f"the file {text}; set {' and '.join(fixes)} in [study]"


def detect_dialect(text: str, file: str, *, delimiter: str | None = None,
                   decimal: str | None = None) -> Dialect:
    """The delimiter and decimal mark of a CSV file, checked against any declared ones.

    Parameters
    ----------
    text : str
        The whole file, decoded (a leading byte-order mark is ignored).
    file : str
        The file as written in the study, for messages.
    delimiter, decimal : str or None, keyword-only
        What the study declares (``","``, ``";"``, ``"tab"``; ``"."``,
        ``","``), or None where it declares nothing.

    Returns
    -------
    Dialect
        The declared values when the file is consistent with them, else the
        detected ones when the study declares nothing.

    Raises
    ------
    DialectError
        (a DataError) When the file contradicts a declared value (one message names every
        fix), when two different readings are both consistent (ambiguous),
        or when no reading is consistent.
    ValueError
        For a declared value outside the allowed ones.

    Notes
    -----
    Each legal combination of delimiter (",", ";", tab) and decimal mark
    (".", ","; a comma cannot be both) is tried on the whole file:

    1. *Fields*: every non-blank row has as many fields as the header.
    2. *Numbers*: a column is numeric under a decimal mark when every
       non-empty data cell is one number written with that mark (the strict
       form of ``csvdata.parse_number``). A reading is refused when some
       column is numeric only under the other mark (it holds a number such as
       "1,25" or "1.25" that only the other mark reads).
    3. *Same table*: readings that give the same cells and the same numbers
       are one outcome (a one-column file reads the same with any delimiter,
       a file without decimal fractions the same with either mark). A reading
       with one column whose name holds another delimiter character is a
       failed split and is refused.
    4. *Header*: when several outcomes remain, readings whose header has a
       cell holding another delimiter character (a header "a;b" read with ",")
       are set aside. If still more than one outcome remains, the file is
       ambiguous and an error asks for the declaration; if the declaration
       matches one of the consistent readings, that one is taken.

    ``csv.Sniffer`` is run on the first 50 lines and its guess recorded in the
    evidence, but it does not decide: its heuristics can pick a character
    that merely occurs equally often in every line.

    References
    ----------
    .. [1] RFC 4180, Common Format and MIME Type for Comma-Separated Values
       (CSV) Files, 2005 (fields, quoting, records).
    .. [2] Python Software Foundation, ``csv`` module documentation
       (``csv.reader``, ``csv.Sniffer``).
    """
    if delimiter is not None and delimiter not in DELIMITERS:
        raise ValueError(f"delimiter must be one of ',', ';', 'tab'; got {delimiter!r}")
    if decimal is not None and decimal not in DECIMALS:
        raise ValueError(f"decimal must be '.' or ','; got {decimal!r}")
    if delimiter == "," and decimal == ",":
        raise ValueError("delimiter ',' and decimal ',' cannot be used together")
    if text.startswith("\ufeff"):
        text = text[1:]

    failures = {}
    readings = []
    for delim in DELIMITERS:
        split = _split(text, delim)
        if isinstance(split, str):
            failures[delim] = split
            continue
        header = split[0]
        if len(header) == 1 and set(header[0]) & (_SEPARATOR_CHARACTERS - {DELIMITERS[delim]}):
            # one column whose name holds another delimiter: a split that failed, not a column
            failures[delim] = (f'the header would be one column "{show(header[0])}" holding another '
                               "delimiter character")
            continue
        for dec in DECIMALS:
            if delim == "," and dec == ",":
                continue
            reading = _read(split, delim, dec)
            # a column numeric only under the other mark contradicts this one
            other = "," if dec == "." else "."
            contradiction = None
            # (with "," between fields a decimal comma cannot occur: "1,5" is two fields)
            if not (delim == "," and other == ","):
                alt = _read(split, delim, other)
                for j, name in enumerate(alt.header):
                    if alt.numeric[j] and not reading.numeric[j] and alt.marked[j]:
                        contradiction = (name, alt.marked[j])
                        break
            if contradiction is None:
                readings.append(reading)
            else:
                name, (line, cell) = contradiction
                failures[(delim, dec)] = (f'with {_SHOWN[delim]} between fields, column "{show(name)}" '
                                          f'has "{show(cell)}" (row {line}), a number only with '
                                          f'"{other}" as decimal mark')

    if not readings:
        if all(isinstance(k, str) for k in failures) and len(set(failures.values())) == 1:
            raise DialectError(next(iter(failures.values())), kind="unreadable", file=file)
        parts = [f"with {_SHOWN[k]}: {v}" if isinstance(k, str) else v for k, v in failures.items()]
        raise DialectError("no delimiter and decimal mark read the file consistently ("
                           + "; ".join(parts) + ")", kind="unreadable", file=file)

    # group readings that mean the same table
    outcomes: dict = {}
    for r in readings:
        outcomes.setdefault(r.outcome(), []).append(r)
    groups = list(outcomes.values())
    evidence = []
    for delim, why in failures.items():
        if isinstance(delim, str):
            evidence.append(f"not {_SHOWN[delim]} between fields: {why}")
        else:
            evidence.append(f'not "{delim[1]}" as decimal mark: {why}')

    if len(groups) > 1:
        plausible = [g for g in groups if any(r.header_clash is None for r in g)]
        for g in groups:
            if g not in plausible:
                r = g[0]
                evidence.append(f'not {_SHOWN[r.delimiter]} between fields: the header cell '
                                f'"{show(r.header_clash)}" would hold another delimiter character')
        if plausible:
            groups = plausible

    def matches(r):
        return (delimiter is None or r.delimiter == delimiter) and (decimal is None or r.decimal == decimal)

    if len(groups) > 1:
        declared = [g for g in groups if any(matches(r) for r in g)]
        if (delimiter is not None or decimal is not None) and len(declared) == 1:
            evidence.append("the file can also be read otherwise ("
                            + "; ".join(_describe(g[0]) for g in groups if g is not declared[0])
                            + "); the declared delimiter and decimal mark decide")
            groups = declared
        else:
            options = ", or ".join(_describe(g[0]) for g in groups)
            raise DialectError(f"the delimiter and decimal mark cannot be told from the file: it reads "
                               f"consistently with {options}; set delimiter and decimal in [study]",
                               kind="ambiguous", file=file)

    group = groups[0]
    chosen = next((r for r in group if matches(r)), None)
    if chosen is None:
        raise DialectError(_mismatch(group, delimiter, decimal), kind="mismatch", file=file)

    # pick within the group: declared first, then "," before ";" before tab, "." before ","
    delimiter_seen = len(chosen.header) > 1
    decimal_seen = any(chosen.marked)
    if not delimiter_seen:
        evidence.append("the file has one column; any delimiter reads it the same")
    else:
        evidence.append(f"every row has {len(chosen.header)} fields with {_SHOWN[chosen.delimiter]} "
                        "between them")
    if decimal_seen:
        j = next((j for j, m in enumerate(chosen.marked) if m), None)
        if j is not None:
            line, cell = chosen.marked[j]
            evidence.append(f'column "{show(chosen.header[j])}" has "{show(cell)}" (row {line}), '
                            f'a number with "{chosen.decimal}" as decimal mark')
    else:
        evidence.append("no number in the file has a decimal mark; either mark reads it the same")
    evidence.append(_sniffed(text))
    return Dialect(delimiter=chosen.delimiter, decimal=chosen.decimal, evidence=tuple(evidence),
                   decimal_seen=decimal_seen, delimiter_seen=delimiter_seen)
