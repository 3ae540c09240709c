"""Quantified samples: the ``[samples]`` table and its data file.

The file has one row per reading of an unknown: ``sample`` (its id; the readings of one id are
averaged), ``response`` and optionally ``analyte``.
"""

from __future__ import annotations

from dataclasses import dataclass

from ...errors import DataError
from ...inputs.loading import analyte_rows, numeric_column
from ...inputs.study import DataPath, _Section
from ...inputs.tables import MAX_NAME_LENGTH

__all__ = ["SamplesSection", "SampleData", "load"]


class SamplesSection(_Section):
    data: DataPath


@dataclass(frozen=True)
class SampleData:
    """One unknown: its id and its readings (with their file rows)."""

    id: str
    responses: tuple[float, ...]
    rows: tuple[int, ...]


def load(reader, settings: SamplesSection, analytes) -> dict[str, tuple[SampleData, ...]]:
    """``{analyte: its samples}``, each sample's readings grouped by id in file order."""
    table = reader.table("samples", settings.data, ("sample", "response"), ("analyte",))
    ids = table.texts("sample", MAX_NAME_LENGTH)
    responses = numeric_column(table, "response", reader.decimal).tolist()
    seen = {}
    for sid, row in zip(ids, table.rows):
        key = " ".join(sid.split()).casefold()
        if key in seen and seen[key][0] != sid:
            raise DataError(f'sample id "{sid}" differs only in case or spacing from "{seen[key][0]}" '
                            f"(row {seen[key][1]}); use one spelling per sample", file=table.path, row=row,
                            column="sample", value=sid)
        seen.setdefault(key, (sid, row))
    out = {}
    for name, idx in analyte_rows(table, analytes, "reading").items():
        groups = {}
        for i in idx:
            groups.setdefault(ids[i], ([], []))
            groups[ids[i]][0].append(responses[i])
            groups[ids[i]][1].append(table.rows[i])
        out[name] = tuple(SampleData(sid, tuple(r), tuple(rw)) for sid, (r, rw) in groups.items())
    return out
