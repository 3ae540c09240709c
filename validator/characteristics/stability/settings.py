"""The ``[stability]`` section (ICH M10) and its data file.

```toml
[stability]
data = "stability.csv"   # columns condition (e.g. "bench-top 24 h", "3 freeze-thaw cycles"), nominal, found;
                         # optional analyte. With reference = "fresh", rows with condition "fresh" are the
                         # freshly prepared comparison samples of their nominal level.
```
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar, Literal, Optional

import numpy as np
from pydantic import Field

from ...inputs.study import DataPath, _Section

__all__ = ["StabilitySection", "StabilityData", "load", "FRESH"]

FRESH = "fresh"


class StabilitySection(_Section):
    OPTIONAL_TABLE: ClassVar[bool] = True
    data: Optional[DataPath] = None       # required unless [[runs]] give the data (left out with [[runs]]: the QC injections that have a condition)
    reference: Literal["nominal", "fresh"] = "nominal"
    limit_pct: float = Field(15.0, gt=0, le=100)
    judged_on: Literal["estimate", "interval"] = "estimate"
    min_replicates: int = Field(3, ge=2, le=10000)


@dataclass(frozen=True)
class StabilityData:
    conditions: tuple[str, ...]
    nominal: np.ndarray = field(repr=False)
    found: np.ndarray = field(repr=False)


def load(reader, settings: StabilitySection, analytes: dict) -> dict:
    """``{analyte: StabilityData}``; with ``reference = "fresh"`` each nominal level needs fresh rows."""
    if settings.data is None:          # the QC injections of [[runs]] give the data (characteristics.runs)
        return {}
    from ...errors import DataError
    from ...inputs.sector_names import one_spelling, slug
    from ...inputs.sector_tables import labels, numbers, positive, read_rows

    table, rows = read_rows(reader, "stability", settings.data, ("condition", "nominal", "found"), (), analytes,
                            "stability result")
    conditions = labels(table, "condition", "")
    nominal, found = numbers(reader, table, "nominal"), numbers(reader, table, "found")
    positive(table, "nominal", nominal)
    out = {}
    for name, idx in rows.items():
        # each condition names criterion ids stability-<slug>-<nominal>: one spelling per slug
        one_spelling(table, "condition", conditions, idx, key=slug,
                     how="differ only in letter case or punctuation and would give one criterion id")
        if settings.reference == "fresh":
            for i in idx:
                if not any(conditions[j].casefold() == FRESH and nominal[j] == nominal[i] for j in idx):
                    raise DataError(f'reference = "fresh" but nominal {nominal[i]:g} has no "{FRESH}" rows to compare '
                                    "with", file=table.path, row=table.rows[i], column="nominal", value=nominal[i])
        out[name] = StabilityData(tuple(conditions[i] for i in idx), nominal[idx], found[idx])
    return out
