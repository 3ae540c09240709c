"""The earlier results.json of a re-validation: read strictly, checked, matched.

The file must be a results.json that validator wrote (schema version 1.x, validated against
the shipped schema, an earlier one such as 0.1.0's included) in the same concentration
unit; its analytes are matched to this study's, and the previous run's calibration function
must be computable on this run's points. Every problem is a :class:`DataError` naming the
file and, where it helps, the JSON path.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from ..errors import DataError, StudyError, show
from ..maths.regression import WEIGHTED_BY
from .tables import read_bytes

if TYPE_CHECKING:
    from ..characteristics.calibration.settings import CalibrationData

__all__ = ["PreviousRun", "read_previous", "MAX_PREVIOUS_BYTES", "MAX_PREVIOUS_DEPTH"]


@dataclass(frozen=True)
class PreviousRun:
    """The results.json of an earlier validation, as identified in the audit trail."""

    path: str
    sha256: str
    study_id: str
    generated_at: str
    unmatched: tuple[str, ...]                # analyte names present in only one of the two runs
    matched: tuple[tuple[str, str], ...] = ()  # (name in this study, name in the previous results) per analyte


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

    from ..results import load_schema

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
        base = {"concentration": x, "response": y}.get(WEIGHTED_BY.get(weighting))
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
    what = WEIGHTED_BY.get(weighting)
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


UNIT_KEYS = ("concentration_unit", "response_unit")


def _check_units(previous: dict, current, path: str, analyte: str | None = None) -> None:
    """The previous run's units (``previous``: its unit keys) are this study's (``current``: a [study] table)."""
    for kind in ("concentration", "response"):
        unit = previous.get(f"{kind}_unit")
        current_unit = getattr(current, f"{kind}_unit")
        if unit is not None and unit != current_unit:
            where = "" if analyte is None else f'for analyte "{show(analyte)}" '
            raise DataError(f'uses {kind} unit "{show(unit)}" {where}but this study uses "{show(current_unit)}"; '
                            "results in different units cannot be compared", file=path)


def read_previous(reader, analytes):
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
    reader.record("previous-results", path, resolved, data)
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
    per_analyte = (any(k in a for a in previous["analytes"] if isinstance(a, dict) for k in UNIT_KEYS)
                   or any(s.sets("study", k) for s in reader.study.analyte_settings for k in UNIT_KEYS))
    if not per_analyte:             # one unit each way on both sides: said once, before the analytes are matched
        _check_units(previous["study"], reader.study.config.study, path)
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
    for new, old in pairs:      # an analyte's own units ([analyte_settings.<analyte>.study]) on either side
        _check_units({k: by_name[old].get(k, previous["study"].get(k)) for k in UNIT_KEYS},
                     reader.study.config_for(new).study, path, new if per_analyte else None)
    for new, old in pairs:
        _check_refit(reader, new, names.index(old), by_name[old], analytes[new], path)
    matched_new = {c for c, _ in pairs}
    matched_old = {o for _, o in pairs}
    unmatched = tuple([n for n in current if n not in matched_new] + [n for n in names if n not in matched_old])
    run = PreviousRun(path, reader.inputs[-1].sha256, previous["study"]["id"], previous["generated_at"], unmatched,
                      tuple(pairs))
    return {new: by_name[old] for new, old in pairs}, run
