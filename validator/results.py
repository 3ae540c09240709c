"""results.json: the one place where result objects become JSON.

Floats are written with full precision (Python's shortest round-trip repr);
NaN and infinity never appear: a value that does not exist is ``null`` and
the reason is recorded in the analyte's ``not_applicable`` list. The layout
is documented in docs/results.md and by the JSON Schema shipped as
``validator/schema/results.schema.json``.

Every analyte section is written by :class:`Serialiser` from the result dataclasses of the
registry's entries (:data:`SERIALISED`), whose field metadata declare names and omissions and
whose reasons fill ``not_applicable``.
"""

from __future__ import annotations

import dataclasses
import json
import platform
import typing
from importlib import resources
from importlib.metadata import PackageNotFoundError, version

import numpy as np

from ._common import ConfidenceInterval, finite_or_none as num
from . import __version__, registry
from .criteria import Criterion
from .signing import operator_and_host

__all__ = ["SCHEMA_VERSION", "build_results", "dumps", "load_schema", "library_versions"]

SCHEMA_VERSION = "1.0"
LIBRARIES = ("numpy", "scipy", "statsmodels", "matplotlib", "jinja2", "weasyprint", "pydantic", "jsonschema")


def library_versions() -> dict:
    out = {"python": platform.python_version()}
    for name in LIBRARIES:
        try:
            out[name] = version(name)
        except PackageNotFoundError:
            out[name] = None
    return out


def load_schema() -> dict:
    return json.loads(resources.files("validator").joinpath("schema/results.schema.json").read_text())


def _as_float(value):
    return None if value is None else float(value)


class Serialiser:
    """Dataclass -> JSON value, in the manner of attrs' ``asdict``; collects ``not_applicable``.

    - A dataclass becomes an object of its fields in declaration order; a field's
      ``metadata`` renames it (``{"json": "p_value"}``), leaves it out (``{"json": None}``, or
      ``{"omit_none": True}`` when it is ``None``, ``{"when": predicate}`` unless
      ``predicate(obj)``), writes its numbers as floats (``{"as_float": True}``), or writes the listed attributes of the
      object it holds flat into this one (``{"flatten": ((json name, attribute or tuple of
      attributes), ...)}``).
    - An interval field (``metadata={"interval": "pair"}`` or ``"null"``) is written as
      ``name: [low, high]`` and ``name_level: level`` (``{"level_json": "other_name"}`` names the
      level field otherwise); a missing one as ``[null, null]`` or ``null`` (the field's
      historical form) with a ``null`` level.
    - Floats go through :func:`finite_or_none` (NaN and infinity become ``null``); tuples
      become lists; ints, bools, strings and ``None`` stay.
    - Whenever a ``null`` is written inside an object that can say why (its ``null_reason``
      property, else its ``reason`` field), ``{"item": <the object's path>, "reason": ...}`` is
      added once to :attr:`not_applicable` (the item is the object's ``null_item`` property
      instead of its path, where it has one). A field whose metadata names a ``null_reason``
      attribute has a reason of its own (when that attribute is not empty), listed under the
      field's path, or under the name its ``{"null_item": ...}`` metadata gives.
    """

    def __init__(self):
        self.not_applicable: list = []
        self._listed: set = set()

    def __call__(self, value, path: str):
        return self._value(value, path, None)

    def _null(self, owner):
        if owner is not None and owner[0] not in self._listed:
            self._listed.add(owner[0])
            self.not_applicable.append({"item": owner[0], "reason": owner[1]})
        return None

    def _value(self, value, path, owner):
        if value is None:
            return self._null(owner)
        if isinstance(value, (bool, str)):
            return value
        if isinstance(value, (int, np.integer)):
            return int(value)
        if isinstance(value, (float, np.floating)):
            out = num(value)
            return self._null(owner) if out is None else out
        if dataclasses.is_dataclass(value):
            return self._object(value, path, owner)
        if isinstance(value, (tuple, list)):
            out = []
            for i, v in enumerate(value):
                if type(v) is float:        # the common case (a million residuals) without a path
                    v = num(v)
                    out.append(self._null(owner) if v is None else v)
                else:
                    out.append(self._value(v, f"{path}.{i}", owner))
            return out
        if isinstance(value, dict):
            return {k: self._value(v, f"{path}.{k}", owner) for k, v in value.items()}
        raise TypeError(f"results.json cannot hold {type(value).__name__} at {path}")

    def _object(self, obj, path, owner):
        reason = getattr(obj, "null_reason", None)
        if reason is None:
            reason = getattr(obj, "reason", None)
        if isinstance(reason, str) and reason:
            owner = (getattr(obj, "null_item", None) or path, reason)
        out = {}
        for f in dataclasses.fields(obj):
            name = f.metadata.get("json", f.name)
            if name is None:
                continue
            value = getattr(obj, f.name)
            if value is None and f.metadata.get("omit_none") or not f.metadata.get("when", bool)(obj):
                continue
            if f.metadata.get("as_float"):      # numbers written as floats, ints included
                value = [_as_float(v) for v in value] if isinstance(value, (list, tuple)) else _as_float(value)
            if "flatten" in f.metadata:
                for key, attrs in f.metadata["flatten"]:
                    out[key] = (self._value(getattr(value, attrs), f"{path}.{key}", owner) if isinstance(attrs, str)
                                else [self._value(getattr(value, a), f"{path}.{key}.{i}", owner)
                                      for i, a in enumerate(attrs)])
                continue
            if "null_reason" in f.metadata:      # a reason of its own for this field's null
                reason = getattr(obj, f.metadata["null_reason"])
                item = f.metadata.get("null_item", f"{path}.{name}")
                out[name] = self._value(value, f"{path}.{name}", (item, reason) if reason else owner)
                continue
            if "interval" in f.metadata:
                level = f.metadata.get("level_json", f"{name}_level")
                if value is None:
                    out[name] = None if f.metadata["interval"] == "null" else [None, None]
                    out[level] = self._null(owner)
                else:
                    out[name] = [self._value(value.low, f"{path}.{name}.0", owner),
                                 self._value(value.high, f"{path}.{name}.1", owner)]
                    out[level] = self._value(value.level, f"{path}.{level}", owner)
            else:
                out[name] = self._value(value, f"{path}.{name}", owner)
        return out


def json_fields(*types) -> set:
    """Every results.json field name the :class:`Serialiser` can write for ``types`` and the
    dataclasses inside them (for the drift test against the schema and docs/results.md)."""
    names: set = set()
    seen: set = set()

    def visit(tp):
        if dataclasses.is_dataclass(tp) and isinstance(tp, type):
            if tp in seen or tp is ConfidenceInterval:
                return
            seen.add(tp)
            hints = typing.get_type_hints(tp)
            for f in dataclasses.fields(tp):
                name = f.metadata.get("json", f.name)
                if name is None:
                    continue
                if "flatten" in f.metadata:
                    names.update(key for key, _ in f.metadata["flatten"])
                    continue
                names.add(name)
                if "interval" in f.metadata:
                    names.add(f.metadata.get("level_json", f"{name}_level"))
                visit(hints[f.name])
        for arg in typing.get_args(tp):
            visit(arg)

    for tp in types:
        visit(tp)
    return names


def _serialised(entries) -> dict:
    out = {"criteria": (Criterion,)}
    for entry in entries:        # one written inside another's section counts as that section's
        if entry.result_types:
            section = entry.written_at.split(".")[0]
            out[section] = out.get(section, ()) + entry.result_types
    return out


SERIALISED = _serialised(registry.REGISTRY)
# the analyte entry's sections in the order results.json has always written them; a characteristic
# not named here follows them in registry order
_SECTION_ORDER = ("calibration", "samples", "detection", "working_range", "recovery", "precision",
                  "reference_material", "revalidation", "comparison")


def _settings(study, name: str) -> dict:
    """``{"settings": [...]}``: the keys an analyte's [analyte_settings] tables set, with the study-wide value;
    ``{}`` for an analyte judged with the study-wide settings alone."""
    own = next((s for s in study.analyte_settings if s.analyte == name), None)
    if own is None:
        return {}
    return {"settings": [{"key": c.key, "value": c.value, "study_value": c.study_value} for c in own.changes]}


def _units(study, name: str) -> dict:
    """``{"concentration_unit": ..., "response_unit": ...}``: the analyte's units when its
    ``[analyte_settings.<analyte>.study]`` sets one; ``{}`` when it has the study's (``study.*_unit``)."""
    own = next((s for s in study.analyte_settings if s.analyte == name), None)
    if own is None or not any(own.sets("study", key) for key in ("concentration_unit", "response_unit")):
        return {}
    return {"concentration_unit": own.config.study.concentration_unit, "response_unit": own.config.study.response_unit}


def data_rows(loaded, analyte: str | None) -> list:
    """The data rows the statistics read for ``analyte`` (``None``: the files that do not name their
    analyte), one entry per table: file (sheet), columns, and each row as read with its file row; the
    rows the study excludes ([[exclusions]]) are listed among them with their reason."""
    out = []
    for d in loaded.data_rows:
        if d.analyte != analyte:
            continue
        rows = [{"row": r, "values": list(cells)} for r, cells in zip(d.rows, d.cells)]
        rows += [{"row": r, "values": list(cells), "excluded": reason} for r, reason, cells in d.excluded]
        out.append({"role": d.role, "file": d.file, **({"sheet": d.sheet} if d.sheet else {}),
                    "columns": list(d.columns), "rows": sorted(rows, key=lambda r: r["row"])})
    return out


def _analyte(a, study=None, loaded=None):
    serialise = Serialiser()
    sections = {}
    for entry in registry.REGISTRY:
        if entry.result_types:
            result = a.result_of(entry)
            if result is None and entry.name not in _SECTION_ORDER:
                continue                 # a newer characteristic is written only when assessed
            if result is not None and entry.record is not None:
                result = entry.record(result)
            *parents, name = entry.written_at.split(".")
            place = sections
            for parent in parents:
                place = place[parent]
            place[name] = None if result is None else serialise(result, entry.written_at)
    order = [n for n in _SECTION_ORDER if n in sections] + [n for n in sections if n not in _SECTION_ORDER]
    entry = {"name": a.name, "verdict": a.verdict, "characteristics_assessed": list(a.characteristics),
             **({} if study is None else _units(study, a.name)),
             **({} if study is None else _settings(study, a.name)),
             **{name: sections[name] for name in order},
             "criteria": serialise(a.criteria, "criteria"),
             "diagnostics": list(a.calibration.diagnostics),
             **({} if loaded is None else {"data_rows": data_rows(loaded, a.name)})}
    entry["not_applicable"] = _in_entry_order(serialise.not_applicable, entry)
    return entry


def _in_entry_order(items: list, entry: dict) -> list:
    """The not-applicable items in the order of the analyte entry's sections (each section's in the
    order written): the calibration tests (listed by their names) first, then the unknowns."""
    tests = ("lack_of_fit", "mandel", "normality", "heteroscedasticity", "levene", "intercept_test")
    position = {name: i for i, name in enumerate(entry)}

    def key(item):
        section = item["item"].split(".")[0]
        return (0 if section in tests else 1 if section == "samples" else 2, position.get(section, len(position)))

    return sorted(items, key=key)


def build_results(result, *, generated_at: str) -> dict:
    """The results.json content for a :class:`~validator.engine.StudyResult`."""
    loaded = result.loaded
    cfg = loaded.config.study
    return {
        "schema_version": SCHEMA_VERSION,
        "verdict": result.verdict,
        "tool": {"name": "validator", "version": __version__, "libraries": library_versions(),
                 "platform": platform.platform()},
        "generated_at": generated_at,
        "run": operator_and_host(),
        "study": {"id": cfg.id, "title": cfg.title, "purpose": cfg.purpose,
                  "concentration_unit": cfg.concentration_unit, "response_unit": cfg.response_unit,
                  "analyst": cfg.analyst, "reviewer": cfg.reviewer, "instrument": cfg.instrument,
                  "method": cfg.method, "notes": cfg.notes},
        # how each data file was read (sheet, or CSV delimiter/decimal) only where it applies
        "inputs": [{k: v for k, v in {"role": f.role, "path": f.path, "sha256": f.sha256, "bytes": f.size,
                                      "sheet": f.sheet, "delimiter": f.delimiter, "decimal": f.decimal,
                                      "dialect": f.dialect}.items() if v is not None}
                   for f in loaded.inputs],
        "defaults_applied": [{"key": k, "value": v} for k, v in loaded.study.defaults_applied],
        # data rows left out by [[exclusions]]: kept here with their reason, never dropped silently
        "exclusions": [{"file": e.file, "sheet": e.sheet, "row": e.row, "role": e.role, "reason": e.reason,
                        "who": e.who, "cells": [{"column": c, "value": v} for c, v in e.cells],
                        **({} if e.analyte is None else {"analyte": e.analyte})}
                       for e in loaded.excluded],
        # sample ids one character apart with one reading each: a flagged warning, never silence
        "sample_id_warnings": [{"analyte": w.analyte, "file": w.file, "ids": list(w.ids), "rows": list(w.rows),
                                "text": w.text} for w in loaded.near_duplicate_ids],
        "analytes": [_analyte(a, loaded.study, loaded) for a in result.analytes],
        # rows of data files that do not say which analyte they belong to (several analytes, no column)
        "data_rows": data_rows(loaded, None),
        **({"guideline": _guideline(loaded.config.study.guideline, loaded.study.guideline,
                                    loaded.study.analyte_settings, [a.name for a in result.analytes])}
           if loaded.config.study.guideline is not None else {}),
        "revalidation": None if loaded.previous is None else {
            "previous": {"path": loaded.previous.path, "study_id": loaded.previous.study_id,
                         "generated_at": loaded.previous.generated_at, "sha256": loaded.previous.sha256},
            "change_ci_level": 1 - 2 * loaded.config.criteria.alpha,
            "matched_analytes": [{"analyte": new, "previous_analyte": old} for new, old in loaded.previous.matched],
            "unmatched_analytes": list(loaded.previous.unmatched)},
    }


def _guideline(name: str, uses, analyte_settings, analytes: list[str]) -> dict:
    """``[study] guideline``: the preset, and each of its values used or overridden by the study, and
    the analytes whose own [analyte_settings] set the key (judged with their value, not the study-wide one)."""
    from .sector.presets import PRESETS, supplied_note

    def own(key: str) -> list[dict]:
        return [{"analyte": s.analyte, "value": c.value} for s in analyte_settings if s.analyte in analytes
                for c in s.changes if c.key == key]

    values = []
    for u in uses:
        overriding = own(u.key)
        values.append({"key": u.key, "preset_value": u.preset_value, "study_value": u.study_value, "used": u.used,
                       "analyte_values": overriding, "analytes_on_study_wide_value": len(analytes) - len(overriding),
                       "source": u.source, "from_memory": u.from_memory})
    return {"name": name, "title": PRESETS[name].title, "note": supplied_note(name, uses), "values": values}


_ITEM = json.JSONEncoder(ensure_ascii=False, allow_nan=False)


def _flat(value) -> bool:
    return not isinstance(value, (dict, list)) or (
        isinstance(value, dict) and not any(isinstance(v, (dict, list)) for v in value.values()))


def _encode(value, depth: int, out: list) -> None:
    """Two-space indented JSON; a scalar or a flat object (no nested containers) takes one line."""
    if _flat(value):
        out.append(_ITEM.encode(value))
        return
    pad, inner = "\n" + "  " * depth, "\n" + "  " * (depth + 1)
    items = value.items() if isinstance(value, dict) else value
    if not items:
        out.append("{}" if isinstance(value, dict) else "[]")
        return
    if isinstance(value, list) and all(map(_flat, value)):         # e.g. residuals: one join
        out.append("[" + inner + ("," + inner).join(map(_ITEM.encode, value)) + pad + "]")
        return
    out.append("{" if isinstance(value, dict) else "[")
    for i, item in enumerate(items):
        out.append(inner if i == 0 else "," + inner)
        if isinstance(value, dict):
            out.append(_ITEM.encode(item[0]) + ": ")
            item = item[1]
        _encode(item, depth + 1, out)
    out.append(pad + ("}" if isinstance(value, dict) else "]"))


def dumps(results: dict) -> str:
    """Serialise, refusing NaN/inf (they must have become null already).

    The layout is two-space indentation with every scalar, and every object
    whose members are all scalars (a back-calculated calibrator, a criterion
    without a range limit), on one line. Each line is made by the C encoder of
    the json module, so time and memory grow linearly with the number of
    calibration points, without the per-token overhead of ``json.dumps(...,
    indent=2)`` (about 8 times the memory of the text for a million points).
    """
    out: list = []
    _encode(results, 0, out)
    out.append("\n")
    return "".join(out)
