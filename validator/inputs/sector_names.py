"""Names in the sector characteristics' data files (lots, samples, batches, conditions) compared
ignoring letter case.

A lot "A" and a lot "a" are one lot written two ways, or a typing slip: counting them as two would
inflate the number of lots towards a design minimum, and two conditions "ft" and "FT" would give
one criterion id twice. Two spellings of one name for an analyte are therefore an error at the row
of the second, naming the first.

Lots (selectivity, matrix-effect lots and factors, EP17 lots) compare ignoring letter case, spaces
and punctuation too (:func:`lot_key`): "d1", "d 1", "d-1", "d_1", "d.1" and "d1." are one donor typed
six ways, and counted apart they would reach a design minimum of 6 lots. (Sample ids one character
apart are flagged by ``sample_ids.near_duplicates`` instead: there, "S1" and "S2" are different
samples, and so are lots "d1" and "d2", which this comparison keeps apart.)
"""

from __future__ import annotations

import re

from .._common import name_key, name_slug
from ..errors import DataError, show

__all__ = ["one_spelling", "slug", "lot_key", "one_lot_spelling"]


def slug(name: str) -> str:
    """The criterion-id form of a name: :func:`validator._common.name_slug` (case-folded, runs of
    characters other than letters and digits replaced by one hyphen; a minus sign before a number kept
    as "minus" and a decimal point between digits kept, so "-20 °C" and "20 °C" stay two conditions;
    the same rule as ``validator.characteristics.stability.analysis``)."""
    return name_slug(name)


def lot_key(name: str) -> str:
    """A lot name compared ignoring letter case, spaces and punctuation: its letters and digits only,
    case-folded ("D-1", "d 1", "d1." -> "d1"), except a minus sign before a number and a decimal point
    between digits (:func:`validator._common.name_key`: "1.5" and "15" are two lots)."""
    return name_key(name)


def one_lot_spelling(table, column: str, names, idx) -> None:
    """Every lot of the rows ``idx`` written one way per :func:`lot_key`, else a ``DataError`` at the
    first row that writes it another way (naming the first)."""
    one_spelling(table, column, names, idx, key=lot_key, compared="ignoring case, spaces and punctuation",
                 how="differ only in letter case, spaces or punctuation (one lot typed two ways would count "
                     "twice towards the minimum number of lots)")


def one_spelling(table, column: str, names, idx, *, key=str.casefold,
                 how: str = "differ only in letter case", compared: str = "ignoring case") -> None:
    """Every name of the rows ``idx`` written one way per ``key`` (letter case by default), else a
    ``DataError`` at the first row that writes it another way."""
    seen: dict = {}
    for i in idx:
        k = key(names[i])
        if k in seen and names[seen[k]] != names[i]:
            first = seen[k]
            raise DataError(f'{column} "{show(names[i])}" and "{show(names[first])}" (row {table.rows[first]}) '
                            f"{how}: names are compared {compared}, so they would be one {column}; "
                            "write it one way", file=table.path, row=table.rows[i], column=column, value=names[i])
        seen.setdefault(k, i)
