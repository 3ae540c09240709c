"""The ``[carry_over]`` section (ICH M10) and its data file.

```toml
[carry_over]
data = "carry-over.csv"   # columns kind ("blank": a blank injected after the highest calibrator,
                          # "lloq": an LLOQ sample), response; optional internal_standard_response, analyte
```
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar, Optional

import numpy as np
from pydantic import Field

from ...inputs.study import DataPath, _Section

__all__ = ["CarryOverSection", "CarryOverData", "load"]


class CarryOverSection(_Section):
    # there only when written: with [[runs]] an empty table reads the injections
    OPTIONAL_TABLE: ClassVar[bool] = True
    data: Optional[DataPath] = None         # left out with [[runs]]: the runs' sequences give the blanks
    analyte_limit_pct: float = Field(20.0, gt=0, le=100)
    internal_standard_limit_pct: float = Field(5.0, gt=0, le=100)


@dataclass(frozen=True)
class CarryOverData:
    blank: np.ndarray = field(repr=False)
    lloq: np.ndarray = field(repr=False)
    blank_internal_standard: np.ndarray | None = field(default=None, repr=False)
    lloq_internal_standard: np.ndarray | None = field(default=None, repr=False)



def load(reader, settings: CarryOverSection, analytes: dict) -> dict:
    """``{analyte: CarryOverData}``; each analyte needs blank and LLOQ rows, LLOQ responses above zero,
    blank responses not below zero."""
    if settings.data is None:          # the injections of [[runs]] give the data (characteristics.runs)
        return {}
    from ...errors import DataError
    from ...inputs.sector_tables import kinds, not_negative, numbers, positive, read_rows

    table, rows = read_rows(reader, "carry_over", settings.data, ("kind", "response"), ("internal_standard_response",),
                            analytes, "carry-over injection")
    kind, response = kinds(table), numbers(reader, table, "response")
    has_is = table.has("internal_standard_response")
    istd = numbers(reader, table, "internal_standard_response") if has_is else None
    out = {}
    for name, idx in rows.items():
        blank = [i for i in idx if kind[i] == "blank"]
        lloq = [i for i in idx if kind[i] == "lloq"]
        for what, which in (("blank", blank), ("lloq", lloq)):
            if not which:
                raise DataError(f'analyte "{name}" has no "{what}" rows: carry-over compares the blanks after the '
                                "highest calibrator with the LLOQ response", file=table.path, row=table.rows[idx[0]],
                                column="kind")
        not_negative(table, "response", response, blank)
        positive(table, "response", response, lloq)
        if has_is:
            not_negative(table, "internal_standard_response", istd, blank)
            positive(table, "internal_standard_response", istd, lloq)
        out[name] = CarryOverData(response[blank], response[lloq], None if istd is None else istd[blank],
                                  None if istd is None else istd[lloq])
    return out
