"""Telling a CSV file's delimiter and decimal mark (validator.inputs.dialect).

The files here are written by the tests from numbers chosen for the purpose;
the expected delimiter and decimal mark are the ones used to write them, and
the expected numbers are those written (hand computation: the value is the
text written in the cell). Expected messages are this project's own wording
(common practice, no published source).
"""

from __future__ import annotations

from decimal import Decimal

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from validator.inputs.tables import decode_text, parse_number, read_table
from validator.inputs.dialect import Dialect, detect_dialect, is_number
from validator.errors import DataError

CONCENTRATIONS = ["0.5", "1.25", "2.5", "10", "12.75"]
RESPONSES = ["0.0123", "0.0251", "0.0498", "0.2003", "0.2551"]
LEGAL = [(",", "."), (";", "."), (";", ","), ("tab", "."), ("tab", ",")]
CHARACTER = {",": ",", ";": ";", "tab": "\t"}


def csv_text(delimiter: str, decimal: str) -> str:
    sep = CHARACTER[delimiter]
    lines = [sep.join(["concentration", "response"])]
    for c, r in zip(CONCENTRATIONS, RESPONSES):
        lines.append(sep.join([c.replace(".", decimal), r.replace(".", decimal)]))
    return "\r\n".join(lines) + "\r\n"


@pytest.mark.parametrize("bom", [False, True], ids=["no-bom", "bom"])
@pytest.mark.parametrize("delimiter,decimal", LEGAL)
def test_each_legal_combination_is_detected(delimiter, decimal, bom):
    data = csv_text(delimiter, decimal).encode("utf-8")
    if bom:
        data = b"\xef\xbb\xbf" + data
    text = decode_text(data, "calibration.csv")
    d = detect_dialect(text, "calibration.csv")
    assert (d.delimiter, d.decimal) == (delimiter, decimal)      # the ones the file was written with
    assert d.delimiter_seen and d.decimal_seen
    # the detected dialect reads back the numbers written (hand computation: the written text)
    table = read_table(data, "calibration.csv", delimiter=d.delimiter, required=("concentration", "response"))
    assert table.numbers("concentration", d.decimal) == [float(Decimal(c)) for c in CONCENTRATIONS]
    assert table.numbers("response", d.decimal) == [float(Decimal(r)) for r in RESPONSES]
    # the declaration that matches the file is accepted as it is
    assert (detect_dialect(text, "calibration.csv", delimiter=delimiter, decimal=decimal).delimiter
            == delimiter)


@pytest.mark.parametrize("delimiter,decimal", LEGAL)
def test_a_bom_left_in_the_text_is_ignored(delimiter, decimal):
    d = detect_dialect("\ufeff" + csv_text(delimiter, decimal), "calibration.csv")
    assert (d.delimiter, d.decimal) == (delimiter, decimal)


def test_evidence_says_why():
    d = detect_dialect(csv_text(";", ","), "calibration.csv")
    assert d == Dialect(delimiter=";", decimal=",", evidence=(
        'not "," between fields: row 2 has 3 fields but the header has 1 (a decimal comma? a comma '
        "cannot separate both fields and decimals)",
        'not "." as decimal mark: with ";" between fields, column "concentration" has "0,5" (row 2), '
        'a number only with "," as decimal mark',
        'not a tab between fields: the header would be one column "concentration;response" holding '
        "another delimiter character",
        'every row has 2 fields with ";" between them',
        'column "concentration" has "0,5" (row 2), a number with "," as decimal mark',
        'csv.Sniffer\'s guess from the first lines: ";" (not used to decide)'))


def test_comma_and_decimal_comma_together_is_not_a_legal_declaration():
    with pytest.raises(ValueError, match=r"delimiter ',' and decimal ',' cannot be used together"):
        detect_dialect(csv_text(";", ","), "calibration.csv", delimiter=",", decimal=",")


def test_a_file_written_with_comma_between_fields_and_decimal_commas_is_refused():
    text = "concentration,response\n0,5,0,0123\n1,25,0,0251\n"
    with pytest.raises(DataError) as info:
        detect_dialect(text, "calibration.csv")
    assert str(info.value) == (
        'calibration.csv: no delimiter and decimal mark read the file consistently (with ",": row 2 '
        "has 4 fields but the header has 2 (a decimal comma? a comma cannot separate both fields and "
        'decimals); with ";": the header would be one column "concentration,response" holding another '
        'delimiter character; with a tab: the header would be one column "concentration,response" '
        "holding another delimiter character)")


def test_one_message_names_both_fixes():
    with pytest.raises(DataError) as info:
        detect_dialect(csv_text(";", ","), "calibration.csv", delimiter=",", decimal=".")
    assert str(info.value) == ('calibration.csv: the file uses ";" between fields and "," as decimal '
                               'mark; set delimiter = ";" and decimal = "," in [study]')
    assert info.value.file == "calibration.csv"


def test_only_the_wrong_key_is_named():
    with pytest.raises(DataError) as info:
        detect_dialect(csv_text("tab", "."), "calibration.csv", delimiter=";", decimal=".")
    assert str(info.value) == ('calibration.csv: the file uses a tab between fields and "." as decimal '
                               'mark; set delimiter = "tab" in [study]')
    with pytest.raises(DataError) as info:
        detect_dialect(csv_text(";", ","), "calibration.csv", delimiter=";", decimal=".")
    assert str(info.value) == ('calibration.csv: the file uses ";" between fields and "," as decimal '
                               'mark; set decimal = "," in [study]')


def test_a_declared_delimiter_with_an_undeclared_decimal_takes_the_files_decimal():
    d = detect_dialect(csv_text(";", ","), "calibration.csv", delimiter=";")
    assert (d.delimiter, d.decimal) == (";", ",")


def test_an_undeclared_decimal_comma_is_named_with_the_delimiter():
    # the study's defaults (",", ".") are what the fix must change
    with pytest.raises(DataError) as info:
        detect_dialect(csv_text(";", ","), "calibration.csv", delimiter=",")
    assert str(info.value) == ('calibration.csv: the file uses ";" between fields and "," as decimal '
                               'mark; set delimiter = ";" and decimal = "," in [study]')


AMBIGUOUS = "sample;batch,replicate\n1;2,3\n4;5,6\n"


def test_an_ambiguous_file_is_stated_not_guessed():
    # "," + ".": columns "sample;batch" (text) and "replicate"; ";" + ",": "sample" and
    # "batch,replicate" (2.3, 5.6); a tab: one text column. Each header holds another delimiter.
    with pytest.raises(DataError) as info:
        detect_dialect(AMBIGUOUS, "calibration.csv")
    assert str(info.value) == (
        "calibration.csv: the delimiter and decimal mark cannot be told from the file: it reads "
        'consistently with "," between fields and "." as decimal mark, or ";" between fields and "," '
        "as decimal mark; set delimiter and decimal in [study]")


def test_a_declaration_resolves_an_ambiguous_file():
    d = detect_dialect(AMBIGUOUS, "calibration.csv", delimiter=";", decimal=",")
    assert (d.delimiter, d.decimal) == (";", ",")
    assert any("can also be read otherwise" in e for e in d.evidence)


def test_integers_with_commas_between_fields_are_not_ambiguous():
    # read with ";", the header "a,b" would be one column holding ",": a failed split
    d = detect_dialect("concentration,response\n1,2\n3,4\n", "calibration.csv")
    assert (d.delimiter, d.decimal, d.decimal_seen) == (",", ".", False)


def test_a_one_column_file():
    d = detect_dialect("response\n0.0123\n0.0251\n", "response.csv")
    assert (d.delimiter, d.decimal, d.delimiter_seen, d.decimal_seen) == (",", ".", False, True)
    assert "the file has one column; any delimiter reads it the same" in d.evidence
    # a declared delimiter is kept: any delimiter reads the file the same
    assert detect_dialect("response\n0.0123\n", "response.csv", delimiter="tab").delimiter == "tab"


def test_a_one_column_file_with_decimal_commas():
    d = detect_dialect("response\n0,0123\n0,0251\n", "response.csv")
    assert (d.delimiter, d.decimal, d.delimiter_seen) == (";", ",", False)
    with pytest.raises(DataError) as info:
        detect_dialect("response\n0,0123\n0,0251\n", "response.csv", delimiter=",", decimal=".")
    assert str(info.value) == ('response.csv: the file has one column and "," as decimal mark; '
                               'set delimiter = ";" and decimal = "," in [study]')


def test_no_data_rows():
    with pytest.raises(DataError) as info:
        detect_dialect("concentration,response\n\n", "calibration.csv")
    assert str(info.value) == "calibration.csv: the file has a header but no data rows"


def test_invalid_declarations_quote_the_value():
    with pytest.raises(ValueError, match=r"delimiter must be one of ',', ';', 'tab'; got '\|'"):
        detect_dialect("a\n1\n", "x.csv", delimiter="|")
    with pytest.raises(ValueError, match=r"decimal must be '.' or ','; got ' '"):
        detect_dialect("a\n1\n", "x.csv", decimal=" ")


@settings(max_examples=300, deadline=None)
@given(st.text(alphabet="0123456789.,+-eE", min_size=1, max_size=8), st.sampled_from([".", ","]))
def test_number_rule_agrees_with_the_strict_parser(cell, decimal):
    """The detector's notion of a number is csvdata.parse_number's (cross-check: the loader's parser)."""
    try:
        parse_number(cell, decimal=decimal, file="f", row=1, column="c")
        parsed = True
    except DataError as exc:
        parsed = False
        out_of_range = "too large" in exc.problem or "too small" in exc.problem
    if not parsed and out_of_range:
        return     # "1e999" and "1e-400" are numbers in form; their size is the loader's concern
    assert is_number(cell, decimal) == parsed


_NAMES = st.lists(st.text(alphabet="abcdefghij_", min_size=1, max_size=6), min_size=2, max_size=4,
                  unique=True)
_DECIMALS = st.decimals(min_value=-1000, max_value=1000, places=3, allow_nan=False, allow_infinity=False)


@settings(max_examples=150, deadline=None)
@given(_NAMES, st.data(), st.sampled_from(LEGAL))
def test_a_table_written_in_a_dialect_is_detected_as_written(names, data, dialect):
    """Property: any table with at least two named columns is read back in the dialect it was written in.

    Expected values: the delimiter, decimal mark and numbers used to write the file.
    """
    delimiter, decimal = dialect
    n_rows = data.draw(st.integers(min_value=1, max_value=6))
    values = [[data.draw(_DECIMALS) for _ in names] for _ in range(n_rows)]
    sep = CHARACTER[delimiter]
    cells = [[format(v, "f").replace(".", decimal) for v in row] for row in values]
    text = "\n".join([sep.join(names)] + [sep.join(row) for row in cells]) + "\n"
    has_fraction = any(decimal in c for row in cells for c in row)
    d = detect_dialect(text, "calibration.csv")
    assert d.delimiter == delimiter
    assert d.decimal_seen == has_fraction
    if has_fraction:
        assert d.decimal == decimal
    table = read_table(text.encode(), "calibration.csv", delimiter=d.delimiter, required=tuple(names))
    for j, name in enumerate(names):
        assert table.numbers(name, d.decimal) == [float(row[j]) for row in values]
