"""The ``[reanalysis]`` section (incurred-sample reanalysis, ICH M10) and its data file.

```toml
[reanalysis]
data = "isr.csv"        # columns sample, original, repeat; optional analyte
limit_pct = 20
min_fraction = 0.67
study_samples = 400     # optional: the ICH M10 ISR size (here 40) is then checked
```
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal, Optional

import numpy as np
from pydantic import Field

from ...inputs.study import DataPath, _Section

__all__ = ["ReanalysisSection", "ReanalysisData", "load"]


class ReanalysisSection(_Section):
    data: DataPath
    limit_pct: float = Field(20.0, gt=0, le=100)
    # compared exactly with the fraction of repeats within the limit: 0.67 is not 2/3 (20 of 30 fails it)
    min_fraction: float = Field(2 / 3, gt=0, le=1)
    # the number of study samples: ICH M10 sizes ISR from it (from memory, sec. 5: 10 % of the first 1000
    # and 5 % beyond); fewer reanalysed samples are not judged
    study_samples: Optional[int] = Field(None, ge=1, le=10**9)
    # "ich-m10" (set by the ICH M10 preset): study_samples is needed for a verdict
    size_rule: Literal["none", "ich-m10"] = "none"


@dataclass(frozen=True)
class ReanalysisData:
    samples: tuple[str, ...]
    original: np.ndarray = field(repr=False)
    repeat: np.ndarray = field(repr=False)


def load(reader, settings: ReanalysisSection, analytes: dict) -> dict:
    """``{analyte: ReanalysisData}``; a sample listed twice for one analyte is an error at its row."""
    from ...errors import DataError, show
    from ...inputs.sector_names import one_spelling
    from ...inputs.sector_tables import labels, numbers, read_rows

    table, rows = read_rows(reader, "reanalysis", settings.data, ("sample", "original", "repeat"), (),
                            analytes, "reanalysed sample")
    samples = labels(table, "sample", "")
    original, repeat = numbers(reader, table, "original"), numbers(reader, table, "repeat")
    out = {}
    for name, idx in rows.items():
        one_spelling(table, "sample", samples, idx)
        first: dict = {}
        for i in idx:
            if samples[i] in first:
                raise DataError(f'sample "{show(samples[i])}" appears again (first at row {first[samples[i]]}); '
                                "one original and one repeat result per sample", file=table.path,
                                row=table.rows[i], column="sample", value=samples[i])
            first[samples[i]] = table.rows[i]
        out[name] = ReanalysisData(tuple(samples[i] for i in idx), original[idx], repeat[idx])
    return out
