"""Quantified samples: the ``[samples]`` table and its data file.

The file has one row per reading of an unknown: ``sample`` (its id; the readings of one id are
averaged), ``response`` and optionally ``analyte``.
"""

from __future__ import annotations

from dataclasses import dataclass

from ...errors import DataError
from ...inputs.loading import analyte_rows, numeric_column
from typing import Annotated, Optional

from pydantic import AfterValidator, Field, model_validator

from ...errors import show
from ...inputs.sample_ids import check_expected, near_duplicates, spelling_variant
from ...inputs.study import DataSource, _no_control
from ...inputs.tables import MAX_NAME_LENGTH

__all__ = ["SamplesSection", "SampleData", "load"]


SampleId = Annotated[str, Field(min_length=1, max_length=100, pattern=r"\S"), AfterValidator(_no_control)]


class SamplesSection(DataSource):
    """[samples]: the unknowns' responses (none when [[runs]] give them), and optionally the ids expected."""

    # the ids to check the data against: not design or criteria (validator.protocol)
    expected: list[SampleId] = Field([], json_schema_extra={"protocol": False})
    expected_readings: Optional[int] = Field(None, ge=1, le=1000, json_schema_extra={"protocol": False})

    @model_validator(mode="after")
    def _expected(self):
        seen = set()
        for sid in self.expected:
            if sid in seen:
                raise ValueError(f'expected lists sample "{show(sid)}" twice')
            seen.add(sid)
        if self.expected_readings is not None and not self.expected:
            raise ValueError("expected_readings needs the list of expected sample ids (expected = [...])")
        return self


@dataclass(frozen=True)
class SampleData:
    """One unknown: its id and its readings (with their file rows)."""

    id: str
    responses: tuple[float, ...]
    rows: tuple[int, ...]


def load(reader, settings: SamplesSection, analytes) -> dict[str, tuple[SampleData, ...]]:
    """``{analyte: its samples}``, each sample's readings grouped by id in file order."""
    if settings.data is None:          # the samples come from [[runs]]
        return {}
    table = reader.table("samples", settings, ("sample", "response"), ("analyte",))
    ids = table.texts("sample", MAX_NAME_LENGTH)
    responses = numeric_column(table, "response", reader.decimal).tolist()
    clash = spelling_variant(ids)
    if clash is not None:
        first, second = clash
        raise DataError(f'sample id "{ids[second]}" differs only in case or spacing from "{ids[first]}" '
                        f"(row {table.rows[first]}); use one spelling per sample", file=table.path,
                        row=table.rows[second], column="sample", value=ids[second])
    out = {}
    for name, idx in analyte_rows(table, analytes, "reading").items():
        own_ids, own_rows = [ids[i] for i in idx], [table.rows[i] for i in idx]
        if settings.expected:
            check_expected(analyte=name, ids=own_ids, rows=own_rows, file=table.path,
                           expected=tuple(settings.expected), expected_readings=settings.expected_readings,
                           study=reader.study.shown)
        else:
            reader.near_duplicate_ids.extend(near_duplicates(analyte=name, ids=own_ids, rows=own_rows,
                                                             file=table.path))
        groups = {}
        for i in idx:
            groups.setdefault(ids[i], ([], []))
            groups[ids[i]][0].append(responses[i])
            groups[ids[i]][1].append(table.rows[i])
        out[name] = tuple(SampleData(sid, tuple(r), tuple(rw)) for sid, (r, rw) in groups.items())
    return out
