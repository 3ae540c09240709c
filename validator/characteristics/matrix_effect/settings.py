"""The ``[matrix_effect]`` section and its data files.

```toml
[matrix_effect]
solvent_data = "solvent-calibration.csv"   # columns concentration, response; optional analyte
                                           # ([calibration] is the matrix-matched one)
lots_data = "matrix-lots.csv"              # ICH M10: columns lot, nominal, found; optional analyte
                                           # (left out with [[runs]]: the QC injections that have a lot)
factor_data = "matrix-factor.csv"          # columns lot, analyte_response, internal_standard_response;
                                           # rows with lot "neat" are the neat-solution responses
                                           # (left out with [[runs]]: the post_extraction and neat injections)
```
With [[runs]], solvent_data may be left out too: the solvent_calibrator injections are the solvent
calibration.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar, Literal, Optional

import numpy as np
from pydantic import Field

from ...inputs.study import DataPath, _Section

__all__ = ["MatrixEffectSection", "MatrixEffectData", "load", "NEAT"]

NEAT = "neat"        # the lot name that marks neat-solution rows of factor_data (any case)


class MatrixEffectSection(_Section):
    OPTIONAL_TABLE: ClassVar[bool] = True
    solvent_data: Optional[DataPath] = None
    # "separate": each line its own residual variance, Welch-Satterthwaite df (valid whether or not they
    # differ); "pooled": one residual variance for both lines
    variance: Literal["separate", "pooled"] = "separate"
    limit_pct: float = Field(20.0, gt=0, le=1000)
    judge_slope_ratio: bool = False          # a criterion |ME %| <= limit_pct (else the flag only)
    lots_data: Optional[DataPath] = None
    lot_max_bias_pct: float = Field(15.0, gt=0, le=100)
    lot_max_cv_pct: float = Field(15.0, gt=0, le=100)
    # at least 2: a matrix effect from one lot says nothing about lot-to-lot variation, and the matrix
    # factor's CV across lots needs two (a smaller value was silently raised to 2 for the factor)
    min_lots: int = Field(6, ge=2, le=10000)
    min_replicates: int = Field(3, ge=2, le=10000)
    factor_data: Optional[DataPath] = None
    factor_max_cv_pct: float = Field(15.0, gt=0, le=100)

    # at least one of the three files, unless [[runs]] give the lots (lots_data left out): checked with the
    # whole study (validator.inputs.study._check_sector_sources)


@dataclass(frozen=True)
class MatrixEffectData:
    solvent_concentration: np.ndarray | None = field(default=None, repr=False)
    solvent_response: np.ndarray | None = field(default=None, repr=False)
    lots: tuple[str, ...] = field(default=(), repr=False)
    lot_nominal: np.ndarray | None = field(default=None, repr=False)
    lot_found: np.ndarray | None = field(default=None, repr=False)
    factor_lots: tuple[str, ...] = field(default=(), repr=False)
    factor_analyte: np.ndarray | None = field(default=None, repr=False)
    factor_internal_standard: np.ndarray | None = field(default=None, repr=False)
    # which factor responses are the neat solution's (factor_data: lot "neat"; the runs: neat injections)
    factor_neat: np.ndarray | None = field(default=None, repr=False)


def load(reader, settings: MatrixEffectSection, analytes: dict) -> dict:
    """``{analyte: MatrixEffectData}`` for every analyte with rows in any of the files."""
    from ...errors import DataError, show
    from ...inputs.sector_names import one_lot_spelling
    from ...inputs.sector_tables import labels, not_negative, numbers, positive, read_rows

    parts: dict = {}
    if settings.solvent_data is not None:
        table, rows = read_rows(reader, "matrix_effect.solvent_data", settings.solvent_data,
                                ("concentration", "response"), (), analytes, "solvent calibration point")
        x, y = numbers(reader, table, "concentration"), numbers(reader, table, "response")
        for i, v in enumerate(x):
            if v < 0:
                raise DataError(f"concentration {show(table.columns['concentration'][i])} is negative",
                                file=table.path, row=table.rows[i], column="concentration", value=v)
        for name, idx in rows.items():
            parts.setdefault(name, {}).update(solvent_concentration=x[idx], solvent_response=y[idx])
    if settings.lots_data is not None:
        table, rows = read_rows(reader, "matrix_effect.lots_data", settings.lots_data, ("lot", "nominal", "found"),
                                (), analytes, "matrix-lot result")
        lots, nominal, found = labels(table, "lot", ""), numbers(reader, table, "nominal"), numbers(reader, table, "found")
        positive(table, "nominal", nominal)
        for name, idx in rows.items():
            one_lot_spelling(table, "lot", lots, idx)
            parts.setdefault(name, {}).update(lots=tuple(lots[i] for i in idx), lot_nominal=nominal[idx],
                                              lot_found=found[idx])
    if settings.factor_data is not None:
        table, rows = read_rows(reader, "matrix_effect.factor_data", settings.factor_data,
                                ("lot", "analyte_response", "internal_standard_response"), (), analytes,
                                "matrix-factor response")
        lots = labels(table, "lot", "")
        a, s = numbers(reader, table, "analyte_response"), numbers(reader, table, "internal_standard_response")
        not_negative(table, "analyte_response", a)
        not_negative(table, "internal_standard_response", s)
        for name, idx in rows.items():
            one_lot_spelling(table, "lot", lots, idx)
            if not any(lots[i].casefold() == NEAT for i in idx):
                raise DataError(f'analyte "{name}" has no neat-solution rows (lot "{NEAT}"): the matrix factor '
                                "compares each lot with the neat solution", file=table.path,
                                row=table.rows[idx[0]], column="lot")
            parts.setdefault(name, {}).update(factor_lots=tuple(lots[i] for i in idx), factor_analyte=a[idx],
                                              factor_internal_standard=s[idx],
                                              factor_neat=np.array([lots[i].casefold() == NEAT for i in idx]))
    return {name: MatrixEffectData(**values) for name, values in parts.items()}
