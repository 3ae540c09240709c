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

import numpy as np

from .csvdata import exact_centre, read_bytes, read_table
from .errors import DataError, StudyError
from .regression import MAGNITUDE_LIMIT, first_out_of_range
from .study import StudyFile, read_study_file

__all__ = ["InputFile", "AnalyteData", "LoadedStudy", "load_study"]


@dataclass(frozen=True)
class InputFile:
    role: str          # "study", "calibration", "samples", ...
    path: str          # as given in the study file
    resolved: str
    sha256: str
    size: int


@dataclass(frozen=True)
class CalibrationData:
    concentration: np.ndarray = field(repr=False)
    response: np.ndarray = field(repr=False)
    series: tuple = field(repr=False)
    rows: tuple = field(repr=False)


@dataclass(frozen=True)
class SampleData:
    id: str
    responses: tuple
    rows: tuple


@dataclass(frozen=True)
class RecoveryData:
    added: np.ndarray = field(repr=False)
    found: np.ndarray = field(repr=False)
    native: np.ndarray = field(repr=False)
    series: tuple = field(repr=False)


@dataclass(frozen=True)
class PrecisionData:
    level: np.ndarray = field(repr=False)
    series: tuple = field(repr=False)
    found: np.ndarray = field(repr=False)       # found - offset, the subtraction done exactly
    offset: float = 0.0


@dataclass(frozen=True)
class AnalyteData:
    name: str
    calibration: CalibrationData
    samples: tuple = ()
    blanks: np.ndarray | None = field(default=None, repr=False)
    recovery: RecoveryData | None = None
    precision: PrecisionData | None = None
    reference_material: np.ndarray | None = field(default=None, repr=False)
    comparison: tuple | None = field(default=None, repr=False)     # (sample ids, reference, test)
    previous: dict | None = field(default=None, repr=False)        # the analyte in the previous results


@dataclass(frozen=True)
class PreviousRun:
    """The results.json of an earlier validation, as identified in the audit trail."""

    path: str
    sha256: str
    study_id: str
    generated_at: str
    unmatched: tuple         # analyte names present in only one of the two runs


@dataclass(frozen=True)
class LoadedStudy:
    study: StudyFile
    inputs: tuple            # InputFile, the study file first
    analytes: tuple          # AnalyteData, in order of first appearance
    previous: PreviousRun | None = None

    @property
    def config(self):
        return self.study.config


def _group(names):
    order, groups = [], {}
    for i, name in enumerate(names):
        if name not in groups:
            groups[name] = []
            order.append(name)
        groups[name].append(i)
    return order, groups


class _Reader:
    def __init__(self, study: StudyFile):
        self.study = study
        cfg = study.config.study
        self.decimal = cfg.decimal
        self.delimiter = cfg.delimiter
        self.max_bytes = int(cfg.max_data_file_mb * 1024 * 1024)
        self.inputs = [InputFile("study", study.shown, str(study.path.resolve()), study.sha256,
                                 len(study.text.encode()))]

    def table(self, role: str, path: str, required: tuple, optional: tuple = ()):
        resolved = self.study.resolve(path)
        data = read_bytes(resolved, path, self.max_bytes)
        self.inputs.append(InputFile(role, path, str(resolved), hashlib.sha256(data).hexdigest(), len(data)))
        return read_table(data, path, delimiter=self.delimiter, required=required, optional=optional)


def _numbers(table, column: str, decimal: str) -> np.ndarray:
    """A numeric column, refused when a value's magnitude is beyond what the statistics can square."""
    values = np.array(table.numbers(column, decimal))
    i = first_out_of_range(values)
    if i is not None:
        raise DataError(f"{column} {table.columns[column][i]} is outside the magnitudes validator can "
                        f"compute with (non-zero values from {1 / MAGNITUDE_LIMIT:g} to {MAGNITUDE_LIMIT:g}, "
                        "so that squares and products of the data stay finite); rescale the unit",
                        file=table.path, row=table.rows[i], column=column, value=values[i])
    return values


def _check_weighting(weighting: str, table, idx, x, y):
    if weighting in ("1/x", "1/x^2"):
        for i in idx:
            if x[i] <= 0:
                raise DataError(f"concentration {x[i]:g} cannot be weighted by {weighting}; "
                                f'use weighting = "none" or "1/y", or remove the zero calibrator',
                                file=table.path, row=table.rows[i], column="concentration",
                                value=x[i])
    if weighting in ("1/y", "1/y^2"):
        for i in idx:
            if y[i] <= 0:
                raise DataError(f"response {y[i]:g} cannot be weighted by {weighting} "
                                "(needs responses > 0)", file=table.path, row=table.rows[i],
                                column="response", value=y[i])


def _calibration(reader: _Reader):
    cfg = reader.study.config
    table = reader.table("calibration", cfg.calibration.data, ("concentration", "response"),
                         ("analyte", "series"))
    x = _numbers(table, "concentration", reader.decimal)
    y = _numbers(table, "response", reader.decimal)
    for i, xi in enumerate(x):
        if xi < 0:
            raise DataError(f"concentration {table.columns['concentration'][i]} is negative",
                            file=table.path, row=table.rows[i], column="concentration", value=xi)
    names = table.texts("analyte") if table.has("analyte") else [cfg.study.id] * len(table)
    series = tuple(table.columns["series"]) if table.has("series") else ("",) * len(table)
    order, groups = _group(names)
    result = {}
    needed = 2 if cfg.calibration.through_origin else (4 if cfg.calibration.model == "quadratic" else 3)
    for name in order:
        idx = groups[name]
        levels = np.unique(x[idx])
        if levels.size < needed:
            what = f'analyte "{name}" has' if table.has("analyte") else "the calibration has"
            raise DataError(f"{what} {levels.size} distinct concentration(s); "
                            f"at least {needed} are needed for this model",
                            file=table.path, row=table.rows[idx[0]], column="concentration")
        if np.ptp(y[idx]) == 0:
            raise DataError(f'every response of analyte "{name}" is {y[idx][0]:g}: the instrument '
                            "does not respond to concentration", file=table.path,
                            row=table.rows[idx[0]], column="response")
        _check_weighting(cfg.calibration.weighting, table, idx, x, y)
        result[name] = CalibrationData(x[idx], y[idx], tuple(series[i] for i in idx),
                                       tuple(table.rows[i] for i in idx))
    return result


def _analyte_rows(table, analytes: dict, what: str) -> dict:
    """Row indices of ``table`` per analyte (all rows if there is one analyte and no column)."""
    if table.has("analyte"):
        names = table.texts("analyte")
    elif len(analytes) == 1:
        names = [next(iter(analytes))] * len(table)
    else:
        raise DataError(f'has no column "analyte" but the calibration covers {len(analytes)} analytes; '
                        f"say which analyte each {what} belongs to", file=table.path)
    out = {name: [] for name in analytes}
    for i, (name, row) in enumerate(zip(names, table.rows)):
        if name not in analytes:
            raise DataError(f'analyte "{name}" is not in the calibration data (known: '
                            + ", ".join(f'"{a}"' for a in analytes) + ")",
                            file=table.path, row=row, column="analyte", value=name)
        out[name].append(i)
    return out


def _samples(reader: _Reader, analytes: dict):
    cfg = reader.study.config
    if cfg.samples is None:
        return {}
    table = reader.table("samples", cfg.samples.data, ("sample", "response"), ("analyte",))
    ids = table.texts("sample")
    responses = _numbers(table, "response", reader.decimal).tolist()
    seen = {}
    for sid, row in zip(ids, table.rows):
        key = " ".join(sid.split()).casefold()
        if key in seen and seen[key][0] != sid:
            raise DataError(f'sample id "{sid}" differs only in case or spacing from "{seen[key][0]}" '
                            f"(row {seen[key][1]}); use one spelling per sample", file=table.path, row=row,
                            column="sample", value=sid)
        seen.setdefault(key, (sid, row))
    out = {}
    for name, idx in _analyte_rows(table, analytes, "reading").items():
        groups = {}
        for i in idx:
            groups.setdefault(ids[i], ([], []))
            groups[ids[i]][0].append(responses[i])
            groups[ids[i]][1].append(table.rows[i])
        out[name] = tuple(SampleData(sid, tuple(r), tuple(rw)) for sid, (r, rw) in groups.items())
    return out


def _positive(table, column, values, what="must be > 0"):
    for v, cell, row in zip(values, table.columns[column], table.rows):
        if not v > 0:
            raise DataError(f"{column} {cell} {what}", file=table.path, row=row, column=column, value=v)


def _blanks(reader, analytes):
    cfg = reader.study.config
    if cfg.blanks is None:
        return {}
    table = reader.table("blanks", cfg.blanks.data, ("response",), ("analyte",))
    y = _numbers(table, "response", reader.decimal)
    return {name: y[idx] for name, idx in _analyte_rows(table, analytes, "blank").items() if idx}


def _recovery(reader, analytes):
    cfg = reader.study.config
    if cfg.recovery is None:
        return {}
    table = reader.table("recovery", cfg.recovery.data, ("added", "found"), ("native", "analyte", "series"))
    added = _numbers(table, "added", reader.decimal)
    _positive(table, "added", added)
    found = _numbers(table, "found", reader.decimal)
    native = _numbers(table, "native", reader.decimal) if table.has("native") else np.zeros_like(added)
    series = tuple(table.columns["series"]) if table.has("series") else ("",) * len(table)
    return {name: RecoveryData(added[idx], found[idx], native[idx], tuple(series[i] for i in idx))
            for name, idx in _analyte_rows(table, analytes, "recovery result").items() if idx}


def _precision(reader, analytes):
    cfg = reader.study.config
    if cfg.precision is None:
        return {}
    table = reader.table("precision", cfg.precision.data, ("level", "series", "found"), ("analyte",))
    level = _numbers(table, "level", reader.decimal)
    series = table.texts("series")
    _numbers(table, "found", reader.decimal)
    out = {}
    for name, idx in _analyte_rows(table, analytes, "precision result").items():
        if not idx:
            continue
        offset, centred = exact_centre([table.columns["found"][i] for i in idx], reader.decimal)
        out[name] = PrecisionData(level[idx], tuple(series[i] for i in idx), centred, offset)
    return out


def _reference_material(reader, analytes):
    cfg = reader.study.config.reference_material
    if cfg is None:
        return {}
    if cfg.analyte is None and len(analytes) > 1:
        raise StudyError("the study covers several analytes; say which one the reference material "
                         "certifies (analyte = ...)", file=reader.study.shown, key="reference_material.analyte")
    name = cfg.analyte or next(iter(analytes))
    if name not in analytes:
        raise StudyError(f'analyte "{name}" is not in the calibration data', file=reader.study.shown,
                         key="reference_material.analyte", value=name)
    table = reader.table("reference_material", cfg.data, ("found",), ())
    return {name: _numbers(table, "found", reader.decimal)}


def _comparison(reader, analytes):
    cfg = reader.study.config.comparison
    if cfg is None:
        return {}
    table = reader.table("comparison", cfg.data, ("sample", "reference", "test"), ("analyte",))
    ids = table.texts("sample")
    ref = _numbers(table, "reference", reader.decimal)
    test = _numbers(table, "test", reader.decimal)
    out = {}
    for name, idx in _analyte_rows(table, analytes, "comparison result").items():
        if not idx:
            continue
        if len(idx) < 3:
            raise DataError(f'analyte "{name}" has {len(idx)} comparison sample(s); at least 3 are needed',
                            file=table.path, row=table.rows[idx[0]])
        out[name] = (tuple(ids[i] for i in idx), ref[idx], test[idx])
    return out


def _previous(reader, analytes):
    import json

    cfg = reader.study.config.revalidation
    if cfg is None:
        return {}, None
    path = cfg.previous
    resolved = reader.study.resolve(path)
    data = read_bytes(resolved, path, reader.max_bytes)
    reader.inputs.append(InputFile("previous-results", path, str(resolved), hashlib.sha256(data).hexdigest(),
                                   len(data)))
    try:
        previous = json.loads(data.decode("utf-8"))
        version = str(previous["schema_version"])
        unit = previous["study"]["concentration_unit"]
        names = [a["name"] for a in previous["analytes"]]
    except (ValueError, KeyError, TypeError, UnicodeDecodeError):
        raise DataError("is not a results.json written by validator", file=path) from None
    if version.split(".")[0] != "1":
        raise DataError(f'has schema version "{version}"; this validator reads version 1.x', file=path)
    current_unit = reader.study.config.study.concentration_unit
    if unit != current_unit:
        raise DataError(f'uses concentration unit "{unit}" but this study uses "{current_unit}"; '
                        "results in different units cannot be compared", file=path)
    by_name = {a["name"]: a for a in previous["analytes"]}
    unmatched = tuple([n for n in analytes if n not in by_name] + [n for n in names if n not in analytes])
    run = PreviousRun(path, reader.inputs[-1].sha256, previous["study"]["id"], previous["generated_at"], unmatched)
    return by_name, run


def load_study(path: str | Path) -> LoadedStudy:
    """Read and check a study file and all its data files."""
    study = read_study_file(path)
    reader = _Reader(study)
    calibration = _calibration(reader)
    samples = _samples(reader, calibration)
    blanks = _blanks(reader, calibration)
    recovery = _recovery(reader, calibration)
    precision = _precision(reader, calibration)
    crm = _reference_material(reader, calibration)
    comparison = _comparison(reader, calibration)
    previous, run = _previous(reader, calibration)
    analytes = tuple(AnalyteData(name, calibration[name], samples.get(name, ()), blanks.get(name),
                                 recovery.get(name), precision.get(name), crm.get(name),
                                 comparison.get(name), previous.get(name))
                     for name in calibration)
    return LoadedStudy(study=study, inputs=tuple(reader.inputs), analytes=analytes, previous=run)
