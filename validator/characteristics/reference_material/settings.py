"""Reference material: the ``[reference_material]`` table and its data file.

The file has one column ``found``: the laboratory's results on the certified reference
material, all for the one analyte the material certifies (``analyte``, required when the
study covers several analytes).
"""

from __future__ import annotations

from typing import Optional

import numpy as np
from pydantic import Field

from ...errors import StudyError
from ...inputs.loading import numeric_column
from ...inputs.study import TEXT_LIMITS, DataSource, Text

__all__ = ["ReferenceMaterialSection", "load"]


class ReferenceMaterialSection(DataSource):        # data, and sheet/header_row for a workbook
    certified_value: float = Field(gt=0)
    standard_uncertainty: float = Field(ge=0)
    analyte: Optional[Text] = Field(None, min_length=1, max_length=TEXT_LIMITS["analyte"])
    coverage_factor: float = Field(2.0, gt=0, le=10)
    measurement_standard_uncertainty: Optional[float] = Field(None, gt=0, allow_inf_nan=False)


def load(reader, settings: ReferenceMaterialSection, analytes) -> dict[str, np.ndarray]:
    """``{analyte: results}`` for the one analyte the material certifies (none when [[runs]] give them)."""
    if settings.data is None:
        return {}
    if settings.analyte is None and len(analytes) > 1:
        raise StudyError("the study covers several analytes; say which one the reference material "
                         "certifies (analyte = ...)", file=reader.study.shown, key="reference_material.analyte")
    name = settings.analyte or next(iter(analytes))
    if name not in analytes:
        raise StudyError(f'analyte "{name}" is not in the calibration data', file=reader.study.shown,
                         key="reference_material.analyte", value=name)
    table = reader.table("reference_material", settings, ("found",), ())
    return {name: numeric_column(table, "found", reader.decimal)}
