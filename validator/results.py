"""results.json: the one place where result objects become JSON.

Floats are written with full precision (Python's shortest round-trip repr);
NaN and infinity never appear: a value that does not exist is ``null`` and
the reason is recorded in the analyte's ``not_applicable`` list. The layout
is documented in docs/results.md and by the JSON Schema shipped as
``validator/schema/results.schema.json``.

The sections in :data:`SERIALISED` are written by :class:`Serialiser` from their result
dataclasses, whose field metadata declare names and omissions and whose reasons fill
``not_applicable``; calibration, samples and revalidation are still written by
the functions below, their reasons found by :func:`_not_applicable`'s walk.
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
from .characteristics.precision import PrecisionLevel
from .characteristics.comparison import ComparisonResult
from .characteristics.detection import DetectionResult
from .criteria import Criterion
from .characteristics.working_range import LoqCheck, WorkingRange
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


def _ci(ci):
    return [num(ci.low), num(ci.high)]


def _interval(name: str, ci, missing=(None, None)) -> dict:
    """``{name: [low, high], name_level: level}``: an interval always carries its own level.

    An interval that does not exist is written as ``missing`` (``[null, null]`` or ``null``,
    the field's historical form) with a ``null`` level; the reason is in ``not_applicable``.
    """
    if ci is None:
        return {name: None if missing is None else list(missing), f"{name}_level": None}
    return {name: _ci(ci), f"{name}_level": num(ci.level)}


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
      ``name: [low, high]`` and ``name_level: level``; a missing one as ``[null, null]`` or
      ``null`` (the field's historical form) with a ``null`` level.
    - Floats go through :func:`finite_or_none` (NaN and infinity become ``null``); tuples
      become lists; ints, bools, strings and ``None`` stay.
    - Whenever a ``null`` is written inside an object that can say why (its ``null_reason``
      property, else its ``reason`` field), ``{"item": <the object's path>, "reason": ...}`` is
      added once to :attr:`not_applicable`. A field whose metadata names a ``null_reason``
      attribute has a reason of its own (when that attribute is not empty), listed under the
      field's path.
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
            return [self._value(v, f"{path}.{i}", owner) for i, v in enumerate(value)]
        if isinstance(value, dict):
            return {k: self._value(v, f"{path}.{k}", owner) for k, v in value.items()}
        raise TypeError(f"results.json cannot hold {type(value).__name__} at {path}")

    def _object(self, obj, path, owner):
        reason = getattr(obj, "null_reason", None)
        if reason is None:
            reason = getattr(obj, "reason", None)
        if isinstance(reason, str) and reason:
            owner = (path, reason)
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
                out[name] = self._value(value, f"{path}.{name}", (f"{path}.{name}", reason) if reason else owner)
                continue
            if "interval" in f.metadata:
                if value is None:
                    out[name] = None if f.metadata["interval"] == "null" else [None, None]
                    out[f"{name}_level"] = self._null(owner)
                else:
                    out[name] = [self._value(value.low, f"{path}.{name}.0", owner),
                                 self._value(value.high, f"{path}.{name}.1", owner)]
                    out[f"{name}_level"] = self._value(value.level, f"{path}.{name}_level", owner)
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
                    names.add(f"{name}_level")
                visit(hints[f.name])
        for arg in typing.get_args(tp):
            visit(arg)

    for tp in types:
        visit(tp)
    return names


def _test(t, with_method=False):
    if not t.applicable:
        return None
    out = {"method": t.method} if with_method else {}
    out.update({"statistic": num(t.statistic), "p_value": num(t.pvalue)})
    if t.df is not None:
        out["df"] = list(t.df)
    return out


def _coefficient(c):
    return {"estimate": num(c.estimate), "std_error": num(c.std_error), **_interval("ci", c.ci),
            "t_statistic": num(c.statistic), "p_value": num(c.pvalue)}


def _calibration(a):
    cal, fit = a.calibration, a.calibration.fit
    r = None
    if fit.r_squared >= 0 and "slope" in fit.coefficients and fit.n_params <= 2:
        r = (1 if fit.coefficients["slope"].estimate >= 0 else -1) * fit.r_squared ** 0.5
    return {
        "model": cal.model,
        "weighting": cal.weighting,
        "through_origin": cal.through_origin,
        "model_choice": cal.model_choice,
        "n": fit.n,
        "levels": len(cal.levels),
        "level_table": [{"concentration": num(c), "replicates": k} for c, k in zip(cal.levels, cal.replicates)],
        "df_resid": fit.df_resid,
        "confidence_level": 1 - fit.alpha,
        "t_quantile": num(fit.t_quantile),
        "coefficients": {k: _coefficient(v) for k, v in fit.coefficients.items()},
        "residual_sd": num(fit.residual_sd),
        "r_squared": num(fit.r_squared),
        "r": num(r),
        "lack_of_fit": _test(cal.lack_of_fit),
        "mandel": None if not cal.mandel.applicable else {**_test(cal.mandel), "weighting": cal.mandel_weighting},
        "choice_steps": [{"step": c.step, "model": c.model, "weighting": c.weighting, "outcome": c.outcome}
                         for c in cal.choice_steps],
        "normality": _test(cal.normality, True),
        "heteroscedasticity": _test(cal.heteroscedasticity, True),
        "levene": _test(cal.levene, True),
        "intercept_test": _test(cal.intercept_test),
        "weighting_candidates": [
            {"weighting": c.weighting, "sum_abs_relative_error_pct": num(c.sum_abs_relative_error_pct),
             "residual_sd": num(c.residual_sd), "reason": c.reason} for c in cal.weighting_candidates],
        "outliers": {
            "studentised_limit": num(cal.studentised_limit), "cooks_limit": num(cal.cooks_limit),
            "flagged": [{"concentration": num(o.concentration), "response": num(o.response),
                         "studentised_residual": num(o.studentised_residual),
                         "cooks_distance": num(o.cooks_distance), "reasons": list(o.reasons)}
                        for o in cal.outliers]},
        "back_calculated": [
            {"nominal": num(b.nominal), "response": num(b.response), "found": num(b.found),
             "deviation_pct": num(b.deviation_pct), "tolerance_pct": num(b.tolerance_pct),
             "pass": b.passed} for b in cal.back_calculated],
        "fraction_within_tolerance": num(cal.fraction_within_tolerance),
        "sensitivity_ratio": num(cal.sensitivity_ratio),
        "residuals": [num(v) for v in fit.residuals],
    }


# analyte sections written by the Serialiser (from these result types), not_applicable reasons and all:
# those of the registry's entries with result_types, and these not yet in packages of their own
SERIALISED = {"detection": (DetectionResult, LoqCheck), "working_range": (WorkingRange,),
              "precision": (PrecisionLevel,), "comparison": (ComparisonResult,), "criteria": (Criterion,),
              **{e.name: e.result_types for e in registry.REGISTRY if e.result_types}}
# the analyte entry's sections in the order results.json has always written them; a characteristic
# not named here follows them in registry order
_SECTION_ORDER = ("calibration", "samples", "detection", "working_range", "recovery", "precision",
                  "reference_material", "revalidation", "comparison")
SECTIONS = ("recovery", "precision", "reference_material", "revalidation", "comparison") + tuple(
    e.name for e in registry.REGISTRY      # a registry entry not assessed is null, said by characteristics_assessed
    if e.result_types and e.name not in ("recovery", "precision", "reference_material", "revalidation", "comparison"))
_REASON_FIELDS = ("reason", "note", "notes")


def null_paths(value, path: str = ""):
    """Dotted paths (list items by index) of every ``null`` inside ``value``."""
    if value is None:
        yield path
        return
    items = value.items() if isinstance(value, dict) else enumerate(value) if isinstance(value, list) else ()
    for k, v in items:
        if v is None:
            yield f"{path}.{k}" if path else str(k)
        elif isinstance(v, (dict, list)):           # scalars need no recursion (a million residuals)
            yield from null_paths(v, f"{path}.{k}" if path else str(k))


def _lookup(entry: dict, path: str):
    node = entry
    for part in path.split("."):
        node = node[int(part)] if isinstance(node, list) else node[part]
    return node


def _own_reason(entry: dict, path: str):
    """(path, text) of the nearest object around ``path`` that states its own reason/note."""
    parts = path.split(".")
    for cut in range(len(parts) - 1, 0, -1):
        node = _lookup(entry, ".".join(parts[:cut]))
        if isinstance(node, dict):
            text = "; ".join(str(node[f]) for f in _REASON_FIELDS if isinstance(node.get(f), str) and node[f])
            if text:
                return ".".join(parts[:cut]), text
    return None


def _known_reasons(a) -> dict:
    """Reasons for nulls whose entry has no reason field of its own: path prefix -> reason."""
    cal, fit = a.calibration, a.calibration.fit
    out = {}
    for name, c in fit.coefficients.items():
        if c.statistic is None:
            out[f"calibration.coefficients.{name}"] = "the standard error is zero (exact fit): no t test"
    out["calibration.r"] = ("r is reported for a straight line only; see r_squared" if fit.n_params > 2
                            else "R² does not exist for these data")
    out["calibration.r_squared"] = "the responses do not vary about their mean: R² does not exist"
    out["calibration.outliers"] = ("the fit is exact (zero residual SD): residuals cannot be studentised"
                                   if fit.exact else "needs at least one residual degree of freedom after "
                                   "leaving a point out (n - p - 1 >= 1)")
    out["calibration.fraction_within_tolerance"] = "no calibrator with a non-zero nominal value"
    out["calibration.sensitivity_ratio"] = "the slope of the calibration function is zero at both ends of the range"
    for i, b in enumerate(cal.back_calculated):
        if b.nominal == 0:
            out[f"calibration.back_calculated.{i}"] = ("nominal 0: the % deviation is not defined and the "
                                                       "calibrator is not judged")
        elif b.found is None or not np.isfinite(b.found):
            out[f"calibration.back_calculated.{i}"] = ("the response lies beyond the vertex of the quadratic; "
                                                       "no concentration corresponds to it")
    if a.revalidation is not None:
        out["revalidation.recovery"] = "recovery data are missing in this or the previous validation"
        out["revalidation"] = ("; ".join(a.revalidation.reasons) or
                               "the previous results.json has no value for it")
    return out


def _not_applicable(a, entry: dict, collected: list = ()) -> list:
    """Every ``null`` test or estimate of the analyte entry, with its reason.

    The calibration tests keep their short item names (``lack_of_fit``, ...)
    and samples are named ``samples.<id>``; every other item is the dotted path,
    in the analyte entry, of the null value or of the object holding it. A
    section that was not assessed (``recovery``: null, ...) is not listed:
    ``characteristics_assessed`` says so. ``collected`` holds the items the
    :class:`Serialiser` recorded; they take the place, in document order, of the
    walk over their sections.
    """
    by_section: dict = {}
    for item in collected:
        by_section.setdefault(item["item"].split(".")[0], []).append(item)
    cal = a.calibration
    tests = {"lack_of_fit": cal.lack_of_fit, "mandel": cal.mandel, "normality": cal.normality,
             "heteroscedasticity": cal.heteroscedasticity, "levene": cal.levene,
             "intercept_test": cal.intercept_test}
    out = [{"item": k, "reason": t.reason} for k, t in tests.items() if not t.applicable]
    covered = {f"calibration.{k}" for k, t in tests.items() if not t.applicable}
    for i, s in enumerate(a.samples):
        if s.reason:
            out.append({"item": f"samples.{s.id}", "reason": s.reason})
            covered.add(f"samples.{i}")
    known = _known_reasons(a)
    serialised = set(SERIALISED) | {e.name for e in registry.REGISTRY if e.result_types}
    listed = set()
    for path in null_paths({k: v for k, v in entry.items() if k not in SECTIONS or v is not None}):
        parts = path.split(".")
        if parts[0] in by_section:
            out.extend(by_section.pop(parts[0]))
            continue
        if parts[0] in serialised:
            continue
        prefixes = [".".join(parts[:cut]) for cut in range(len(parts), 0, -1)]
        if any(p in covered for p in prefixes):
            continue
        prefix = next((p for p in prefixes if p in known), None)
        candidates = [c for c in (_own_reason(entry, path), (prefix, known.get(prefix))) if c and c[0]]
        found = max(candidates, key=lambda c: c[0].count("."), default=None)     # the most specific
        if found is not None and found[0] not in listed:
            listed.add(found[0])
            out.append({"item": found[0], "reason": found[1]})
    return out


def _revalidation(r, previous, name):
    if r is None:
        return None
    sl = r.slope
    own = r.current_own_choice
    return {
        "previous": {"path": previous.path, "study_id": previous.study_id, "generated_at": previous.generated_at,
                     "sha256": previous.sha256},
        "previous_analyte": dict(previous.matched).get(name, name),
        "basis": sl.basis,
        "refit_model": r.refit_model,
        "refit_weighting": r.refit_weighting,
        "refit_through_origin": r.refit_through_origin,
        "current_own_choice": {"model": own.model, "weighting": own.weighting, "through_origin": own.through_origin},
        "slope": {"quantity": sl.quantity,
                  "sensitivity_range": None if sl.sensitivity_range is None else [num(v) for v in sl.sensitivity_range],
                  "previous": num(sl.previous), "current": num(sl.current), "change_pct": num(sl.change_pct),
                  "change_ci_pct": [None, None] if sl.change_ci_pct is None else _ci(sl.change_ci_pct),
                  "change_ci_level": None if sl.change_ci_pct is None else num(sl.change_ci_pct.level),
                  "t_statistic": num(sl.t_statistic), "df": sl.df,
                  "p_value": num(sl.pvalue), "margin_pct": num(sl.margin_pct), "equivalent": sl.verdict == "equivalent",
                  "verdict": sl.verdict, "reason": sl.reason},
        "intercept": {"previous": num(r.intercept_previous), "current": num(r.intercept_current)},
        "residual_sd": {"previous": num(r.residual_sd_previous), "current": num(r.residual_sd_current),
                        "df": list(r.residual_sd_df),
                        "ratio": num(r.residual_sd_ratio), "f_statistic": num(r.residual_sd_f),
                        "p_value": num(r.residual_sd_pvalue), "ratio_max": num(r.residual_sd_ratio_max)},
        "lod": [num(r.lod.previous), num(r.lod.current)], "loq": [num(r.loq.previous), num(r.loq.current)],
        "recovery": None if r.recovery is None else {"previous_mean_pct": num(r.recovery.previous_mean_pct),
                                                     "current_mean_pct": num(r.recovery.current_mean_pct),
                                                     "welch_p_value": num(r.recovery.welch_pvalue),
                                                     "variance_f_p_value": num(r.recovery.variance_f_pvalue)},
        "repeatability": [{"level": num(c.level), "previous_sd": num(c.previous_sd), "current_sd": num(c.current_sd),
                           "f_p_value": num(c.f_pvalue)} for c in r.repeatability],
        "verdict": r.verdict,
        "reasons": list(r.reasons),
    }


def _analyte(a, previous=None):
    serialise = Serialiser()
    sections = {
        "calibration": _calibration(a),
        "samples": [
            {"id": s.id, "replicates": s.replicates, "mean_response": num(s.mean_response),
             "concentration": num(s.concentration), "std_error": num(s.std_error), **_interval("ci", s.ci),
             "within_range": s.within_range} for s in a.samples],
        "detection": {**serialise(a.detection, "detection"),
                      "loq_verification": serialise(a.loq_check, "detection.loq_verification")},
        "working_range": serialise(a.working_range, "working_range"),
        "precision": {"levels": serialise(a.precision, "precision.levels")} if a.precision else None,
        "revalidation": _revalidation(a.revalidation, previous, a.name),
        "comparison": None if a.comparison is None else serialise(a.comparison, "comparison"),
    }
    for entry in registry.REGISTRY:
        if entry.result_types:
            result = a.result_of(entry)
            sections[entry.name] = None if result is None else serialise(result, entry.name)
    order = [n for n in _SECTION_ORDER if n in sections] + [n for n in sections if n not in _SECTION_ORDER]
    entry = {"name": a.name, "verdict": a.verdict, "characteristics_assessed": list(a.characteristics),
             **{name: sections[name] for name in order},
             "criteria": serialise(a.criteria, "criteria"),
             "diagnostics": list(a.calibration.diagnostics)}
    entry["not_applicable"] = _not_applicable(a, entry, serialise.not_applicable)
    return entry


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
                        "who": e.who, "cells": [{"column": c, "value": v} for c, v in e.cells]}
                       for e in loaded.excluded],
        # sample ids one character apart with one reading each: a flagged warning, never silence
        "sample_id_warnings": [{"analyte": w.analyte, "file": w.file, "ids": list(w.ids), "rows": list(w.rows),
                                "text": w.text} for w in loaded.near_duplicate_ids],
        "analytes": [_analyte(a, loaded.previous) for a in result.analytes],
        "revalidation": None if loaded.previous is None else {
            "previous": {"path": loaded.previous.path, "study_id": loaded.previous.study_id,
                         "generated_at": loaded.previous.generated_at, "sha256": loaded.previous.sha256},
            "change_ci_level": 1 - 2 * loaded.config.criteria.alpha,
            "matched_analytes": [{"analyte": new, "previous_analyte": old} for new, old in loaded.previous.matched],
            "unmatched_analytes": list(loaded.previous.unmatched)},
    }


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
