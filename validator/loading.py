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

from .csvdata import MAX_NAME_LENGTH, exact_centre, read_bytes, read_table
from .errors import DataError, StudyError, shorten, show
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
    matched: tuple = ()      # (name in this study, name in the previous results) per compared analyte


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
            raise DataError(f"concentration {show(table.columns['concentration'][i])} is negative",
                            file=table.path, row=table.rows[i], column="concentration", value=xi)
    names = table.texts("analyte", MAX_NAME_LENGTH) if table.has("analyte") else [cfg.study.id] * len(table)
    series = tuple(table.columns["series"]) if table.has("series") else ("",) * len(table)
    order, groups = _group(names)
    folded = {}
    for name in order:          # "Nitrate" and "nitrate" are two analytes only by mistake
        other = folded.setdefault(name.casefold(), name)
        if other != name:
            raise DataError(f'analyte "{show(name)}" differs only in upper/lower case from "{show(other)}" '
                            f"(row {table.rows[groups[other][0]]}); use one spelling per analyte",
                            file=table.path, row=table.rows[groups[name][0]], column="analyte", value=name)
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


def _samples(reader: _Reader, analytes: dict):
    cfg = reader.study.config
    if cfg.samples is None:
        return {}
    table = reader.table("samples", cfg.samples.data, ("sample", "response"), ("analyte",))
    ids = table.texts("sample", MAX_NAME_LENGTH)
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
            raise DataError(f"{column} {show(cell)} {what}", file=table.path, row=row, column=column, value=v)


def _blanks(reader, analytes):
    cfg = reader.study.config
    if cfg.blanks is None:
        return {}
    table = reader.table("blanks", cfg.blanks.data, ("response",), ("analyte",))
    y = _numbers(table, "response", reader.decimal)
    return {name: y[idx] for name, idx in _analyte_rows(table, analytes, "blank").items() if idx}


def _declared_levels_exist(reader, section: str, key: str, declared, present) -> None:
    """A per-level limit in the study must match a level in the data, else it would silently judge nothing."""
    present = sorted({float(v) for v in present})
    for i, value in enumerate(declared):
        if not any(abs(value - p) <= 1e-9 * max(abs(value), 1.0) for p in present):
            raise StudyError(f"no {section} result has {key} = {value:g}, so this limit would judge nothing "
                             f"(the data have {key} " + ", ".join(f"{p:g}" for p in present) + ")",
                             file=reader.study.shown, key=f"{section}.levels[{i}].{key}", value=value)


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
    _declared_levels_exist(reader, "recovery", "added", [lv.added for lv in cfg.recovery.levels], added)
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
    _declared_levels_exist(reader, "precision", "level", [lv.level for lv in cfg.precision.levels], level)
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
    ids = table.texts("sample", MAX_NAME_LENGTH)
    ref = _numbers(table, "reference", reader.decimal)
    test = _numbers(table, "test", reader.decimal)
    out = {}
    for name, idx in _analyte_rows(table, analytes, "comparison result").items():
        if not idx:
            continue
        if len(idx) < 3:
            raise DataError(f'analyte "{name}" has {len(idx)} comparison sample(s); at least 3 are needed',
                            file=table.path, row=table.rows[idx[0]])
        first = {}
        for i in idx:       # one row per sample: a repeated id would count one sample twice
            if ids[i] in first:
                raise DataError(f'sample "{show(ids[i])}" appears again (first at row {first[ids[i]]}); the '
                                "comparison takes one reference and one test result per sample",
                                file=table.path, row=table.rows[i], column="sample", value=ids[i])
            first[ids[i]] = table.rows[i]
        out[name] = (tuple(ids[i] for i in idx), ref[idx], test[idx])
    return out


MAX_PREVIOUS_BYTES = 16 * 1024 * 1024     # a results.json is at most a few megabytes
MAX_PREVIOUS_DEPTH = 32                   # results.json nests 7 levels deep


def _json_path(parts) -> str:
    out = "$"
    for p in parts:
        out += f"[{p}]" if isinstance(p, int) else f".{p}"
    return out


def _strict_json(text: str, path: str):
    """json.loads refusing NaN/Infinity, non-finite floats, huge integers and deep nesting."""
    import json

    def bad_constant(name):
        raise DataError(f"contains {name}, which is not a JSON number", file=path)

    def number(s):
        v = float(s)
        if not np.isfinite(v):
            raise DataError(f"contains the number {s[:40]}, which is too large to represent", file=path)
        return v

    def integer(s):
        if len(s.lstrip("-")) > 15:
            raise DataError(f"contains the integer {s[:40]}{'...' if len(s) > 40 else ''}, which is too large",
                            file=path)
        return int(s)

    try:
        doc = json.loads(text, parse_constant=bad_constant, parse_float=number, parse_int=integer)
    except RecursionError:
        raise DataError("is nested too deeply to be a results.json", file=path) from None
    except ValueError as exc:
        if isinstance(exc, DataError):
            raise
        raise DataError(f"is not valid JSON ({str(exc)[:120]})", file=path) from None
    stack = [(doc, 1)]
    while stack:
        node, depth = stack.pop()
        if depth > MAX_PREVIOUS_DEPTH:
            raise DataError(f"is nested more than {MAX_PREVIOUS_DEPTH} levels deep; it is not a results.json",
                            file=path)
        children = node.values() if isinstance(node, dict) else node if isinstance(node, list) else ()
        stack.extend((c, depth + 1) for c in children if isinstance(c, (dict, list)))
    return doc


def _check_schema(doc, path: str):
    """Validate against the shipped results schema; the first error names its JSON path."""
    import jsonschema

    from .results import load_schema

    validator = jsonschema.Draft202012Validator(load_schema())
    error = jsonschema.exceptions.best_match(validator.iter_errors(doc))
    if error is not None:
        message = " ".join(error.message.split())
        if len(message) > 160:
            message = message[:157] + "..."
        raise DataError(f"is not a valid results.json: at JSON path {_json_path(error.absolute_path)}: {message}",
                        file=path)


def _match(current: list, previous: list, mapping: dict, study_path: str) -> list:
    """Pairs (current name, previous name).

    Rules: an explicit ``[revalidation] analytes = {new = "old"}`` entry first; then equal
    names; then, when each run has exactly one analyte, those two.
    """
    for new, old in mapping.items():
        if new not in current:
            raise StudyError(f'names "{new}", which is not an analyte of this study (analytes: '
                             + ", ".join(f'"{a}"' for a in current) + ")",
                             file=study_path, key=f"revalidation.analytes.{new}", value=new)
        if old not in previous:
            raise StudyError(f'maps "{new}" to "{old}", which is not an analyte of the previous results '
                             "(analytes: " + ", ".join(f'"{a}"' for a in previous) + ")",
                             file=study_path, key=f"revalidation.analytes.{new}", value=old)
    olds = list(mapping.values())
    if len(set(olds)) != len(olds):
        raise StudyError("maps two analytes to the same previous analyte", file=study_path,
                         key="revalidation.analytes", value=mapping)
    pairs = dict(mapping)
    taken = set(olds)
    for name in current:
        if name not in pairs and name in previous and name not in taken:
            pairs[name] = name
            taken.add(name)
    if not pairs and len(current) == 1 and len(previous) == 1:
        pairs[current[0]] = previous[0]
    return [(c, pairs[c]) for c in current if c in pairs]


_NEEDS_POSITIVE = {"1/x": "concentration", "1/x^2": "concentration", "1/y": "response", "1/y^2": "response"}


def _fit_problem(x: np.ndarray, y: np.ndarray, weighting: str, n_params: int) -> str | None:
    """Why a least-squares fit with this weighting cannot be computed on these points, or None.

    Checks what the fit needs: enough points and distinct levels (levels closer than 1e-9
    of the range count as one), weights 1/v^k that are finite and positive, and weighted
    sums of squares that do not overflow.
    """
    levels = np.unique(x)
    spread = float(levels[-1] - levels[0]) if levels.size else 0.0
    distinct = 1 + int(np.sum(np.diff(levels) > 1e-9 * spread)) if levels.size else 0
    if n_params == 1:
        distinct = int(np.any(x != 0))
    if x.size <= n_params or distinct < n_params:
        return f"{x.size} points at {distinct} distinct levels are too few for {n_params} coefficients"
    with np.errstate(all="ignore"):
        base = {"1/x": x, "1/x^2": x, "1/y": y, "1/y^2": y}.get(weighting)
        raw = np.ones_like(x) if base is None else 1.0 / base ** (2 if weighting.endswith("^2") else 1)
        sums = (np.sum(raw), np.sum(raw * x * x), np.sum(raw * y * y))
    if not (np.all(np.isfinite(raw)) and np.all(raw > 0)):
        return f"weighting {weighting} gives weights that are not finite positive numbers"
    if not all(np.isfinite(v) and v > 0 for v in sums[:1]) or not all(np.isfinite(v) for v in sums[1:]):
        return "the values are too large or too small for a least-squares fit"
    return None


def _check_refit(reader, name: str, index: int, entry: dict, data: CalibrationData, prev_path: str):
    """The previous run's calibration function must be computable on both runs' points.

    ``entry`` is analyte number ``index`` of the previous results; this run's points are
    refitted with its model and weighting for the comparison.
    """
    cal = entry["calibration"]
    model, weighting, origin = cal["model"], cal["weighting"], cal["through_origin"]
    n_params = 1 if origin else {"linear": 2, "quadratic": 3}[model]
    what = _NEEDS_POSITIVE.get(weighting)
    cal_path = reader.study.config.calibration.data
    function = f'the previous validation\'s calibration function ({prev_path}, analyte "{entry["name"]}")'
    if what:
        values = data.concentration if what == "concentration" else data.response
        bad = np.flatnonzero(~(values > 0))
        if bad.size:
            i = int(bad[0])
            raise DataError(f"{what} {values[i]:g} cannot be weighted by {weighting}, the weighting of {function}, "
                            "with which this run's points are refitted for the comparison", file=cal_path,
                            row=data.rows[i], column=what, value=values[i])
    problem = _fit_problem(data.concentration, data.response, weighting, n_params)
    if problem:
        raise DataError(f'analyte "{name}" cannot be refitted with {function}: {problem}', file=cal_path)
    rows = cal["back_calculated"]
    base = ["analytes", index, "calibration", "back_calculated"]
    if not cal["n"] <= 10**9:           # the schema's "integer" also admits 1e300
        raise DataError(f"is not a consistent results.json: at JSON path {_json_path(base[:-1] + ['n'])}: "
                        f"{cal['n']!r} is not a plausible number of calibration points", file=prev_path)
    if len(rows) != cal["n"]:
        return                     # no raw points: the comparison falls back to summary statistics
    if what:
        key = "nominal" if what == "concentration" else "response"
        for i, r in enumerate(rows):
            if not r[key] > 0:
                raise DataError(f"is not a consistent results.json: at JSON path {_json_path(base + [i, key])}: "
                                f"{r[key]!r} cannot be weighted by the recorded weighting {weighting}",
                                file=prev_path)
    x = np.array([r["nominal"] for r in rows], float)
    y = np.array([r["response"] for r in rows], float)
    problem = _fit_problem(x, y, weighting, n_params)
    if problem:
        raise DataError(f"is not a consistent results.json: at JSON path {_json_path(base)}: {problem} "
                        f"(recorded {model} calibration function, weighting {weighting})", file=prev_path)


def _previous(reader, analytes):
    """Read, check and match the previous results.json of a re-validation.

    The file is validated against the shipped results schema before any value is used;
    every problem is a :class:`DataError` naming the file and, for a schema error, the
    JSON path. Analytes are matched by :func:`_match`; a re-validation that matches
    nothing is an error naming both lists.
    """
    cfg = reader.study.config.revalidation
    if cfg is None:
        return {}, None
    path = cfg.previous
    resolved = reader.study.resolve(path)
    data = read_bytes(resolved, path, min(reader.max_bytes, MAX_PREVIOUS_BYTES))
    reader.inputs.append(InputFile("previous-results", path, str(resolved), hashlib.sha256(data).hexdigest(),
                                   len(data)))
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise DataError(f"is not UTF-8 text (byte offset {exc.start}); it is not a results.json written by "
                        "validator", file=path) from None
    previous = _strict_json(text, path)
    if not isinstance(previous, dict) or "schema_version" not in previous:
        raise DataError("is not a results.json written by validator (no schema_version at the top level)",
                        file=path)
    version = previous["schema_version"]
    if isinstance(version, str) and version.split(".")[0] != "1":       # other types: the schema names them
        raise DataError(f'has schema version "{version[:40]}"; this validator reads version 1.x', file=path)
    _check_schema(previous, path)
    for kind in ("concentration", "response"):
        unit = previous["study"].get(f"{kind}_unit")
        current_unit = getattr(reader.study.config.study, f"{kind}_unit")
        if unit is not None and unit != current_unit:
            raise DataError(f'uses {kind} unit "{show(unit)}" but this study uses "{show(current_unit)}"; '
                            "results in different units cannot be compared", file=path)
    names = [a["name"] for a in previous["analytes"]]
    if len(set(names)) != len(names):
        dup = next(n for n in names if names.count(n) > 1)
        raise DataError(f'is not a consistent results.json: at JSON path $.analytes: analyte "{dup}" is listed '
                        "twice", file=path)
    by_name = {a["name"]: a for a in previous["analytes"]}
    current = list(analytes)
    pairs = _match(current, names, dict(cfg.analytes), reader.study.shown)
    if not pairs:
        raise DataError("shares no analyte with this study, so nothing was compared: this study has "
                        + ", ".join(f'"{a}"' for a in current) + "; the previous results have "
                        + ", ".join(f'"{a}"' for a in names)
                        + '; map renamed analytes with [revalidation] analytes = {new = "old"}', file=path)
    for new, old in pairs:
        _check_refit(reader, new, names.index(old), by_name[old], analytes[new], path)
    matched_new = {c for c, _ in pairs}
    matched_old = {o for _, o in pairs}
    unmatched = tuple([n for n in current if n not in matched_new] + [n for n in names if n not in matched_old])
    run = PreviousRun(path, reader.inputs[-1].sha256, previous["study"]["id"], previous["generated_at"], unmatched,
                      tuple(pairs))
    return {new: by_name[old] for new, old in pairs}, run


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
