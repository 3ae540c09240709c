"""Names in the sector characteristics' data files (lots, samples, batches, conditions) compared
ignoring letter case.

A lot "A" and a lot "a" are one lot written two ways, or a typing slip: counting them as two would
inflate the number of lots towards a design minimum, and two conditions "ft" and "FT" would give
one criterion id twice. Two spellings of one name for an analyte are therefore an error at the row
of the second, naming the first.
"""

from __future__ import annotations

import re

from ..errors import DataError, show

__all__ = ["one_spelling", "slug"]


def slug(name: str) -> str:
    """The criterion-id form of a name: case-folded, runs of characters other than letters and digits
    replaced by one hyphen (the same rule as ``validator.characteristics.stability.analysis``)."""
    return re.sub(r"[\W_]+", "-", name.casefold()).strip("-")


def one_spelling(table, column: str, names, idx, *, key=str.casefold,
                 how: str = "differ only in letter case") -> None:
    """Every name of the rows ``idx`` written one way per ``key`` (letter case by default), else a
    ``DataError`` at the first row that writes it another way."""
    seen: dict = {}
    for i in idx:
        k = key(names[i])
        if k in seen and names[seen[k]] != names[i]:
            first = seen[k]
            raise DataError(f'{column} "{show(names[i])}" and "{show(names[first])}" (row {table.rows[first]}) '
                            f"{how}: names are compared ignoring case, so they would be one {column}; "
                            "write it one way", file=table.path, row=table.rows[i], column=column, value=names[i])
        seen.setdefault(k, i)
