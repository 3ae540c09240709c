"""Column helpers for the loaders of the sector characteristics (issue #15).

Each sector characteristic's ``settings.py`` reads its own data file through these, so that
every error names the file, the row, the column and the value like the other loaders do.
Built on :mod:`validator.inputs.tables` (through the study reader) and the per-analyte split
of :mod:`validator.inputs.loading` (``analyte_rows``, ``numeric_column``), for tables that
``loading.per_analyte`` does not cover: several files per section, or a file key other than ``data``.
"""

from __future__ import annotations

import numpy as np

from ..errors import DataError, show
from .loading import analyte_rows, numeric_column
from .tables import MAX_NAME_LENGTH, parse_number

__all__ = ["read_rows", "numbers", "numbers_or_missing", "labels", "positive", "not_negative", "one_value_per_group", "kinds"]


def read_rows(reader, role: str, path: str, required: tuple, optional: tuple, analytes: dict, what: str):
    """The table of ``path`` and the row indices of each analyte that has rows in it."""
    table = reader.table(role, path, required, optional + ("analyte",))
    return table, {name: idx for name, idx in analyte_rows(table, analytes, what).items() if idx}


def numbers(reader, table, column: str) -> np.ndarray:
    """A numeric column, every cell required (the magnitude checks of the other loaders)."""
    return numeric_column(table, column, reader.decimal)


def numbers_or_missing(reader, table, column: str, missing_words=("", "nd", "n.d.", "not detected")) -> np.ndarray:
    """A numeric column in which an empty cell, ``ND`` or ``not detected`` means "no numerical result"
    (NaN); every other cell must be a number."""
    out = []
    for cell, row in zip(table.columns[column], table.rows):
        if cell.strip().casefold() in missing_words:
            out.append(float("nan"))
        else:
            out.append(parse_number(cell, decimal=table.decimal, file=table.path, row=row, column=column))
    return np.array(out, dtype=float)


def labels(table, column: str, default: str) -> tuple:
    """A text column (names, lots, batches) or ``default`` for every row when the column is absent."""
    if not table.has(column):
        return (default,) * len(table)
    return tuple(table.texts(column, MAX_NAME_LENGTH))


def positive(table, column: str, values, idx=None) -> None:
    """Every value (of the rows ``idx``) above zero, else an error naming its row."""
    for i in (range(len(values)) if idx is None else idx):
        if not values[i] > 0:
            raise DataError(f"{column} {show(table.columns[column][i])} must be > 0", file=table.path,
                            row=table.rows[i], column=column, value=values[i])


def not_negative(table, column: str, values, idx=None, what: str = "a response (peak area)") -> None:
    """Every value (of the rows ``idx``) at least zero, else an error naming its row: a peak area
    cannot be negative (as in the run exports), and a negative blank would mask a carry-over or an
    interference instead of showing it."""
    for i in (range(len(values)) if idx is None else idx):
        if values[i] < 0:
            raise DataError(f"{column} {show(table.columns[column][i])} is negative: {what} cannot be below zero",
                            file=table.path, row=table.rows[i], column=column, value=values[i])


def one_value_per_group(table, group_column: str, groups, value_column: str, values, idx) -> dict:
    """``{group: value}`` when every row of a group gives the same value, else an error at the first
    row that differs (e.g. one nominal concentration per sample)."""
    seen: dict = {}
    for i in idx:
        g = groups[i]
        if g in seen and seen[g][0] != values[i]:
            raise DataError(f'{group_column} "{show(g)}" has {value_column} {seen[g][0]:g} at row {seen[g][1]} '
                            f"and {values[i]:g} here; one {value_column} per {group_column}",
                            file=table.path, row=table.rows[i], column=value_column, value=values[i])
        seen.setdefault(g, (values[i], table.rows[i]))
    return {g: v for g, (v, _) in seen.items()}


def kinds(table, allowed=("blank", "lloq")) -> list:
    """The ``kind`` column in lower case; a value outside ``allowed`` is an error at its row."""
    out = []
    for cell, row in zip(table.columns["kind"], table.rows):
        kind = cell.strip().casefold()
        if kind not in allowed:
            raise DataError(f'kind "{show(cell)}" is not one of ' + ", ".join(f'"{a}"' for a in allowed),
                            file=table.path, row=row, column="kind", value=cell)
        out.append(kind)
    return out
