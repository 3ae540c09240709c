"""Recovery: the ``[recovery]`` table of the study file and the recovery data file it names.

The file has one row per spiked result: ``added`` (> 0), ``found``, and optionally ``native``
(the analyte found in the unspiked matrix, 0 when absent), ``analyte`` and ``series``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Annotated

import numpy as np
from pydantic import Field, model_validator

from ...inputs.loading import check_positive, declared_levels_exist, numeric_column, per_analyte
from ...inputs.study import DataSource, _Section, check_range

__all__ = ["RecoverySection", "RecoveryLevelLimit", "RecoveryData", "load"]

# a recovery in per cent, as a bound of an acceptance range
RecoveryPct = Annotated[float, Field(ge=0, le=1000)]


class RecoveryLevelLimit(_Section):
    added: float = Field(gt=0)
    range_pct: list[RecoveryPct]

    @model_validator(mode="after")
    def _check(self):
        check_range(self.range_pct)
        return self


class RecoverySection(DataSource):        # data, and sheet/header_row for a workbook
    range_pct: list[RecoveryPct] = [90.0, 110.0]
    levels: list[RecoveryLevelLimit] = []

    @model_validator(mode="after")
    def _check(self):
        check_range(self.range_pct)
        return self

    def range_for(self, added: float) -> tuple:
        for lv in self.levels:
            if abs(lv.added - added) <= 1e-9 * max(abs(added), 1.0):
                return tuple(lv.range_pct)
        return tuple(self.range_pct)


@dataclass(frozen=True)
class RecoveryData:
    """One analyte's spiked results (one entry per row, in file order)."""

    added: np.ndarray = field(repr=False)
    found: np.ndarray = field(repr=False)
    native: np.ndarray = field(repr=False)
    series: tuple[str, ...] = field(repr=False)


def load(reader, settings: RecoverySection, analytes) -> dict[str, RecoveryData]:
    """``{analyte: RecoveryData}`` from the file ``settings.data``; errors name file, row, column, value."""
    def prepare(table):
        added = numeric_column(table, "added", reader.decimal)
        check_positive(table, "added", added)
        found = numeric_column(table, "found", reader.decimal)
        native = numeric_column(table, "native", reader.decimal) if table.has("native") else np.zeros_like(added)
        series = tuple(table.columns["series"]) if table.has("series") else ("",) * len(table)
        declared_levels_exist(reader, "recovery", "added", [lv.added for lv in settings.levels], added)
        return added, found, native, series

    def make(columns, idx, name):
        added, found, native, series = columns
        return RecoveryData(added[idx], found[idx], native[idx], tuple(series[i] for i in idx))

    return per_analyte(reader, settings, analytes, "recovery", ("added", "found"), ("native", "analyte", "series"),
                       "recovery result", prepare, make)
