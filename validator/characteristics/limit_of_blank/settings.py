"""The ``[limit_of_blank]`` section (CLSI EP17-A2 detection capability) and its data files.

```toml
[limit_of_blank]
blanks = "blank-results.csv"     # column found (concentration units); optional sample, lot, analyte
low_samples = "low-results.csv"  # columns sample, found; optional nominal, lot, analyte
```
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar, Literal, Optional

import numpy as np
from pydantic import Field

from ...inputs.study import DataPath, _Section

__all__ = ["LimitOfBlankSection", "LimitOfBlankData", "load"]

# a concentration limit in the study's unit (the same bound the other concentration keys use)
_CONCENTRATION = dict(gt=0, le=1e100)


class LimitOfBlankSection(_Section):
    # there only when written: with [[runs]] an empty table reads the injections
    OPTIONAL_TABLE: ClassVar[bool] = True
    blanks: Optional[DataPath] = None       # left out with [[runs]]: their blank and low-level injections
    low_samples: Optional[DataPath] = None
    method: Literal["nonparametric", "parametric"] = "nonparametric"
    purpose: Literal["establishment", "verification"] = "establishment"
    percentile: float = Field(0.95, ge=0.5, lt=1)
    # LoQ accuracy goals (either or both): CV at most, |bias| + 2 SD at most (concentration units)
    loq_max_cv_pct: Optional[float] = Field(None, gt=0, le=100)
    loq_max_total_error: Optional[float] = Field(None, **_CONCENTRATION)
    # the highest LoB, LoD and LoQ the method may have (claims or requirements); criteria only when set
    lob_max: Optional[float] = Field(None, **_CONCENTRATION)
    lod_max: Optional[float] = Field(None, **_CONCENTRATION)
    loq_max: Optional[float] = Field(None, **_CONCENTRATION)


@dataclass(frozen=True)
class LimitOfBlankData:
    """One analyte's blank and low-level results (concentration units)."""

    blanks: np.ndarray = field(repr=False)
    blank_samples: tuple[str, ...] = field(repr=False)
    blank_lots: tuple[str, ...] = field(repr=False)
    low: np.ndarray | None = field(default=None, repr=False)
    low_samples: tuple[str, ...] = field(default=(), repr=False)
    low_lots: tuple[str, ...] = field(default=(), repr=False)
    low_nominal: np.ndarray | None = field(default=None, repr=False)   # one per result, constant per sample


def load(reader, settings: LimitOfBlankSection, analytes: dict) -> dict:
    """``{analyte: LimitOfBlankData}`` for every analyte with blank results."""
    if settings.blanks is None:          # the injections of [[runs]] give the data (characteristics.runs)
        return {}
    from ...errors import DataError
    from ...inputs.sector_names import one_lot_spelling, one_spelling
    from ...inputs.sector_tables import labels, numbers, one_value_per_group, read_rows

    table, rows = read_rows(reader, "limit_of_blank.blanks", settings.blanks, ("found",), ("sample", "lot"),
                            analytes, "blank result")
    found = numbers(reader, table, "found")
    samples, lots = labels(table, "sample", "blank"), labels(table, "lot", "1")
    for idx in rows.values():
        one_spelling(table, "sample", samples, idx)
        one_lot_spelling(table, "lot", lots, idx)
    out = {name: LimitOfBlankData(found[idx], tuple(samples[i] for i in idx), tuple(lots[i] for i in idx))
           for name, idx in rows.items()}
    if settings.low_samples is None:
        return out
    low_table, low_rows = read_rows(reader, "limit_of_blank.low_samples", settings.low_samples,
                                    ("sample", "found"), ("nominal", "lot"), analytes, "low-level result")
    low = numbers(reader, low_table, "found")
    low_samples, low_lots = labels(low_table, "sample", ""), labels(low_table, "lot", "1")
    nominal = numbers(reader, low_table, "nominal") if low_table.has("nominal") else None
    for name, idx in low_rows.items():
        if name not in out:
            raise DataError(f'analyte "{name}" has low-level results but no blank results in {settings.blanks}: '
                            "the LoD is built on the LoB", file=low_table.path, row=low_table.rows[idx[0]],
                            column="analyte" if low_table.has("analyte") else None, value=name)
        one_spelling(low_table, "sample", low_samples, idx)
        one_lot_spelling(low_table, "lot", low_lots, idx)
        if nominal is not None:
            one_value_per_group(low_table, "sample", low_samples, "nominal", nominal, idx)
        d = out[name]
        out[name] = LimitOfBlankData(d.blanks, d.blank_samples, d.blank_lots, low[idx],
                                     tuple(low_samples[i] for i in idx), tuple(low_lots[i] for i in idx),
                                     None if nominal is None else nominal[idx])
    return out
