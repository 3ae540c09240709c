"""The ``[dilution_integrity]`` section (ICH M10) and its data file.

```toml
[dilution_integrity]
data = "dilution.csv"   # columns factor (>= 1), nominal (of the undiluted over-range QC), found (measured
                        # in the diluted sample, before the factor); optional analyte
```
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar, Optional

import numpy as np
from pydantic import Field

from ...inputs.study import DataPath, _Section

__all__ = ["DilutionIntegritySection", "DilutionData", "load"]


class DilutionIntegritySection(_Section):
    OPTIONAL_TABLE: ClassVar[bool] = True
    data: Optional[DataPath] = None       # required unless [[runs]] give the data (left out with [[runs]]: the QC injections that have a dilution factor)
    max_bias_pct: float = Field(15.0, gt=0, le=100)
    max_cv_pct: float = Field(15.0, gt=0, le=100)
    min_replicates: int = Field(5, ge=2, le=10000)


@dataclass(frozen=True)
class DilutionData:
    factor: np.ndarray = field(repr=False)
    nominal: np.ndarray = field(repr=False)
    found: np.ndarray = field(repr=False)


def load(reader, settings: DilutionIntegritySection, analytes: dict) -> dict:
    """``{analyte: DilutionData}``; a factor below 1 or a nominal not above 0 is an error at its row."""
    if settings.data is None:          # the QC injections of [[runs]] give the data (characteristics.runs)
        return {}
    from ...errors import DataError, show
    from ...inputs.sector_tables import numbers, positive, read_rows

    table, rows = read_rows(reader, "dilution_integrity", settings.data, ("factor", "nominal", "found"), (), analytes,
                            "diluted QC result")
    factor, nominal, found = (numbers(reader, table, c) for c in ("factor", "nominal", "found"))
    for i, f in enumerate(factor):
        if not f >= 1:
            raise DataError(f"factor {show(table.columns['factor'][i])} must be at least 1", file=table.path,
                            row=table.rows[i], column="factor", value=f)
    positive(table, "nominal", nominal)
    return {name: DilutionData(factor[idx], nominal[idx], found[idx]) for name, idx in rows.items()}
