"""The study file: its schema, its defaults and its loading.

A study file is TOML. Its schema is declared once, here, as pydantic models
with ``extra="forbid"``, so that a misspelt key is an error (with a "did you
mean" suggestion) instead of a silently ignored setting. Pydantic's error
locations are translated into :class:`~validator.errors.StudyError` messages
that name the study file, the line, the key and the offending value.

Every default that was applied (a key the user did not write) is recorded so
that the results and the dossier can list it.

Limits (stated in README.md, "Limits"): the study file is at most
:data:`MAX_STUDY_BYTES` and nested at most :data:`MAX_NESTING` levels deep;
every number must be finite and within its key's range; alpha and beta lie in
[:data:`MIN_PROBABILITY`, 0.5) so that 1 - alpha is distinguishable from 1;
text keys have the maximum lengths in :data:`TEXT_LIMITS`; paths contain no
control characters.
"""

from __future__ import annotations

import difflib
import hashlib
import os
import re
import stat
import sys
import tomllib
from dataclasses import dataclass
from pathlib import Path
import types
import typing
from typing import Annotated, Any, Literal, Optional

from pydantic import (AfterValidator, BaseModel, ConfigDict, Field, RootModel, ValidationError, create_model,
                      model_validator)

from ..errors import StudyError, control_character, show
from ..maths.regression import WEIGHTINGS
from ..protocol import DesignSection, ProtocolSection
from ..sector.presets import PRESET_NAMES, PresetUse, resolve as resolve_preset

__all__ = ["StudyConfig", "StudyFile", "read_study_file", "study_config_model", "check_range", "WEIGHTINGS",
           "MAX_STUDY_BYTES", "MAX_NESTING", "MAX_DATA_FILE_MB", "MIN_PROBABILITY", "TEXT_LIMITS", "MAX_PATH_LENGTH"]


MAX_STUDY_BYTES = 1024 * 1024    # a study file is a few kB; 1 MiB leaves room for long notes
MAX_NESTING = 32                 # levels of tables and arrays; the schema itself needs 5
MAX_DATA_FILE_MB = 2048          # the largest value of max_data_file_mb
MIN_PROBABILITY = 1e-6           # alpha and beta: 1 - p must differ from 1 with room to spare
MAX_PATH_LENGTH = 4096           # characters of a data path (Linux PATH_MAX)
TEXT_LIMITS = {"id": 100, "title": 300, "concentration_unit": 100, "response_unit": 100,
               "analyst": 200, "reviewer": 200, "instrument": 200, "method": 200, "notes": 5000,
               "analyte": 100, "scope": 2000, "intended_use": 2000, "method_summary": 5000,
               "protocol_reference": 200, "document_number": 100, "document_version": 50}

def _no_control(path: str) -> str:
    bad = control_character(path)
    if bad:
        raise ValueError(f'the path "{show(path)}" contains a control character ({bad}); '
                         "paths must not contain control characters")
    return path


def _printable(text: str) -> str:
    bad = control_character(text, allow_whitespace=True)
    if bad:
        raise ValueError(f'"{show(text)}" contains a control character ({bad}); text may hold tabs and '
                         "line breaks but no other control characters")
    return text


# a data path as written in the study file: relative to the study file's folder. Where the data are is
# no design or criterion: {"protocol": False} leaves it out of the protocol (validator.protocol)
NOT_IN_PROTOCOL = {"protocol": False}
DataPath = Annotated[str, Field(min_length=1, max_length=MAX_PATH_LENGTH, json_schema_extra=NOT_IN_PROTOCOL),
                     AfterValidator(_no_control)]
# free text shown in the dossier (lengths in TEXT_LIMITS)
Text = Annotated[str, AfterValidator(_printable)]


def _text(key: str, required: bool = False):
    if required:     # a required text must say something: blanks alone are refused
        return Field(min_length=1, max_length=TEXT_LIMITS[key], pattern=r"\S")
    return Field("", max_length=TEXT_LIMITS[key])


def _probability(default: float):
    return Field(default, ge=MIN_PROBABILITY, lt=0.5)


def _choices(annotation) -> tuple | None:
    """The allowed strings of a ``Literal[...]`` (also inside Optional/Annotated), else None."""
    origin = typing.get_origin(annotation)
    if origin is Literal:
        values = typing.get_args(annotation)
        return values if all(isinstance(v, str) for v in values) else None
    if origin is Annotated:
        return _choices(typing.get_args(annotation)[0])
    if origin in (typing.Union, types.UnionType):
        for arg in typing.get_args(annotation):
            found = _choices(arg)
            if found is not None:
                return found
    return None


class _Section(BaseModel):
    """The base of every study-file table: unknown keys refused, numbers finite, values frozen.

    Enumerated values (``model = "Linear"``) are matched without regard to
    upper/lower case and surrounding spaces, as column headers are: the value
    is replaced by the allowed spelling before validation, so results and the
    audit trail show one spelling.
    """

    # allow_inf_nan=False: inf, -inf and nan (and 1e999, which TOML reads as inf) are refused
    model_config = ConfigDict(extra="forbid", strict=True, frozen=True, allow_inf_nan=False)

    @model_validator(mode="before")
    @classmethod
    def _enumerations_ignore_case(cls, data):
        if not isinstance(data, dict):
            return data
        out = None
        for name, field in cls.model_fields.items():
            value = data.get(name)
            if not isinstance(value, str):
                continue
            choices = _choices(field.annotation)
            if choices is None or value in choices:
                continue
            same = [c for c in choices if c.casefold() == value.strip().casefold()]
            if len(same) == 1:
                out = dict(data) if out is None else out
                out[name] = same[0]
        return data if out is None else out


class DataSource(_Section):
    """A table that names one data file: CSV text or one sheet of an .xlsx workbook.

    ``data`` is required unless the study gives its data as analytical runs ([[runs]]), whose
    injections feed the calibration, blanks, samples, recovery, precision and reference
    material (checked after validation, in :func:`read_study_file`).
    """

    data: Optional[DataPath] = None
    sheet: Optional[Annotated[str, Field(min_length=1, max_length=31), AfterValidator(_no_control)]] = Field(
        None, json_schema_extra=NOT_IN_PROTOCOL)
    header_row: Optional[int] = Field(None, ge=1, le=1_000_000, json_schema_extra=NOT_IN_PROTOCOL)


class StudySection(_Section):
    id: Text = _text("id", required=True)
    title: Text = _text("title", required=True)
    concentration_unit: Text = _text("concentration_unit", required=True)
    response_unit: Text = _text("response_unit", required=True)
    purpose: Literal["initial", "revalidation"] = "initial"
    analyst: Text = _text("analyst")
    reviewer: Text = _text("reviewer")
    instrument: Text = _text("instrument")
    method: Text = _text("method")
    notes: Text = _text("notes")
    # document control and summary shown on the dossier's cover (report layer only)
    scope: Text = _text("scope")
    intended_use: Text = _text("intended_use")
    method_summary: Text = _text("method_summary")
    protocol_reference: Text = _text("protocol_reference")
    document_number: Text = _text("document_number")
    document_version: Text = _text("document_version")
    # None: told from each CSV file (validator.inputs.dialect); the value used is in results.json inputs
    decimal: Optional[Literal[".", ","]] = None
    delimiter: Optional[Literal[",", ";", "tab"]] = None
    max_data_file_mb: float = Field(100.0, ge=0.001, le=MAX_DATA_FILE_MB)   # 1 kB up
    # default acceptance criteria of a named guideline (validator.sector.presets)
    guideline: Optional[Literal[PRESET_NAMES]] = None

    @model_validator(mode="after")
    def _dialect(self):
        if self.decimal == "," and self.delimiter == ",":
            raise ValueError('decimal = "," needs delimiter = ";" or "tab" (a comma cannot be both)')
        return self


class CriteriaSection(_Section):
    alpha: float = _probability(0.05)
    back_calculation_tolerance_pct: float = Field(15.0, gt=0, le=100)
    lowest_level_tolerance_pct: float = Field(20.0, gt=0, le=100)
    min_fraction_within_tolerance: float = Field(0.75, ge=0, le=1)
    r_squared_min: Optional[float] = Field(None, ge=0, le=1)
    # what decides recovery and precision RSD criteria: the point estimate, or its interval
    # (recovery by two one-sided tests, RSDs by their upper confidence bound). Not set means
    # "estimate"; it is left unset rather than defaulted so that the defaults recorded for
    # studies written before this key existed stay as they were
    judge_on: Optional[Literal["estimate", "interval"]] = None

    @property
    def on_intervals(self) -> bool:
        return self.judge_on == "interval"


def check_range(v, name: str = "range_pct"):
    """The one check of a [low, high] pair in the study file."""
    if v is not None and (len(v) != 2 or not v[0] < v[1]):
        raise ValueError(f"{name} must be [low, high] with low < high, got {show(list(v))}")
    return v




# --- analytical runs: instrument exports read untouched (validator.inputs.runs) ---------------------

INJECTION_TYPES = ("calibrator", "blank", "zero", "qc", "spiked", "unspiked", "reference", "sample", "matrix_blank",
                   "low_level", "post_extraction", "neat", "solvent_calibrator")
# ICH M10's words: a blank has neither analyte nor internal standard, a zero sample the internal standard only.
# The blank types may have no internal-standard area (missing, or 0): their ratio response is then undefined
# and they serve the checks on raw areas only (carry-over, selectivity)
BLANK_TYPES = ("blank", "matrix_blank")
# a run or day label, or a header name of an export
Label = Annotated[str, Field(min_length=1, max_length=200, pattern=r"\S"), AfterValidator(_no_control)]


class RunSource(DataSource):
    """One ``[[runs]]`` table: an analytical run's export (CSV or one .xlsx sheet).

    ``run`` and ``day`` label the run when the export has no run or day column
    (default: "run N", N its position in [[runs]]; the day defaults to the run).
    """

    run: Optional[Label] = None
    day: Optional[Label] = None


class ColumnsSection(_Section):
    """``[columns]``: the export's header for each field the tool reads (matched ignoring case)."""

    sample: Label = "sample"
    type: Label = "type"
    level: Label = "level"
    response: Label = "response"
    internal_standard: Optional[Label] = None
    analyte: Optional[Label] = None
    run: Optional[Label] = None
    day: Optional[Label] = None
    # the injection's position in its run's sequence (default: the row order of the export)
    order: Optional[Label] = None
    # the matrix lot (or source) of a matrix blank (selectivity), a low-level sample (EP17) or a QC
    # prepared in one lot (matrix effect, ICH M10)
    lot: Optional[Label] = None
    # a QC's storage condition (stability: "fresh" for the comparison samples), and a QC's dilution
    # factor (dilution integrity: found in the diluted sample, before the factor)
    condition: Optional[Label] = None
    dilution: Optional[Label] = None

    @model_validator(mode="after")
    def _distinct(self):
        seen = {}
        for name in type(self).model_fields:
            header = getattr(self, name)
            if header is None:
                continue
            key = header.strip().casefold()
            if key in seen:
                raise ValueError(f'{seen[key]} and {name} both read the column "{show(header)}"')
            seen[key] = name
        return self


Words = list[Label]


class TypesSection(_Section):
    """``[types]``: the export's words for each injection type (matched ignoring case)."""

    calibrator: Words = ["calibrator"]
    blank: Words = ["blank"]
    qc: Words = ["qc"]
    spiked: Words = ["spiked"]
    unspiked: Words = ["unspiked"]
    reference: Words = ["reference"]
    sample: Words = ["sample"]
    # no default words: a blank matrix with the internal standard only (a zero sample), a blank matrix of one
    # lot (selectivity), a sample at a low level (EP17, MDL)
    zero: Words = []
    matrix_blank: Words = []
    low_level: Words = []
    # no default words either: the matrix factor's analyte and IS spiked after extraction into a blank matrix
    # of one lot, and the same amounts in neat solution (ICH M10); a calibrator prepared in solvent, the
    # solvent calibration of the slope ratio (SANTE/11312/2021) beside the runs' matrix-matched calibrators
    post_extraction: Words = []
    neat: Words = []
    solvent_calibrator: Words = []

    @model_validator(mode="after")
    def _distinct(self):
        seen = {}
        for name in INJECTION_TYPES:
            for word in getattr(self, name):
                key = word.strip().casefold()
                if key in seen and seen[key] != name:
                    raise ValueError(f'"{show(word)}" is listed for both {seen[key]} and {name}')
                seen[key] = name
        return self

    def type_of(self, word: str) -> str | None:
        """The injection type an export's word stands for (None: not listed)."""
        key = word.strip().casefold()
        return next((name for name in INJECTION_TYPES
                     if any(w.strip().casefold() == key for w in getattr(self, name))), None)


class ExclusionEntry(_Section):
    """One ``[[exclusions]]`` table: a data row left out of the statistics, with its reason.

    Either ``file`` (and ``sheet`` for a workbook) and ``row``, or ``run`` and ``injection`` (the
    injection's name in that run's export, when the study gives its data as [[runs]]).
    """

    file: Optional[DataPath] = None
    sheet: Optional[Annotated[str, Field(min_length=1, max_length=31), AfterValidator(_no_control)]] = None
    row: Optional[int] = Field(None, ge=2, le=10_000_000)     # a data row: the header is row 1 at the earliest
    run: Optional[Label] = None
    injection: Optional[Label] = None
    reason: Text = Field(min_length=1, max_length=TEXT_LIMITS["notes"], pattern=r"\S")
    who: Text = _text("analyst")

    @model_validator(mode="after")
    def _one_way(self):
        by_file = self.file is not None or self.row is not None or self.sheet is not None
        by_run = self.run is not None or self.injection is not None
        if by_file == by_run:
            raise ValueError("name the excluded point either by file and row (file = ..., row = ...) or by run "
                             "and injection (run = ..., injection = ...)")
        if by_file and (self.file is None or self.row is None):
            raise ValueError("an exclusion by file needs both file = ... and row = ...")
        if by_run and (self.run is None or self.injection is None):
            raise ValueError("an exclusion by run needs both run = ... and injection = ...")
        return self


class AnalyteSettingsTable(RootModel[dict[Annotated[str, Field(min_length=1, max_length=TEXT_LIMITS["analyte"]),
                                                    AfterValidator(_printable)], dict[str, dict[str, Any]]]]):
    """``[analyte_settings.<analyte>.<table>]``: per-analyte values of keys of other tables, by analyte.

    Only the shape is checked here; each table is validated by its own model, merged with the
    study-wide table, in :func:`validator.inputs.analyte_settings.resolve`.
    """

    model_config = ConfigDict(strict=True, frozen=True)


# The tables of the study file in the order of its schema (messages list them so, defaults_applied
# follows it): the tables of the characteristics in the registry, and those below.
_TABLE_ORDER = ("study", "calibration", "samples", "criteria", "blanks", "detection", "recovery", "precision",
                "accuracy_profile", "uncertainty", "reference_material", "revalidation", "comparison")
_TABLES_AFTER = ("design", "protocol")


def _table_field(model: type[BaseModel], required: bool) -> tuple:
    """A table's field of StudyConfig: required; always present when the table without keys is valid; else
    optional."""
    if required:
        return (model, ...)
    if issubclass(model, DataSource) or getattr(model, "OPTIONAL_TABLE", False):
        return (Optional[model], None)    # a data table is there when written, even if only data = ... (or empty)
    if all(not f.is_required() for f in model.model_fields.values()):
        try:
            return (model, model())
        except ValidationError:      # every key has a default, yet an empty table is not valid (it
            pass                     # needs one of several keys): optional, like a table with a required key
    return (Optional[model], None)


# tables of characteristics not yet in packages of their own, and the tables that are no characteristic's
_OTHER_TABLES = {"study": (StudySection, ...),
                 "criteria": (CriteriaSection, CriteriaSection()),
                 # the planned experiment and the approved protocol a run is held to (validator.protocol)
                 "design": (Optional[DesignSection], None), "protocol": (Optional[ProtocolSection], None),
                 # data rows left out, each with its reason (validator.inputs.exclusions)
                 "exclusions": (list[ExclusionEntry], []),
                 # analytical runs: the exports, their column mapping and their injection-type words
                 "runs": (list[RunSource], []), "columns": (Optional[ColumnsSection], None),
                 "types": (Optional[TypesSection], None),
                 # per-analyte values of criteria and characteristic keys (validator.inputs.analyte_settings),
                 # checked against their tables' models after the whole file is validated
                 "analyte_settings": (Optional[AnalyteSettingsTable], None)}
_MODELS: dict = {}


def study_config_model() -> type[BaseModel]:
    """The model of the whole study file: a table per registry entry with ``settings``, and the others.

    Assembled from :data:`validator.registry.REGISTRY` as it is when called (once per registry).
    """
    from .. import registry

    key = tuple((e.name, e.settings, e.required) for e in registry.REGISTRY if e.settings is not None)
    if key not in _MODELS:
        tables = dict(_OTHER_TABLES)
        tables.update({name: _table_field(settings, required) for name, settings, required in key})
        order = [n for n in _TABLE_ORDER if n in tables] + [n for n, _, _ in key if n not in _TABLE_ORDER]
        order += [n for n in tables if n not in order and n not in _TABLES_AFTER] + list(_TABLES_AFTER)
        _MODELS[key] = create_model("StudyConfig", __base__=_Section, __module__=__name__,
                                    __doc__="The whole study file as validated data (no data files read yet).",
                                    **{name: tables[name] for name in order})
    return _MODELS[key]


def __getattr__(name):
    if name == "StudyConfig":        # assembled from the registry, so built on first use
        return study_config_model()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


@dataclass(frozen=True)
class StudyFile:
    """A study file read and validated, with what is needed for the audit trail."""

    path: Path
    shown: str                 # the path as the user gave it
    text: str                  # the study file as given
    sha256: str
    config: Any                # the StudyConfig (study_config_model()) instance
    defaults_applied: tuple[tuple[str, Any], ...]    # ("criteria.alpha", 0.05), ...
    guideline: tuple[PresetUse, ...] = ()             # what [study] guideline supplied or the study overrode
    # the analytes with [analyte_settings.<name>] tables: their merged configuration and what differs
    analyte_settings: tuple = ()                      # of validator.inputs.analyte_settings.AnalyteSettings

    def config_for(self, analyte: str):
        """The configuration ``analyte`` is judged with: the study's, with its [analyte_settings] applied."""
        return next((s.config for s in self.analyte_settings if s.analyte == analyte), self.config)

    def resolve(self, data_path: str) -> Path:
        """A data path from the study file, relative to the study file's folder."""
        p = Path(data_path)
        return p if p.is_absolute() else self.path.parent / p


def _key_line(text: str, loc: tuple) -> int | None:
    """Best-effort line number of the key at ``loc`` in the TOML text."""
    if len(loc) > 1 and loc[0] == "analyte_settings":
        from .analyte_settings import line_of
        return line_of(text, loc)
    names = [part for part in loc if not part.isdigit()]
    if len(names) == len(loc):
        return _line_of(text, loc)
    # an item of a list, or a key in an inline table in a list (levels = [{ level = ... }]):
    # the line of the key itself if it has one, else the list's line
    for end in range(len(names), 0, -1):
        line = _line_of(text, tuple(names[:end]) if end > 1 else (names[0],))
        if line is not None:
            return line
    return None


def with_key_line(err: StudyError, study: "StudyFile") -> StudyError:
    """``err`` with the line of its key in the study file filled in, when it names a key of that file
    and no line or row (checks made after the file was read, e.g. an analyte name that no data file
    holds, know the key but not its line); otherwise ``err`` itself."""
    if err.line is not None or err.row is not None or not err.key or err.file != study.shown:
        return err
    loc = tuple(part for part in re.split(r"[.\[\]]+", err.key) if part)
    line = _key_line(study.text, loc) if loc else None
    if line is None:
        return err
    return type(err)(err.problem, file=err.file, column=err.column, key=err.key, value=err.value, line=line)


def item_line(text: str, array: str, index: int, key: str | None = None) -> int | None:
    """Best-effort line of ``key`` in the ``index``-th (0-based) ``[[array]]`` table, else of its header."""
    header = re.compile(r"^\s*\[\[\s*" + re.escape(array) + r"\s*\]\]")
    key_re = None if key is None else re.compile(r"^\s*" + re.escape(key) + r"\s*=")
    seen, start = -1, None
    for number, line in enumerate(text.splitlines(), start=1):
        if start is not None and line.lstrip().startswith("["):
            break
        if header.match(line):
            seen += 1
            if seen == index:
                start = number
            continue
        if start is not None and key_re is not None and key_re.match(line):
            return number
    return start


def _line_of(text: str, loc: tuple) -> int | None:
    lines = text.splitlines()
    section, key = (loc[0], loc[-1]) if len(loc) > 1 else (None, loc[0])
    if len(str(key)) > 1000:
        return None
    in_section = section is None
    for number, line in enumerate(lines, start=1):
        stripped = line.strip()
        if stripped.startswith("["):
            name = stripped.strip("[] \t").split("]")[0].strip()
            in_section = name == section
            if section is None or len(loc) == 1:
                if name == key:
                    return number
            continue
        if in_section and re.match(rf'\s*"?{re.escape(str(key))}"?\s*=', line):
            return number
    return None


def _model_at(loc: tuple):
    """The pydantic model holding the key at ``loc`` (``None`` if there is none)."""
    model = study_config_model()
    if len(loc) > 3 and loc[0] == "analyte_settings":     # [analyte_settings.<analyte>.<table>] key
        loc = loc[2:]
    for part in loc[:-1]:
        if part.isdigit():
            continue
        field = model.model_fields.get(part)
        if field is None:
            return None
        ann = field.annotation
        args = getattr(ann, "__args__", None)
        model = next((a for a in (args or (ann,)) if isinstance(a, type) and issubclass(a, BaseModel)), None)
        if model is None:
            return None
    return model


def _fields_of(loc: tuple):
    model = _model_at(loc)
    return [] if model is None else list(model.model_fields)


def _valid_range(loc: tuple) -> str | None:
    """The valid range of the numeric key at ``loc``, e.g. "1e-06 <= alpha < 0.5"."""
    model = _model_at(loc)
    field = None if model is None else model.model_fields.get(loc[-1])
    if field is None:
        return None
    low = high = None
    for m in field.metadata:
        for attr, sign in (("gt", "<"), ("ge", "<=")):
            if getattr(m, attr, None) is not None:
                low = f"{getattr(m, attr):g} {sign} "
        for attr, sign in (("lt", "<"), ("le", "<=")):
            if getattr(m, attr, None) is not None:
                high = f" {sign} {getattr(m, attr):g}"
    if low is None and high is None:
        return None
    return f"{low or ''}{loc[-1]}{high or ''}"


def _got(value) -> str:
    return f"'{show(value)}'" if isinstance(value, str) else show(value)


_BOUNDS = ("greater_than", "greater_than_equal", "less_than", "less_than_equal")

# the validation library's error kinds, said in the study file's own terms
_PLAIN = {
    "float_type": "must be a number (without quotes)",
    "float_parsing": "must be a number (without quotes)",
    "int_type": "must be a whole number (without quotes)",
    "int_parsing": "must be a whole number (without quotes)",
    "int_from_float": "must be a whole number (without quotes)",
    "bool_type": "must be true or false (without quotes)",
    "bool_parsing": "must be true or false (without quotes)",
    "string_type": 'must be text in quotes ("...")',
    "dict_type": "must be a table ([name] or { key = value, ... })",
    "model_type": "must be a table ([name] or { key = value, ... })",
    "model_attributes_type": "must be a table ([name] or { key = value, ... })",
    "list_type": "must be a list in square brackets",
    "finite_number": "must be a finite number",
    "too_short": "has too few items",
    "too_long": "has too many items",
    "string_too_short": "must not be empty",
    "string_too_long": "is too long",
    "string_pattern_mismatch": "must not be blank",
}


def _example(loc: tuple) -> str | None:
    """An example of the right form for the list-valued key at ``loc`` (its default, else a generic one)."""
    model = _model_at(loc)
    field = None if model is None else model.model_fields.get(loc[-1])
    if field is None:
        return None
    default = field.default if isinstance(field.default, list) and field.default else None
    if default is not None and all(isinstance(v, (int, float)) for v in default):
        return f"{loc[-1]} = [{', '.join(f'{v:g}' for v in default)}]"
    if typing.get_origin(field.annotation) in (typing.Union, types.UnionType) or "limits" in loc[-1] \
            or "range" in loc[-1]:
        return f"{loc[-1]} = [low, high], for example {loc[-1]} = [0.95, 1.05]"
    item = next(iter(typing.get_args(field.annotation)), None)
    if isinstance(item, type) and issubclass(item, BaseModel):
        keys = ", ".join(f"{n} = ..." for n, f in item.model_fields.items() if f.is_required())
        return f"{loc[-1]} = [{{ {keys} }}, ...]"
    return f"{loc[-1]} = [...]"


def _plain(kind: str, loc: tuple, ctx: dict) -> str:
    """The message for a value of the wrong kind, with an example where one helps."""
    if kind == "literal_error":
        allowed = ctx.get("expected", "")
        return f"must be one of {allowed} (upper or lower case)"
    message = _PLAIN[kind]
    if kind in ("string_too_long", "string_too_short") and "max_length" in ctx and kind == "string_too_long":
        message = f"is too long (at most {ctx['max_length']} characters)"
    if kind in ("too_short", "too_long") and ("min_length" in ctx or "max_length" in ctx):
        message = f"{message} (got {ctx.get('actual_length', '?')})"
    if kind in ("list_type", "too_short", "too_long") and loc and not loc[-1].isdigit():
        example = _example(loc)
        if example:
            message += f", for example {example}" if not example.startswith(loc[-1] + " = [low") \
                else f": {example}"
    return message


def dotted_key(loc: tuple) -> str:
    """A key path as messages write it: tables joined by dots, list items by their index in brackets
    (``exclusions[0].reason``, ``recovery.range_pct[1]``), the one form every message uses."""
    out = ""
    for part in loc:
        if isinstance(part, int) and not isinstance(part, bool):
            out += f"[{part}]"
        else:
            out += f".{part}" if out else str(part)
    return out


def _translate(exc: ValidationError, shown: str, text: str, prefix: tuple = ()) -> StudyError:
    """The study error for ``exc``; ``prefix`` is the key path of the table validated (when not the file)."""
    errors = exc.errors(include_url=False)
    # an unknown key usually explains a "missing" one (a typo), so report it first
    err = sorted(errors, key=lambda e: e["type"] != "extra_forbidden")[0]
    loc = prefix + tuple(str(p) for p in err["loc"])
    dotted = dotted_key(prefix + tuple(err["loc"])) if loc else "(top level)"
    line = _key_line(text, loc) if loc else None
    kind = err["type"]
    value = err.get("input")
    if kind == "extra_forbidden":
        choices = _fields_of(loc)
        what = "section" if len(loc) == 1 else "key"
        close = difflib.get_close_matches(loc[-1], choices, n=1, cutoff=0.6)
        hint = f'; did you mean "{close[0]}"?' if close else (
            "; allowed: " + ", ".join(choices) if choices else "")
        return StudyError(f"unknown {what}{hint}", file=shown, line=line, key=dotted, value=loc[-1])
    if kind == "missing":
        what = "section" if len(loc) == 1 else "key"
        return StudyError(f"required {what} is missing", file=shown, key=dotted)
    message = err["msg"].removeprefix("Value error, ")
    if kind == "value_error" or not loc or (kind.startswith("model") and kind not in _PLAIN):
        return StudyError(message, file=shown, line=line, key=dotted or None)
    valid = _valid_range(loc) if kind in _BOUNDS or kind == "finite_number" else None
    if kind in _PLAIN or kind == "literal_error":
        message = _plain(kind, loc, err.get("ctx") or {})
    if kind == "float_type" and isinstance(value, int) and not isinstance(value, bool):
        message = "is too large for a number (the largest magnitude is about 1.8e308)"
    elif valid and kind == "finite_number":
        message = f"must be a finite number with {valid}"
    elif valid:
        message = f"must be {valid}"
    return StudyError(f"{message}; got {_got(value)}", file=shown, line=line, key=dotted, value=value)


def _defaults(model: BaseModel, prefix: str = "") -> list:
    out = []
    for name, field in type(model).model_fields.items():
        value = getattr(model, name)
        if isinstance(value, BaseModel):
            out.extend(_defaults(value, f"{prefix}{name}."))
        elif name not in model.model_fields_set and value is not None and value != []:
            out.append((f"{prefix}{name}", value))
    return out


def _nesting(data) -> int:
    """Depth of nested tables and arrays (the document itself is 1), counted without recursion.

    Counting stops once the depth passes :data:`MAX_NESTING`.
    """
    deepest, stack = 0, [(data, 1)]
    while stack and deepest <= MAX_NESTING:
        item, depth = stack.pop()
        deepest = max(deepest, depth)
        children = item.values() if isinstance(item, dict) else item
        stack.extend((c, depth + 1) for c in children if isinstance(c, (dict, list)))
    return deepest


def _read_limited(p: Path, shown: str) -> bytes:
    """The study file's bytes, refused if over :data:`MAX_STUDY_BYTES` or not a regular file."""
    from .tables import read_limited

    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise StudyError("study file not found", file=shown) from None
    except OSError as exc:
        raise StudyError(f"study file cannot be read ({exc.strerror})", file=shown) from None
    if not stat.S_ISREG(st.st_mode):
        raise StudyError("is not a regular file", file=shown)
    if st.st_size > MAX_STUDY_BYTES:
        raise StudyError(f"is {st.st_size} bytes, over the limit of {MAX_STUDY_BYTES} bytes for a study file",
                         file=shown)
    try:
        with open(p, "rb") as fh:
            raw = read_limited(fh, MAX_STUDY_BYTES)
    except OSError as exc:
        raise StudyError(f"study file cannot be read ({exc.strerror})", file=shown) from None
    if raw is None:        # it grew after the check
        raise StudyError(f"is over the limit of {MAX_STUDY_BYTES} bytes for a study file", file=shown)
    return raw


def _parse_toml(text: str, shown: str) -> dict:
    deep = StudyError(f"is nested more than {MAX_NESTING} levels deep (tables, arrays or dotted keys); "
                      "refused", file=shown)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StudyError(f"TOML syntax error: {exc}", file=shown) from None
    except RecursionError:
        raise deep from None
    except ValueError as exc:   # Python's limit on the digits of an integer read from text
        if "digits" not in str(exc):
            raise
        raise StudyError(f"TOML value error: an integer has more than {sys.get_int_max_str_digits()} "
                         "digits; no key takes such a number", file=shown) from None
    if _nesting(data) > MAX_NESTING:
        raise deep
    return data


# tables whose data the injections of [[runs]] give instead of a data file of their own
RUN_FED = ("calibration", "samples", "blanks", "recovery", "precision", "reference_material")


# sector tables whose data files are left out when the injections of [[runs]] give their data instead:
# table -> its file keys (all given: the table reads its own files; all left out: the runs feed it)
RUN_FED_SECTOR = {"carry_over": ("data",), "selectivity": ("data",), "limit_of_blank": ("blanks", "low_samples"),
                  "method_detection_limit": ("spiked", "blanks"), "matrix_effect": ("lots_data",),
                  "stability": ("data",), "dilution_integrity": ("data",)}
# file keys a table may leave out even without [[runs]] (its other files or parts stand alone)
_OPTIONAL_FILE_KEYS = ("low_samples", "lots_data")
# the QC injections a sector table reads from the runs: the [columns] field that marks them -> the table
QC_ROLES = {"lot": "matrix_effect", "condition": "stability", "dilution": "dilution_integrity"}
# the parts of [matrix_effect] the runs give when its own file for them is left out: injection type ->
# (the table, its file key). post_extraction and neat: the matrix factor; solvent_calibrator: the slope ratio
RUN_FED_PARTS = {"post_extraction": ("matrix_effect", "factor_data"), "neat": ("matrix_effect", "factor_data"),
                 "solvent_calibrator": ("matrix_effect", "solvent_data")}


def part_fed_by_runs(config, kind: str) -> bool:
    """True when the study has the table that reads injections of ``kind`` (a key of :data:`RUN_FED_PARTS`)
    from the runs: the table is there and names no file of its own for that part."""
    table, key = RUN_FED_PARTS[kind]
    section = getattr(config, table, None)
    return bool(config.runs) and section is not None and getattr(section, key) is None


def fed_by_runs(config, name: str) -> bool:
    """True when the sector table ``name`` is in the study and takes its data from the [[runs]] injections."""
    table = getattr(config, name, None)
    return (bool(config.runs) and table is not None and name in RUN_FED_SECTOR
            and all(getattr(table, key) is None for key in RUN_FED_SECTOR[name]))


def _check_sector_sources(config, shown: str, text: str) -> None:
    """A sector table names its files, or (with [[runs]]) none of them; never a part."""
    runs = bool(config.runs)
    for name, keys in RUN_FED_SECTOR.items():
        table = getattr(config, name, None)
        if table is None:
            continue
        given = [k for k in keys if getattr(table, k) is not None]
        required = [k for k in keys if k not in _OPTIONAL_FILE_KEYS]
        if name == "matrix_effect" and not runs and all(getattr(table, k) is None for k in
                                                        ("solvent_data", "lots_data", "factor_data")):
            raise StudyError("give at least one of solvent_data, lots_data and factor_data (or, with [[runs]], "
                             "leave lots_data out to read the QC injections that have a lot)", file=shown,
                             line=_key_line(text, (name,)), key=name)
        if not runs:
            for key in required:
                if getattr(table, key) is None:
                    raise StudyError("required key is missing", file=shown, key=f"{name}.{key}")
        elif given and any(getattr(table, k) is None for k in required):
            missing = next(k for k in required if getattr(table, k) is None)
            raise StudyError(f"[{name}] names its own file {given[0]} = ... but not {missing}; give all its files, "
                             "or none of them to take its data from the injections of [[runs]]", file=shown,
                             line=_key_line(text, (name, given[0])), key=f"{name}.{missing}")


def _check_data_sources(config, shown: str, text: str) -> None:
    """``data`` is given where a table needs a file, and left out where [[runs]] give the data."""
    _check_sector_sources(config, shown, text)
    runs = bool(config.runs)
    for name in type(config).model_fields:
        table = getattr(config, name)
        if not isinstance(table, DataSource):
            continue
        fed = runs and name in RUN_FED
        if table.data is None and not fed:
            raise StudyError("required key is missing", file=shown, key=f"{name}.data")
        if table.data is not None and fed:
            raise StudyError(f"the study gives its data as [[runs]], whose injections feed [{name}]; remove "
                             f"data = ... here (or give every table its own file and no [[runs]])", file=shown,
                             line=_key_line(text, (name, "data")), key=f"{name}.data", value=table.data)
        if table.data is None and (table.sheet is not None or table.header_row is not None):
            raise StudyError("sheet and header_row belong to a data file; this table has none ([[runs]] name "
                             "theirs)", file=shown, key=f"{name}.sheet" if table.sheet else f"{name}.header_row")
    if not runs:
        for name in ("columns", "types"):
            if getattr(config, name) is not None:
                raise StudyError(f"[{name}] maps the exports of [[runs]], but the study has no [[runs]]",
                                 file=shown, line=_key_line(text, (name,)), key=name)
        if config.calibration.quantify_with is not None:
            raise StudyError("quantify_with applies to [[runs]], but the study has no [[runs]]", file=shown,
                             line=_key_line(text, ("calibration", "quantify_with")), key="calibration.quantify_with")


def read_study_file(path: str | Path) -> StudyFile:
    """Read and validate a study file (the data files are not opened here)."""
    from .tables import decode_text  # the same UTF-8 rules as data files

    shown = str(path)
    bad = control_character(shown)
    if bad:
        raise StudyError(f"the study file path contains a control character ({bad}); "
                         "paths must not contain control characters", file=shown)
    p = Path(path)
    raw = _read_limited(p, shown)
    text = decode_text(raw, shown)
    data = _parse_toml(text, shown)
    try:
        config = study_config_model().model_validate(data)
    except ValidationError as exc:
        raise _translate(exc, shown, text) from None
    _check_data_sources(config, shown, text)
    if config.study.purpose == "revalidation" and config.revalidation is None:
        raise StudyError('purpose = "revalidation" needs a [revalidation] section naming the previous '
                         'results.json (previous = "..."); without it nothing would be compared',
                         file=shown, line=_key_line(text, ("study", "purpose")), key="study.purpose")
    config, uses = _apply_guideline(config)
    from .analyte_settings import resolve
    return StudyFile(path=p, shown=shown, text=text, sha256=hashlib.sha256(raw).hexdigest(),
                     config=config, defaults_applied=tuple(_defaults(config)), guideline=uses,
                     analyte_settings=resolve(config, shown, text))


def _apply_guideline(config: StudyConfig) -> tuple[StudyConfig, tuple[PresetUse, ...]]:
    """The study with ``[study] guideline``'s defaults filled into the sections it declares.

    A key the study sets keeps the study's value (listed as overridden); a key the preset fills
    counts as set, so it is listed among the preset's values and not among the defaults applied.
    """
    if config.study.guideline is None:
        return config, ()
    declared = {name: {key: getattr(section, key) for key in section.model_fields_set}
                for name in config.model_fields_set
                if isinstance(section := getattr(config, name), BaseModel)}
    updates, uses = resolve_preset(config.study.guideline, declared)
    for name, values in updates.items():
        section = getattr(config, name)
        own = {key: getattr(section, key) for key in section.model_fields_set}
        config = config.model_copy(update={name: type(section).model_validate({**own, **values})})
    return config, uses
