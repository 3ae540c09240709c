"""Detection capability: the ``[detection]`` table, and the ``[blanks]`` table with its data file.

The blanks file has one column ``response`` (a blank reading each row) and optionally
``analyte``; its readings give the blank-SD basis of the limits.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
from pydantic import Field, model_validator

from ...inputs.loading import numeric_column, per_analyte
from ...inputs.study import DataSource, _probability, _Section

__all__ = ["DetectionSection", "BlanksSection", "load_blanks"]


class BlanksSection(DataSource):
    """[blanks]: blank responses (data, sheet, header_row; no data when [[runs]] give the blanks)."""


class DetectionSection(_Section):
    lod_factor: float = Field(3.3, gt=0, le=100)
    loq_factor: float = Field(10.0, gt=0, le=100)
    readings_per_sample: int = Field(1, ge=1, le=1000)
    beta: float = _probability(0.05)
    reporting_basis: Literal["ich-residual-sd", "ich-intercept-sd", "blank-sd"] = "ich-residual-sd"
    loq_rsd_max_pct: float = Field(20.0, gt=0, le=100)

    @model_validator(mode="after")
    def _order(self):
        if self.loq_factor <= self.lod_factor:
            raise ValueError("loq_factor must be larger than lod_factor")
        return self


def load_blanks(reader, settings: BlanksSection, analytes) -> dict[str, np.ndarray]:
    """``{analyte: blank responses}`` from the file ``settings.data``."""
    return per_analyte(reader, settings, analytes, "blanks", ("response",), ("analyte",), "blank",
                       lambda table: numeric_column(table, "response", reader.decimal),
                       lambda y, idx, name: y[idx])
