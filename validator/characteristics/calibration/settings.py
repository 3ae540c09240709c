"""Calibration: the ``[calibration]`` table of the study file and the calibration data file.

The file has one row per calibrator reading: ``concentration`` (>= 0), ``response``, and
optionally ``analyte`` (one study may calibrate several analytes; without the column the
study's id names the one analyte) and ``series``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal, Optional

import numpy as np
from pydantic import Field, model_validator

from ...errors import DataError, show
from ...inputs.loading import numeric_column
from ...inputs.study import DataSource
from ...inputs.tables import MAX_NAME_LENGTH
from ...maths.regression import WEIGHTED_BY, WEIGHTINGS

__all__ = ["CalibrationSection", "CalibrationData", "load"]


class CalibrationSection(DataSource):     # data (sheet, header_row); none when [[runs]] give the calibrators
    model: Literal["linear", "quadratic", "auto"] = "linear"
    weighting: Literal[WEIGHTINGS + ("auto",)] = "none"
    through_origin: bool = False
    # with [[runs]]: each run's injections through its own calibration ("run", the default) or one
    # calibration over every run's calibrators ("pooled"): how results are read, not a criterion
    quantify_with: Optional[Literal["run", "pooled"]] = Field(None, json_schema_extra={"protocol": False})

    @model_validator(mode="after")
    def _origin_linear(self):
        if self.through_origin and self.model != "linear":
            raise ValueError('through_origin = true is only allowed with model = "linear"')
        return self


@dataclass(frozen=True)
class CalibrationData:
    """One analyte's calibrators, in file order, with their file rows."""

    concentration: np.ndarray = field(repr=False)
    response: np.ndarray = field(repr=False)
    series: tuple[str, ...] = field(repr=False)
    rows: tuple[int, ...] = field(repr=False)



def _group(names):
    order, groups = [], {}
    for i, name in enumerate(names):
        if name not in groups:
            groups[name] = []
            order.append(name)
        groups[name].append(i)
    return order, groups



def _check_weighting(weighting: str, table, idx, x, y):
    if WEIGHTED_BY.get(weighting) == "concentration":
        for i in idx:
            if x[i] <= 0:
                raise DataError(f"concentration {x[i]:g} cannot be weighted by {weighting}; "
                                f'use weighting = "none" or "1/y", or remove the zero calibrator',
                                file=table.path, row=table.rows[i], column="concentration",
                                value=x[i])
    if WEIGHTED_BY.get(weighting) == "response":
        for i in idx:
            if y[i] <= 0:
                raise DataError(f"response {y[i]:g} cannot be weighted by {weighting} "
                                "(needs responses > 0)", file=table.path, row=table.rows[i],
                                column="response", value=y[i])



def load(reader, settings: CalibrationSection, analytes=None) -> dict[str, CalibrationData]:
    """``{analyte: CalibrationData}``: the calibration file names the analytes (in order of first row).

    Refused, naming file, row, column and value: a negative concentration, an analyte name that
    differs from another only in case, too few levels for the model, constant responses, a
    calibrator that the weighting cannot weight.
    """
    table = reader.table("calibration", settings, ("concentration", "response"),
                         ("analyte", "series"))
    x = numeric_column(table, "concentration", reader.decimal)
    y = numeric_column(table, "response", reader.decimal)
    for i, xi in enumerate(x):
        if xi < 0:
            raise DataError(f"concentration {show(table.columns['concentration'][i])} is negative",
                            file=table.path, row=table.rows[i], column="concentration", value=xi)
    default_name = reader.study.config.study.id          # one analyte, named by the study
    names = table.texts("analyte", MAX_NAME_LENGTH) if table.has("analyte") else [default_name] * len(table)
    series = tuple(table.columns["series"]) if table.has("series") else ("",) * len(table)
    order, groups = _group(names)
    if table.has("analyte"):
        reader.exclusions.refuse_emptied("calibration", "analyte", groups, "calibration")
    folded = {}
    for name in order:          # "Nitrate" and "nitrate" are two analytes only by mistake
        other = folded.setdefault(name.casefold(), name)
        if other != name:
            raise DataError(f'analyte "{show(name)}" differs only in upper/lower case from "{show(other)}" '
                            f"(row {table.rows[groups[other][0]]}); use one spelling per analyte",
                            file=table.path, row=table.rows[groups[name][0]], column="analyte", value=name)
    result = {}
    needed = 2 if settings.through_origin else (4 if settings.model == "quadratic" else 3)
    for name in order:
        idx = groups[name]
        levels = np.unique(x[idx])
        if levels.size < needed:
            what = f'analyte "{name}" has' if table.has("analyte") else "the calibration has"
            raise DataError(f"{what} {levels.size} distinct concentration(s); "
                            f"at least {needed} are needed for this model",
                            file=table.path, row=table.rows[idx[0]], column="concentration")
        if np.ptp(y[idx]) == 0:
            raise DataError(f'every response of analyte "{name}" is {y[idx][0]:g}: the instrument '
                            "does not respond to concentration", file=table.path,
                            row=table.rows[idx[0]], column="response")
        _check_weighting(settings.weighting, table, idx, x, y)
        result[name] = CalibrationData(x[idx], y[idx], tuple(series[i] for i in idx),
                                       tuple(table.rows[i] for i in idx))
    return result
