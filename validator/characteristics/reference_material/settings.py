"""Reference material: the ``[reference_material]`` table and its data file.

The file has the column ``found``: the laboratory's results on the certified reference
material. Without an ``analyte`` column, all are for the one analyte the material certifies
(``analyte``, required when the study covers several analytes). With an ``analyte`` column the
file may hold the results of several materials: the rows of ``analyte`` are this table's, and
the rows of another analyte belong to that analyte's own material,
``[analyte_settings.<analyte>.reference_material]`` (with its certified value), which may also
name a file of its own (:mod:`validator.inputs.analyte_settings`).
"""

from __future__ import annotations

from typing import Optional

import numpy as np
from pydantic import Field

from ...errors import DataError, StudyError, did_you_mean, show
from ...inputs.loading import analyte_rows, numeric_column
from ...inputs.study import TEXT_LIMITS, DataSource, Text

__all__ = ["ReferenceMaterialSection", "load"]


class ReferenceMaterialSection(DataSource):        # data, and sheet/header_row for a workbook
    certified_value: float = Field(gt=0)
    standard_uncertainty: float = Field(ge=0)
    analyte: Optional[Text] = Field(None, min_length=1, max_length=TEXT_LIMITS["analyte"])
    coverage_factor: float = Field(2.0, gt=0, le=10)
    measurement_standard_uncertainty: Optional[float] = Field(None, gt=0, allow_inf_nan=False)


def _materials_in_shared_file(reader) -> set:
    """The analytes with a material of their own whose results are in the study-wide file (no data of their own)."""
    return {s.analyte for s in reader.study.analyte_settings
            if "reference_material" in s.tables and not s.sets("reference_material", "data")}


def load(reader, settings: ReferenceMaterialSection, analytes) -> dict[str, np.ndarray]:
    """``{analyte: results}`` for the analytes whose material has results in the file (none when [[runs]] give
    them)."""
    if settings.data is None:
        return {}
    if settings.analyte is None and len(analytes) > 1:
        raise StudyError("the study covers several analytes; say which one the reference material "
                         "certifies (analyte = ...)", file=reader.study.shown, key="reference_material.analyte")
    name = settings.analyte or next(iter(analytes))
    if name not in analytes:
        raise StudyError(f'analyte "{show(name)}" is not in the calibration data{did_you_mean(name, analytes)}',
                         file=reader.study.shown,
                         key="reference_material.analyte", value=name)
    table = reader.table("reference_material", settings, ("found",), ("analyte",))
    found = numeric_column(table, "found", reader.decimal)
    if not table.has("analyte"):
        return {name: found}
    own = {name} | (_materials_in_shared_file(reader) if len(analytes) > 1 else set())
    out = {}
    for analyte, idx in analyte_rows(table, analytes, "reference-material result").items():
        if not idx:
            continue
        if analyte not in own:
            raise DataError(f'a result for analyte "{show(analyte)}", which has no certified reference material in '
                            f"the study; give it one in [analyte_settings.{show(analyte)}.reference_material] "
                            "(certified_value, standard_uncertainty)", file=table.path, row=table.rows[idx[0]],
                            column="analyte", value=analyte)
        out[analyte] = found[idx]
    return out
