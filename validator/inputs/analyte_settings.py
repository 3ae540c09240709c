"""Per-analyte settings: ``[analyte_settings.<analyte>.<table>]`` in the study file.

A multi-residue method has different limits per compound. For one analyte, a table of this
kind gives new values to keys of ``[criteria]`` or of a characteristic's table, e.g.::

    [analyte_settings.nitrate.recovery]
    range_pct = [80, 120]
    [analyte_settings.nitrate.criteria]
    back_calculation_tolerance_pct = 20

The analyte is then judged with the study's table where these keys take the values given
(a list such as ``levels`` is replaced whole). The merged table is validated by the table's own
model, so a value is checked exactly as it would be in the study-wide table, and errors name
``analyte_settings.<analyte>.<table>.<key>`` and its line.

What can be set per analyte: the design and criteria keys of a table
(:data:`validator.protocol.CRITERIA_AND_DESIGN`), except those in :data:`STUDY_WIDE` (read
when the data files are loaded, or one value for the whole study by design), plus the data
file of a reference material (``data``, ``sheet``, ``header_row`` of ``reference_material``:
one material per analyte), plus the keys of :data:`EXPRESSION_KEYS`: the analyte's units, as
keys of ``[study]`` (a multi-residue method calibrates compounds in different units)::

    [analyte_settings.fluoride.study]
    concentration_unit = "µg/L"
    response_unit = "nS·min"

and how its samples are reported (``[sample_preparation]``: its reporting unit and factors).
An override names a table the study declares (or one that is always present, such as
``[criteria]``), for an analyte of the calibration data (checked by :func:`check_analytes` once
the data are loaded).

A ``reference_material`` table for an analyte is that analyte's material: its ``analyte`` is
the analyte the table is set for; when the study-wide material is for another analyte, the
table gives its own ``certified_value`` and ``standard_uncertainty`` (a certified value belongs
to one analyte), and its own ``data`` unless the study-wide file has an ``analyte`` column.
"""

from __future__ import annotations

import difflib
import re
from dataclasses import dataclass
from typing import Any

from pydantic import BaseModel, ValidationError

from ..errors import StudyError, show

__all__ = ["AnalyteSettings", "SettingChange", "STUDY_WIDE", "EXPRESSION_KEYS", "overridable_keys", "resolve",
           "check_analytes", "line_of"]

ROOT = "analyte_settings"

# keys that stay study-wide, and why (said in the error)
STUDY_WIDE = {
    ("criteria", "alpha"): "alpha is one value for the whole study (every interval level and test in the "
                           "dossier reads it)",
    ("recovery", "levels"): "per-level limits are checked against the data when the files are loaded",
    ("precision", "levels"): "per-level limits are checked against the data when the files are loaded",
    ("precision", "design"): "the design names the columns read from the precision file",
    ("accuracy_profile", "levels"): "per-level limits are checked against the data when the files are loaded",
    ("stability", "reference"): "the reference condition is read when the stability file is loaded",
    ("reference_material", "analyte"): "the analyte of [analyte_settings.<analyte>.reference_material] is the one "
                                       "it is set for",
}
# tables read in full when the files are loaded (the calibration names the analytes and quantifies [[runs]])
STUDY_WIDE_TABLES = {"calibration": "the calibration is read, checked and used to quantify the other data when "
                                    "the files are loaded"}
# tables of the study file that are not a characteristic's or [criteria] (never set per analyte)
NOT_TABLES = ("design", "protocol", "runs", "columns", "types", "exclusions", ROOT)
# keys outside CRITERIA_AND_DESIGN that may still be set per analyte: a reference material's own data file
DATA_KEYS = {"reference_material": ("data", "sheet", "header_row")}
# keys that say how an analyte's results are expressed, not design or criteria, that may be set per analyte:
# its units (of [study], whose other keys are the whole study's) and how its samples are reported
EXPRESSION_KEYS = {"study": ("concentration_unit", "response_unit"),
                   "sample_preparation": ("unit", "dilution_factor", "aliquot", "final_volume", "samples")}
# tables of the study's frame of which only EXPRESSION_KEYS may be set per analyte, and why
FRAME_TABLES = {"study": "of [study], only concentration_unit and response_unit can differ by analyte; the "
                         "other keys describe the whole study"}


@dataclass(frozen=True)
class SettingChange:
    """One key an analyte is judged with, where its per-analyte table sets it (results.json ``settings``)."""

    key: str                 # "recovery.range_pct"
    value: Any               # the analyte's value (JSON form)
    study_value: Any         # the study-wide value (JSON form; None where the study-wide table leaves it unset)


@dataclass(frozen=True)
class AnalyteSettings:
    """One analyte's per-analyte settings: its whole configuration, and the keys its tables set."""

    analyte: str
    config: Any                              # the StudyConfig the analyte is judged with
    changes: tuple[SettingChange, ...]
    tables: tuple[str, ...]                  # the tables it sets keys of, as written

    def sets(self, table: str, key: str) -> bool:
        """Whether the analyte's own ``[table]`` sets ``key``."""
        return any(c.key == f"{table}.{key}" for c in self.changes)


def _tables(design: dict | None = None):
    """{table name: pydantic model} of the tables of the study schema a per-analyte setting may change
    (``design``: ``protocol.criteria_and_design()``, derived here if not given)."""
    from ..protocol import criteria_and_design
    from .study import _model_at, study_config_model

    design = criteria_and_design() if design is None else design
    models = {name: _model_at((name, "key")) for name in study_config_model().model_fields}
    return {name: model for name, model in models.items()
            if model is not None and name not in NOT_TABLES and overridable_keys(name, model, design)}


def overridable_keys(table: str, model: type[BaseModel], design: dict | None = None) -> tuple[str, ...]:
    """The keys of ``table`` an analyte may set (empty: none). ``design``: the tables' design and
    criteria keys (``protocol.criteria_and_design()``; derived if not given: it walks every
    settings model, so a caller asking for many tables derives it once)."""
    from ..protocol import ALL, criteria_and_design

    if table in STUDY_WIDE_TABLES:
        return ()
    if table in FRAME_TABLES:
        return tuple(k for k in model.model_fields if k in EXPRESSION_KEYS[table])
    listed = (criteria_and_design() if design is None else design).get(table, ())
    keys = tuple(model.model_fields) if listed == ALL else tuple(listed)
    keys += DATA_KEYS.get(table, ()) + EXPRESSION_KEYS.get(table, ())
    return tuple(k for k in model.model_fields if k in keys and (table, k) not in STUDY_WIDE)


def _json(value):
    if isinstance(value, BaseModel):
        return value.model_dump(mode="json", exclude_none=True)
    if isinstance(value, (list, tuple)):
        return [_json(v) for v in value]
    if isinstance(value, dict):
        return {k: _json(v) for k, v in value.items()}
    return value


def resolve(config, shown: str, text: str) -> tuple[AnalyteSettings, ...]:
    """Each analyte's merged configuration, validated by the tables' own models.

    Errors name ``analyte_settings.<analyte>.<table>[.<key>]``, its line and the value.
    """
    from ..protocol import criteria_and_design
    from .study import _key_line, _translate

    table_of_all = getattr(config, ROOT, None)
    raw = {} if table_of_all is None else table_of_all.root
    design = criteria_and_design() if raw else {}        # walks every settings model: only when needed
    tables = _tables(design) if raw else {}
    out = []
    for analyte, given in raw.items():
        if not given:
            raise StudyError("sets nothing; add a table such as [analyte_settings.<analyte>.criteria]", file=shown,
                             line=_key_line(text, (ROOT, analyte)), key=f"{ROOT}.{analyte}")
        update, changes = {}, []
        for table, values in given.items():
            loc = (ROOT, analyte, table)
            line = _key_line(text, loc)
            dotted = ".".join(loc)
            model = tables.get(table)
            if model is None and table in type(config).model_fields:
                why = STUDY_WIDE_TABLES.get(table, "it holds no acceptance criteria or design keys that can "
                                                   "differ by analyte")
                raise StudyError(f"[{table}] cannot be set per analyte: {why}", file=shown, line=line, key=dotted)
            if model is None:
                close = difflib.get_close_matches(table, list(tables), n=1, cutoff=0.6)
                hint = (f'; did you mean "{close[0]}"?' if close else
                        "; allowed: " + ", ".join(list(tables) + list(STUDY_WIDE_TABLES)))
                raise StudyError(f"unknown table{hint}", file=shown, line=line, key=dotted, value=table)
            allowed = overridable_keys(table, model, design)
            if not allowed:
                why = STUDY_WIDE_TABLES.get(table, "it has no acceptance criteria or design keys")
                raise StudyError(f"[{table}] cannot be set per analyte: {why}", file=shown, line=line, key=dotted)
            section = getattr(config, table, None)
            if section is None:
                raise StudyError(f"the study has no [{table}] table; a per-analyte setting changes a table the "
                                 f"study declares (add [{table}])", file=shown, line=line, key=dotted)
            for key in values:
                if key in model.model_fields and key not in allowed:
                    why = STUDY_WIDE.get((table, key), FRAME_TABLES.get(table, "it is not an acceptance "
                                                                                "criterion or design key"))
                    raise StudyError(f"is set for the whole study only: {why}", file=shown,
                                     line=_key_line(text, loc + (key,)), key=f"{dotted}.{key}", value=values[key])
            if config.runs and "data" in values:
                raise StudyError(f"the study gives its data as [[runs]], whose reference injections feed [{table}]; "
                                 "remove data = ... here", file=shown, line=_key_line(text, loc + ("data",)),
                                 key=f"{dotted}.data", value=values["data"])
            own = {k: getattr(section, k) for k in section.model_fields_set}
            merged = {**own, **values}
            if table == "reference_material":
                _check_material(section, values, analyte, shown, text, loc)
                merged["analyte"] = analyte
                if "data" in values:        # its own file: the study-wide sheet and header row are not its
                    merged = {k: v for k, v in merged.items() if k not in ("sheet", "header_row") or k in values}
            levels = _levels_without(section, values)
            if levels is not None:
                merged["levels"] = levels
            try:
                update[table] = type(section).model_validate(merged)
            except ValidationError as exc:
                raise _translate(exc, shown, text, prefix=loc) from None
            changes += [SettingChange(f"{table}.{key}", _json(getattr(update[table], key)),
                                      _json(getattr(section, key))) for key in values]
            if levels is not None:
                changes.append(SettingChange(f"{table}.levels", _json(update[table].levels), _json(section.levels)))
        out.append(AnalyteSettings(analyte, config.model_copy(update=update), tuple(changes), tuple(given)))
    return tuple(out)


def _levels_without(section, values: dict) -> list | None:
    """The study-wide per-level limits an analyte keeps once its own table sets the same keys (None: unchanged).

    A key set for one analyte (``[analyte_settings.fluoride.recovery] range_pct``) is that analyte's
    value at every level: the more specific setting wins over the study-wide per-level one
    (``[recovery] levels = [{added = 0.1, range_pct = [80, 120]}]``), which cannot be set per
    analyte (:data:`STUDY_WIDE`). A level entry loses the keys the analyte sets; an entry left
    with no limit of its own (or without a key its model requires) is dropped.
    """
    if "levels" not in type(section).model_fields or not getattr(section, "levels", None):
        return None
    limit_keys = lambda model: [k for k in model.model_fields if k in type(section).model_fields]  # noqa: E731
    kept, changed = [], False
    for level in section.levels:
        model = type(level)
        shared = [k for k in limit_keys(model) if k in values and getattr(level, k) is not None]
        if not shared:
            kept.append(level)
            continue
        changed = True
        if any(model.model_fields[k].is_required() for k in shared):
            continue
        left = level.model_copy(update={k: None for k in shared})
        if any(getattr(left, k) is not None for k in limit_keys(model)):
            kept.append(left)
    return kept if changed else None


def _check_material(section, values: dict, analyte: str, shown: str, text: str, loc: tuple) -> None:
    """An analyte's own reference material has its own certified value (unless the study-wide one is its)."""
    from .study import _key_line

    if section.analyte in (None, analyte):
        return
    for key in ("certified_value", "standard_uncertainty"):
        if key not in values:
            raise StudyError(f'[reference_material] certifies analyte "{show(section.analyte)}"; this analyte\'s '
                             f"material needs its own {key} = ...", file=shown, line=_key_line(text, loc),
                             key=f"{'.'.join(loc)}.{key}")


def check_analytes(study, analytes) -> None:
    """Every analyte named in [analyte_settings] is in the calibration data (else it would change nothing)."""
    for settings in study.analyte_settings:
        if settings.analyte not in analytes:
            from .study import _key_line
            known = ", ".join(f'"{show(a)}"' for a in list(analytes)[:20])
            raise StudyError(f'analyte "{show(settings.analyte)}" is not in the calibration data (known: {known}), '
                             "so these settings would judge nothing", file=study.shown,
                             line=_key_line(study.text, (ROOT, settings.analyte)),
                             key=f"{ROOT}.{settings.analyte}", value=settings.analyte)


def _name_pattern(name: str) -> str:
    """A TOML key (bare or quoted) as a regular expression."""
    return rf'(?:{re.escape(name)}|"{re.escape(name)}"|\'{re.escape(name)}\')'


def line_of(text: str, loc: tuple) -> int | None:
    """Best-effort line of ``analyte_settings.<analyte>[.<table>[.<key>...]]`` in the TOML text.

    The key's line inside ``[analyte_settings.<analyte>.<table>]``, else that header's line, else
    the line of ``[analyte_settings.<analyte>]``.
    """
    names = [str(p) for p in loc if not str(p).isdigit()]
    lines = text.splitlines()
    dot = r"\s*\.\s*"
    for depth in range(min(len(names), 3), 1, -1):
        rest = names[depth:]
        # the table itself, or (for the table's own line) the first of its sub-tables
        header = re.compile(r"^\s*\[\s*" + dot.join(_name_pattern(n) for n in names[:depth])
                            + (r"\s*(\.[^\]]*)?\]" if not rest else r"\s*\]"))
        for number, line in enumerate(lines, start=1):
            if not header.match(line):
                continue
            if not rest:
                return number
            key = re.compile(r"^\s*" + dot.join(_name_pattern(n) for n in rest[:2]) + r"\s*[=.]"
                             if len(rest) > 1 else r"^\s*" + _name_pattern(rest[0]) + r"\s*=")
            for later in range(number, len(lines)):
                if lines[later].lstrip().startswith("["):
                    break
                if key.match(lines[later]):
                    return later + 1
            return number
    from .study import _line_of          # zinc = { ... } inside [analyte_settings]
    return _line_of(text, (ROOT, names[1])) if len(names) > 1 else None
