"""Method comparison: the ``[comparison]`` table and its data file.

The file has one row per shared sample: ``sample`` (an id, once per analyte), ``reference``
(the reference or earlier method's result), ``test`` (this method's result) and optionally
``analyte``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Optional

import numpy as np
from pydantic import Field, model_validator

from ...errors import DataError, show
from ...inputs.loading import numeric_column, per_analyte
from ...inputs.study import DataSource, check_range
from ...inputs.tables import MAX_NAME_LENGTH

__all__ = ["ComparisonSection", "ComparisonData", "load"]


class ComparisonSection(DataSource):        # data, and sheet/header_row for a workbook
    error_ratio: float = Field(1.0, ge=1e-6, le=1e6)
    slope_limits: Optional[list[float]] = None
    intercept_limits: Optional[list[float]] = None
    percentage_differences: bool = False

    @model_validator(mode="after")
    def _limits(self):
        for name in ("slope_limits", "intercept_limits"):
            check_range(getattr(self, name), name)
        return self



@dataclass(frozen=True)
class ComparisonData:
    """Shared samples measured by the reference and the test method."""

    samples: tuple[str, ...]
    reference: np.ndarray = field(repr=False)
    test: np.ndarray = field(repr=False)


def load(reader, settings: ComparisonSection, analytes) -> dict[str, ComparisonData]:
    """``{analyte: ComparisonData}``: one row per shared sample and analyte, at least 3 per analyte."""
    def prepare(table):
        return (table, table.texts("sample", MAX_NAME_LENGTH), numeric_column(table, "reference", reader.decimal),
                numeric_column(table, "test", reader.decimal))

    def make(columns, idx, name):
        table, ids, ref, test = columns
        if len(idx) < 3:
            raise DataError(f'analyte "{name}" has {len(idx)} comparison sample(s); at least 3 are needed',
                            file=table.path, row=table.rows[idx[0]])
        first = {}
        for i in idx:       # one row per sample: a repeated id would count one sample twice
            if ids[i] in first:
                raise DataError(f'sample "{show(ids[i])}" appears again (first at row {first[ids[i]]}); the '
                                "comparison takes one reference and one test result per sample",
                                file=table.path, row=table.rows[i], column="sample", value=ids[i])
            first[ids[i]] = table.rows[i]
        return ComparisonData(tuple(ids[i] for i in idx), ref[idx], test[idx])

    return per_analyte(reader, settings, analytes, "comparison",
                       ("sample", "reference", "test"), ("analyte",), "comparison result", prepare, make)
