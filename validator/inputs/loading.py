"""Loading a study: the study file plus every data file it names.

This layer does all the file reading and every check that needs to point at
a file row (negative concentrations, too few levels, a weighting that cannot
be computed). What it returns is plain arrays, grouped per analyte, ready for
the pure analysis layer.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import dataclasses

import numpy as np

from .analyte_settings import check_analytes
from .exclusions import Excluded, Exclusions
from .sample_ids import NearDuplicateIds
from .tables import MAX_NAME_LENGTH, exact_centre, read_bytes, read_table
from ..errors import DataError, StudyError, shorten, show
from ..maths.regression import MAGNITUDE_LIMIT, first_out_of_range
from .previous import PreviousRun
from .study import StudyFile, read_study_file, with_key_line

if TYPE_CHECKING:
    from ..characteristics.calibration.settings import CalibrationData

__all__ = ["InputFile", "DataRows", "AnalyteData", "LoadedStudy", "Reader", "load_study", "per_analyte", "analyte_rows",
           "numeric_column", "check_positive", "declared_levels_exist"]


@dataclass(frozen=True)
class InputFile:
    role: str          # "study", "calibration", "samples", ...
    path: str          # as given in the study file
    resolved: str
    sha256: str
    size: int
    sheet: str | None = None          # the sheet read, for an .xlsx workbook
    delimiter: str | None = None      # how a CSV file was read: ",", ";" or "tab"
    decimal: str | None = None        # "." or ","
    dialect: str | None = None        # "stated", "detected" or "stated and detected"


@dataclass(frozen=True)
class DataRows:
    """The rows of one data table that the statistics read, as read (cell text), with their file rows.

    ``analyte`` is the analyte the rows belong to: the table's "analyte" column, else the analyte the
    table's section names (``analyte = ...``, an analyte's own data file), else the one analyte of a
    study of one; ``None`` when the file does not say (listed study-wide). The rows of an instrument
    export read through [[runs]] are not listed here: each injection is in results.json with its row.
    """

    role: str                          # the study-file table that named the file
    file: str                          # as given in the study file
    sheet: str | None
    analyte: str | None
    columns: tuple[str, ...]
    rows: tuple[int, ...]              # file row (line) of each record
    cells: tuple[tuple[str, ...], ...]  # per record, its cells in the order of ``columns``
    # the rows of this table and analyte left out by [[exclusions]]: (file row, reason, cells)
    excluded: tuple[tuple[int, str, tuple[str, ...]], ...] = ()


@dataclass(frozen=True)
class AnalyteData:
    """One analyte's data: its calibration, and what each characteristic's loader read for it."""

    name: str
    calibration: CalibrationData     # the data of the registry's first entry, which name the analytes
    # (characteristic name, its data) for each characteristic whose ``load`` read data for this analyte
    entries: tuple[tuple[str, Any], ...] = field(default=(), repr=False)

    def with_entries(self, provided) -> "AnalyteData":
        """These data with ``provided`` (name, data) pairs set: a field of that name, else an entry."""
        fields = {f.name for f in dataclasses.fields(self)}
        own = {name: value for name, value in provided if name in fields}
        entries = dict(self.entries)
        entries.update({name: value for name, value in provided if name not in fields})
        return dataclasses.replace(self, **own, entries=tuple(entries.items()))

    def of(self, name: str) -> Any:
        """The data the characteristic ``name`` read for this analyte (``None``: none)."""
        return next((data for entry, data in self.entries if entry == name), None)


@dataclass(frozen=True)
class LoadedStudy:
    study: StudyFile
    inputs: tuple[InputFile, ...]            # the study file first
    analytes: tuple[AnalyteData, ...]        # in order of first appearance
    previous: PreviousRun | None = None
    excluded: tuple[Excluded, ...] = ()      # data rows left out by [[exclusions]], with their reasons
    near_duplicate_ids: tuple[NearDuplicateIds, ...] = ()   # sample ids one edit apart (no expected list)
    data_rows: tuple[DataRows, ...] = ()     # every data row the statistics read, by table and analyte

    @property
    def config(self):
        return self.study.config


class Reader:
    """Reads a study's data files: the study's dialect and size limit, and the audit trail of inputs."""

    def __init__(self, study: StudyFile):
        self.study = study
        cfg = study.config.study
        self.decimal = cfg.decimal          # None: detected per file (each table knows its own)
        self.delimiter = cfg.delimiter
        self.max_bytes = int(cfg.max_data_file_mb * 1024 * 1024)
        self.inputs = [InputFile("study", study.shown, str(study.path.resolve()), study.sha256,
                                 len(study.text.encode()))]
        self.exclusions = Exclusions(study.config.exclusions, study.resolve, study.shown, study.text)
        self.near_duplicate_ids: list = []
        self.data_rows: list[DataRows] = []
        self.only_analyte: str | None = None    # set while an analyte's own data file is read

    def record(self, role: str, path: str, resolved: Path, data: bytes, table=None) -> None:
        """Enter an input file read in full into the audit trail (path as given, SHA-256, size).

        With ``table``, also how it was read: the sheet of a workbook, or the
        delimiter and decimal mark of a CSV file and whether they were stated or detected.
        """
        how = {}
        if table is not None:
            sheet = getattr(table, "sheet", None)
            how = ({"sheet": sheet} if sheet else
                   {"delimiter": table.delimiter, "decimal": table.decimal, "dialect": table.dialect})
        self.inputs.append(InputFile(role, path, str(resolved), hashlib.sha256(data).hexdigest(), len(data),
                                     **how))

    def table(self, role: str, source, required: tuple, optional: tuple = (), *, other_columns: str = "refuse"):
        """The table of ``source`` (a [section] naming data, sheet and header_row, or a path).

        Rows the study excludes ([[exclusions]]) are left out; ``other_columns="ignore"``
        leaves the columns outside ``required`` and ``optional`` unread (an instrument export).
        """
        path = source if isinstance(source, str) else source.data
        resolved = self.study.resolve(path)
        data = read_bytes(resolved, path, self.max_bytes)
        table = read_table(data, path, delimiter=self.delimiter, decimal=self.decimal, required=required,
                           optional=optional, sheet=getattr(source, "sheet", None),
                           header_row=getattr(source, "header_row", None), other_columns=other_columns)
        self.record(role, path, resolved, data, table)
        before = len(self.exclusions.applied)
        kept = _no_hidden_rows(self.exclusions.apply(role, path, resolved, table))
        if role != "runs":          # an export's injections are listed, with their rows, by the runs
            self._keep_rows(role, path, kept, getattr(source, "analyte", None), self.exclusions.applied[before:])
        return kept

    def _keep_rows(self, role: str, path: str, table, named: str | None, excluded) -> None:
        """Record the rows of ``table`` (after exclusions) per analyte, as read, for the raw-data appendix."""
        columns = tuple(table.columns)
        sheet = getattr(table, "sheet", None) or None
        if "analyte" in table.columns:
            groups: dict = {}
            for k, name in enumerate(table.columns["analyte"]):
                groups.setdefault(name.strip(), []).append(k)
        else:
            owner = self.only_analyte or (named if isinstance(named, str) else None)
            groups = {owner: list(range(len(table.rows)))}
        owner = self.only_analyte or (named if isinstance(named, str) else None)
        left_out: dict = {}
        for e in excluded:
            cells = dict(e.cells)
            name = cells["analyte"].strip() if "analyte" in cells else owner
            left_out.setdefault(name, []).append((e.row, e.reason, tuple(cells.get(c, "") for c in columns)))
            groups.setdefault(name, [])
        for name, idx in groups.items():
            self.data_rows.append(DataRows(role, path, sheet, name, columns, tuple(table.rows[k] for k in idx),
                                           tuple(tuple(table.columns[c][k] for c in columns) for k in idx),
                                           tuple(left_out.get(name, ()))))


def _no_hidden_rows(table):
    """``table``, refused when a workbook row it still holds is hidden (by hand or by a filter).

    Hiding a row is how a spreadsheet user often "removes" an injection; validator does not read
    such a row silently (as it refuses a hidden first sheet): unhide it to use it, or leave it out
    with its reason in [[exclusions]].
    """
    from .workbook import CellError

    kept = set(table.rows)
    hidden = [r for r in getattr(table, "hidden_rows", ()) if r in kept]
    if not hidden:
        return table
    listed = ", ".join(str(r) for r in hidden[:10]) + (", ..." if len(hidden) > 10 else "")
    raise CellError(f"{'row' if len(hidden) == 1 else 'rows'} {listed} {'is' if len(hidden) == 1 else 'are'} hidden "
                    "in the workbook; a hidden row is not read silently: unhide it to use it, or leave it out with "
                    f'its reason in [[exclusions]] (file = "{show(table.path)}", sheet = "{show(table.sheet)}", '
                    f"row = {hidden[0]})", file=table.path, sheet=table.sheet, row=hidden[0])


def numeric_column(table, column: str, decimal: str | None = None) -> np.ndarray:
    """A numeric column, refused when a value's magnitude is beyond what the statistics can square.

    ``decimal`` None: the decimal mark the table was read with (stated or detected).
    """
    values = np.array(table.numbers(column, decimal))
    i = first_out_of_range(values)
    if i is not None:
        raise DataError(f"{column} {table.columns[column][i]} is outside the magnitudes validator can "
                        f"compute with (non-zero values from {1 / MAGNITUDE_LIMIT:g} to {MAGNITUDE_LIMIT:g}, "
                        "so that squares and products of the data stay finite); rescale the unit",
                        file=table.path, row=table.rows[i], column=column, value=values[i])
    return values


def analyte_rows(table, analytes: dict, what: str) -> dict:
    """Row indices of ``table`` per analyte (all rows if there is one analyte and no column)."""
    if table.has("analyte"):
        names = table.texts("analyte", MAX_NAME_LENGTH)
    elif len(analytes) == 1:
        names = [next(iter(analytes))] * len(table)
    else:
        raise DataError(f'has no column "analyte" but the calibration covers {len(analytes)} analytes; '
                        f"say which analyte each {what} belongs to", file=table.path)
    out = {name: [] for name in analytes}
    for i, (name, row) in enumerate(zip(names, table.rows)):
        if name not in analytes:
            raise DataError(f'analyte "{name}" is not in the calibration data (known: '
                            + shorten(", ".join(f'"{a}"' for a in analytes), 4 * MAX_NAME_LENGTH) + ")",
                            file=table.path, row=row, column="analyte", value=name)
        out[name].append(i)
    return out


def check_positive(table, column, values, what="must be > 0"):
    for v, cell, row in zip(values, table.columns[column], table.rows):
        if not v > 0:
            raise DataError(f"{column} {show(cell)} {what}", file=table.path, row=row, column=column, value=v)


def per_analyte(reader, settings, analytes, role: str, required: tuple, optional: tuple, what: str, prepare,
                make):
    """The skeleton every per-analyte data table shares.

    The table named by ``settings.data`` is read (the columns ``required``, and ``optional``
    ones such as "analyte") and entered in the audit trail as ``role``; ``prepare(table)``
    parses and checks whole columns (so errors come in row order), the rows are split by
    analyte, and ``make(columns, idx, name)`` builds the data of each analyte that has rows.
    Nothing when ``settings`` is ``None`` (the study has no such table).
    """
    if settings is None or getattr(settings, "data", "") is None:   # no table, or its data come from [[runs]]
        return {}
    table = reader.table(role, settings, required, optional)
    columns = prepare(table)
    return {name: make(columns, idx, name)
            for name, idx in analyte_rows(table, analytes, what).items() if idx}


def declared_levels_exist(reader, section: str, key: str, declared, present) -> None:
    """A per-level limit in the study must match a level in the data, else it would silently judge nothing."""
    present = sorted({float(v) for v in present})
    for i, value in enumerate(declared):
        if not any(abs(value - p) <= 1e-9 * max(abs(value), 1.0) for p in present):
            raise StudyError(f"no {section} result has {key} = {value:g}, so this limit would judge nothing "
                             f"(the data have {key} " + ", ".join(f"{p:g}" for p in present) + ")",
                             file=reader.study.shown, key=f"{section}.levels[{i}].{key}", value=value)




def _check_preparations(study, samples: dict, runs) -> None:
    """Every per-sample preparation in [sample_preparation] names a sample of the data (else it would apply to nothing)."""
    reporting = getattr(study.config, "sample_preparation", None)
    if reporting is None or not reporting.samples:
        return
    ids = {s.id for group in samples.values() for s in group}
    if runs is not None:
        ids |= {i.sample for group in runs.injections.values() for i in group if i.type == "sample"}
    for sid in reporting.samples:
        if sid not in ids:
            raise StudyError(f'no sample has the id "{show(sid)}", so this preparation would apply to nothing',
                             file=study.shown, key=f"sample_preparation.samples.{sid}", value=sid)


def _own_files(reader, entry, analytes, shared) -> dict:
    """``{entry.name: data}`` with the data an analyte's own table names ([analyte_settings.<analyte>.<name>]
    data = ..., a reference material of its own), read with the analyte's settings; ``{}`` when there are none."""
    own = {s.analyte: s.config for s in reader.study.analyte_settings
           if entry.load is not None and s.sets(entry.name, "data")}
    if not own:
        return {}
    out = dict(shared or {})
    for name, config in own.items():
        if name in out:
            raise StudyError(f'analyte "{show(name)}" has rows in the file of [{entry.name}] and a data file of its '
                             "own; give its results in one place", file=reader.study.shown,
                             key=f"analyte_settings.{name}.{entry.name}.data", value=name)
        reader.only_analyte = name
        try:
            data = entry.load(reader, getattr(config, entry.name), {name: analytes[name]})
        finally:
            reader.only_analyte = None
        if name in data:
            out[name] = data[name]
    return {entry.name: out}


def load_study(path: str | Path) -> LoadedStudy:
    """Read and check a study file and all its data files.

    Each characteristic of the registry that reads a data file (``entry.load``) reads it, in
    registry order, when the study has its table; the first, the calibration, names the analytes.
    """
    from .. import registry

    study = read_study_file(path)
    try:
        return _load(study)
    except StudyError as err:
        fuller = with_key_line(err, study)
        if fuller is err:
            raise
        raise fuller from err


def _load(study) -> LoadedStudy:
    from .. import registry

    reader = Reader(study)
    calibration, loaded = None, {}
    runs = None
    if study.config.runs:           # the run exports give the calibration, blanks and injections
        from .runs import load_runs
        runs = load_runs(reader)
        calibration = runs.calibration
        loaded.update({"calibration": runs.calibration, "blanks": runs.blanks, "runs": runs.injections})
        check_analytes(study, calibration)
    for entry in registry.REGISTRY:
        if entry.name in loaded:
            continue
        if entry.load is not None:
            settings = getattr(study.config, entry.name, None)
            if settings is not None:
                loaded[entry.name] = entry.load(reader, settings, calibration)
                calibration = loaded[entry.name] if calibration is None else calibration
                if entry.name == "calibration":
                    check_analytes(study, calibration)
            loaded.update(_own_files(reader, entry, calibration, loaded.get(entry.name)))
    excluded = reader.exclusions.check()
    _check_preparations(study, loaded.get("samples", {}), runs)
    analytes = tuple(AnalyteData(name, calibration[name],
                                 entries=tuple((entry, data[name]) for entry, data in loaded.items() if name in data))
                     for name in calibration)
    # the earlier results.json of a re-validation (it matches at least one analyte, or is refused)
    run = next((data.run for data in loaded.get("revalidation", {}).values()), None)
    return LoadedStudy(study=study, inputs=tuple(reader.inputs), analytes=analytes, previous=run,
                       excluded=excluded, near_duplicate_ids=tuple(reader.near_duplicate_ids),
                       data_rows=_owned(reader.data_rows, tuple(calibration)))


def _owned(data_rows: list, analytes: tuple) -> tuple:
    """``data_rows`` with the rows of a file that does not name its analyte given to the one analyte of a
    study of one (else left study-wide)."""
    if len(analytes) != 1:
        return tuple(data_rows)
    return tuple(dataclasses.replace(d, analyte=analytes[0]) if d.analyte is None else d for d in data_rows)
