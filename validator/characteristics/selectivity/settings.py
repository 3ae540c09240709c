"""The ``[selectivity]`` section (ICH M10) and its data file.

```toml
[selectivity]
data = "selectivity.csv"   # columns lot, kind ("blank": a blank-matrix lot, "lloq": an LLOQ sample, its lot
                           # cell may be empty), response; optional internal_standard_response, analyte
```
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar, Optional

import numpy as np
from pydantic import Field

from ...inputs.study import DataPath, _Section

__all__ = ["SelectivitySection", "SelectivityData", "load"]


class SelectivitySection(_Section):
    # there only when written: with [[runs]] an empty table reads the injections
    OPTIONAL_TABLE: ClassVar[bool] = True
    data: Optional[DataPath] = None         # left out with [[runs]]: their matrix-blank injections
    analyte_limit_pct: float = Field(20.0, gt=0, le=100)
    internal_standard_limit_pct: float = Field(5.0, gt=0, le=100)
    min_lots: int = Field(6, ge=1, le=10000)
    min_fraction: float = Field(1.0, gt=0, le=1)           # of the lots that must pass


@dataclass(frozen=True)
class SelectivityData:
    lots: tuple[str, ...]
    blank: np.ndarray = field(repr=False)
    lloq: np.ndarray = field(repr=False)
    blank_internal_standard: np.ndarray | None = field(default=None, repr=False)
    lloq_internal_standard: np.ndarray | None = field(default=None, repr=False)


def load(reader, settings: SelectivitySection, analytes: dict) -> dict:
    """``{analyte: SelectivityData}``; blank rows need a lot, each analyte needs blank and LLOQ rows."""
    if settings.data is None:          # the injections of [[runs]] give the data (characteristics.runs)
        return {}
    from ...errors import DataError
    from ...inputs.sector_names import one_lot_spelling
    from ...inputs.sector_tables import kinds, not_negative, numbers, positive, read_rows

    table, rows = read_rows(reader, "selectivity", settings.data, ("lot", "kind", "response"),
                            ("internal_standard_response",), analytes, "selectivity injection")
    kind, response = kinds(table), numbers(reader, table, "response")
    has_is = table.has("internal_standard_response")
    istd = numbers(reader, table, "internal_standard_response") if has_is else None
    lots = [cell.strip() for cell in table.columns["lot"]]
    out = {}
    for name, idx in rows.items():
        blank = [i for i in idx if kind[i] == "blank"]
        lloq = [i for i in idx if kind[i] == "lloq"]
        for what, which in (("blank", blank), ("lloq", lloq)):
            if not which:
                raise DataError(f'analyte "{name}" has no "{what}" rows: selectivity compares blank-matrix lots with '
                                "the LLOQ response", file=table.path, row=table.rows[idx[0]], column="kind")
        for i in blank:
            if not lots[i]:
                raise DataError("a blank-matrix row needs its lot", file=table.path, row=table.rows[i], column="lot",
                                value="")
        one_lot_spelling(table, "lot", lots, blank)
        not_negative(table, "response", response, blank)
        positive(table, "response", response, lloq)
        if has_is:
            not_negative(table, "internal_standard_response", istd, blank)
            positive(table, "internal_standard_response", istd, lloq)
        out[name] = SelectivityData(tuple(lots[i] for i in blank), response[blank], response[lloq],
                                    None if istd is None else istd[blank], None if istd is None else istd[lloq])
    return out
