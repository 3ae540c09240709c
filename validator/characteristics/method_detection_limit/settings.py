"""The ``[method_detection_limit]`` section (40 CFR Part 136 Appendix B, Revision 2) and its data files.

```toml
[method_detection_limit]
spiked = "mdl-spiked.csv"   # column found; optional batch, spike_level (one per analyte), analyte
blanks = "mdl-blanks.csv"   # column found (empty, "ND" or "not detected": no numerical result); optional batch, analyte
```
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar, Optional

import numpy as np
from pydantic import Field

from ...inputs.study import DataPath, _Section

__all__ = ["MethodDetectionLimitSection", "MethodDetectionLimitData", "load"]


class MethodDetectionLimitSection(_Section):
    # there only when written: with [[runs]] an empty table reads the injections
    OPTIONAL_TABLE: ClassVar[bool] = True
    spiked: Optional[DataPath] = None       # both left out with [[runs]]: their low-level and blank injections
    blanks: Optional[DataPath] = None
    confidence: float = Field(0.99, ge=0.9, lt=1)          # 1 - alpha of the one-sided t; the rule fixes 0.99
    mdl_max: Optional[float] = Field(None, gt=0, le=1e100)  # the highest MDL the method may have; a criterion when set


@dataclass(frozen=True)
class MethodDetectionLimitData:
    spiked: np.ndarray = field(repr=False)
    spiked_batches: tuple[str, ...] | None = field(repr=False)
    blanks: np.ndarray = field(repr=False)                 # NaN: no numerical result
    blank_batches: tuple[str, ...] | None = field(repr=False)
    spike_level: float | None = None                       # the concentration spiked, when given


def load(reader, settings: MethodDetectionLimitSection, analytes: dict) -> dict:
    """``{analyte: MethodDetectionLimitData}`` for every analyte with spiked results."""
    if settings.spiked is None:          # the injections of [[runs]] give the data (characteristics.runs)
        return {}
    from ...errors import DataError
    from ...inputs.sector_names import one_spelling
    from ...inputs.sector_tables import labels, numbers, numbers_or_missing, positive, read_rows

    table, rows = read_rows(reader, "method_detection_limit.spiked", settings.spiked, ("found",),
                            ("batch", "spike_level"), analytes, "spiked result")
    found = numbers(reader, table, "found")
    spike = None
    if table.has("spike_level"):
        spike = numbers(reader, table, "spike_level")
        positive(table, "spike_level", spike)
    batches = labels(table, "batch", "") if table.has("batch") else None
    btable, brows = read_rows(reader, "method_detection_limit.blanks", settings.blanks, ("found",), ("batch",),
                              analytes, "method blank result")
    bfound = numbers_or_missing(reader, btable, "found")
    bbatches = labels(btable, "batch", "") if btable.has("batch") else None
    for name, idx in brows.items():
        if name not in rows:
            raise DataError(f'analyte "{name}" has method blanks but no spiked results in {settings.spiked}',
                            file=btable.path, row=btable.rows[idx[0]],
                            column="analyte" if btable.has("analyte") else None, value=name)
    out = {}
    for name, idx in rows.items():
        bidx = brows.get(name, [])
        if batches is not None:
            one_spelling(table, "batch", batches, idx)
        if bbatches is not None:
            one_spelling(btable, "batch", bbatches, bidx)
        level = None
        if spike is not None:
            for i in idx:
                if spike[i] != spike[idx[0]]:
                    raise DataError(f"spike_level {spike[i]:g} differs from {spike[idx[0]]:g} at row "
                                    f"{table.rows[idx[0]]}; one spike level per analyte", file=table.path,
                                    row=table.rows[i], column="spike_level", value=spike[i])
            level = float(spike[idx[0]])
        out[name] = MethodDetectionLimitData(found[idx], None if batches is None else tuple(batches[i] for i in idx),
                                             bfound[bidx], None if bbatches is None else tuple(bbatches[i] for i in bidx),
                                             level)
    return out
