"""Re-validation: the ``[revalidation]`` table and the earlier results.json it names.

The earlier file is read strictly by :func:`validator.inputs.previous.read_previous` (schema,
units, analyte matching); each matched analyte gets its entry of that file.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from pydantic import Field

from ...inputs.previous import PreviousRun, read_previous
from ...inputs.study import DataPath, _Section

__all__ = ["RevalidationSection", "PreviousAnalyte", "load"]


class RevalidationSection(_Section):
    previous: DataPath
    slope_change_max_pct: float = Field(5.0, gt=0, le=100)
    residual_sd_ratio_max: float = Field(2.0, gt=0, le=100)
    # this run's analyte name -> its name in the previous results.json, for renamed analytes
    analytes: dict[str, str] = Field(default_factory=dict, json_schema_extra={"protocol": False})


@dataclass(frozen=True)
class PreviousAnalyte:
    """One analyte's counterpart in the earlier results.json."""

    name: str                                        # its name there
    entry: dict[str, Any] = field(repr=False)        # its entry, as read (checked against the schema)
    run: PreviousRun = field(repr=False)             # the file, as identified in the audit trail


def load(reader, settings: RevalidationSection, analytes) -> dict[str, PreviousAnalyte]:
    """``{analyte: PreviousAnalyte}`` for every analyte matched in the earlier results.json."""
    entries, run = read_previous(reader, analytes)
    names = dict(run.matched)
    return {name: PreviousAnalyte(names.get(name, name), entry, run) for name, entry in entries.items()}
