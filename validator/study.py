"""The study file: its schema, its defaults and its loading.

A study file is TOML. Its schema is declared once, here, as pydantic models
with ``extra="forbid"``, so that a misspelt key is an error (with a "did you
mean" suggestion) instead of a silently ignored setting. Pydantic's error
locations are translated into :class:`~validator.errors.StudyError` messages
that name the study file, the line, the key and the offending value.

Every default that was applied (a key the user did not write) is recorded so
that the results and the dossier can list it.
"""

from __future__ import annotations

import difflib
import hashlib
import re
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Literal, Optional

from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

from .errors import StudyError

__all__ = ["StudyConfig", "StudyFile", "read_study_file", "WEIGHTINGS"]

WEIGHTINGS = ("none", "1/x", "1/x^2", "1/y", "1/y^2")


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True, frozen=True)


class StudySection(_Section):
    id: str = Field(min_length=1)
    title: str = Field(min_length=1)
    concentration_unit: str = Field(min_length=1)
    response_unit: str = Field(min_length=1)
    purpose: Literal["initial", "revalidation"] = "initial"
    analyst: str = ""
    reviewer: str = ""
    instrument: str = ""
    method: str = ""
    notes: str = ""
    decimal: Literal[".", ","] = "."
    delimiter: Literal[",", ";", "tab"] = ","
    max_data_file_mb: float = Field(100.0, gt=0)

    @model_validator(mode="after")
    def _dialect(self):
        if self.decimal == "," and self.delimiter == ",":
            raise ValueError('decimal = "," needs delimiter = ";" or "tab" (a comma cannot be both)')
        return self


class CalibrationSection(_Section):
    data: str
    model: Literal["linear", "quadratic", "auto"] = "linear"
    weighting: Literal["none", "1/x", "1/x^2", "1/y", "1/y^2", "auto"] = "none"
    through_origin: bool = False

    @model_validator(mode="after")
    def _origin_linear(self):
        if self.through_origin and self.model != "linear":
            raise ValueError('through_origin = true is only allowed with model = "linear"')
        return self


class SamplesSection(_Section):
    data: str


class CriteriaSection(_Section):
    alpha: float = Field(0.05, gt=0, lt=0.5)
    back_calculation_tolerance_pct: float = Field(15.0, gt=0)
    lowest_level_tolerance_pct: float = Field(20.0, gt=0)
    min_fraction_within_tolerance: float = Field(0.75, ge=0, le=1)
    r_squared_min: Optional[float] = Field(None, ge=0, le=1)


class BlanksSection(_Section):
    data: str


class DetectionSection(_Section):
    lod_factor: float = Field(3.3, gt=0)
    loq_factor: float = Field(10.0, gt=0)
    readings_per_sample: int = Field(1, ge=1)
    beta: float = Field(0.05, gt=0, lt=0.5)
    reporting_basis: Literal["ich-residual-sd", "ich-intercept-sd", "blank-sd"] = "ich-residual-sd"
    loq_rsd_max_pct: float = Field(20.0, gt=0)

    @model_validator(mode="after")
    def _order(self):
        if self.loq_factor <= self.lod_factor:
            raise ValueError("loq_factor must be larger than lod_factor")
        return self


def _range(v):
    if len(v) != 2 or not v[0] < v[1]:
        raise ValueError(f"range_pct must be [low, high] with low < high, got {list(v)}")
    return v


class RecoveryLevelLimit(_Section):
    added: float = Field(gt=0)
    range_pct: list[float]

    @model_validator(mode="after")
    def _check(self):
        _range(self.range_pct)
        return self


class RecoverySection(_Section):
    data: str
    range_pct: list[float] = [90.0, 110.0]
    levels: list[RecoveryLevelLimit] = []

    @model_validator(mode="after")
    def _check(self):
        _range(self.range_pct)
        return self

    def range_for(self, added: float) -> tuple:
        for lv in self.levels:
            if abs(lv.added - added) <= 1e-9 * max(abs(added), 1.0):
                return tuple(lv.range_pct)
        return tuple(self.range_pct)


class PrecisionLevelLimit(_Section):
    level: float
    repeatability_rsd_max_pct: Optional[float] = Field(None, gt=0)
    intermediate_rsd_max_pct: Optional[float] = Field(None, gt=0)


class PrecisionSection(_Section):
    data: str
    repeatability_rsd_max_pct: Optional[float] = Field(None, gt=0)
    intermediate_rsd_max_pct: Optional[float] = Field(None, gt=0)
    levels: list[PrecisionLevelLimit] = []

    def limits_for(self, level: float) -> tuple:
        for lv in self.levels:
            if abs(lv.level - level) <= 1e-9 * max(abs(level), 1.0):
                return (lv.repeatability_rsd_max_pct or self.repeatability_rsd_max_pct,
                        lv.intermediate_rsd_max_pct or self.intermediate_rsd_max_pct)
        return self.repeatability_rsd_max_pct, self.intermediate_rsd_max_pct


class ReferenceMaterialSection(_Section):
    data: str
    certified_value: float = Field(gt=0)
    standard_uncertainty: float = Field(ge=0)
    analyte: Optional[str] = None
    coverage_factor: float = Field(2.0, gt=0)


class RevalidationSection(_Section):
    previous: str
    slope_change_max_pct: float = Field(5.0, gt=0)
    residual_sd_ratio_max: float = Field(2.0, gt=0)
    # this run's analyte name -> its name in the previous results.json, for renamed analytes
    analytes: dict[str, str] = Field(default_factory=dict)


class ComparisonSection(_Section):
    data: str
    error_ratio: float = Field(1.0, gt=0)
    slope_limits: Optional[list[float]] = None
    intercept_limits: Optional[list[float]] = None
    percentage_differences: bool = False

    @model_validator(mode="after")
    def _limits(self):
        for name in ("slope_limits", "intercept_limits"):
            v = getattr(self, name)
            if v is not None and (len(v) != 2 or not v[0] < v[1]):
                raise ValueError(f"{name} must be [low, high] with low < high, got {list(v)}")
        return self


class StudyConfig(_Section):
    """The whole study file as validated data (no data files read yet)."""

    study: StudySection
    calibration: CalibrationSection
    samples: Optional[SamplesSection] = None
    criteria: CriteriaSection = CriteriaSection()
    blanks: Optional[BlanksSection] = None
    detection: DetectionSection = DetectionSection()
    recovery: Optional[RecoverySection] = None
    precision: Optional[PrecisionSection] = None
    reference_material: Optional[ReferenceMaterialSection] = None
    revalidation: Optional[RevalidationSection] = None
    comparison: Optional[ComparisonSection] = None


@dataclass(frozen=True)
class StudyFile:
    """A study file read and validated, with what is needed for the audit trail."""

    path: Path
    shown: str                 # the path as the user gave it
    text: str                  # the study file as given
    sha256: str
    config: StudyConfig
    defaults_applied: tuple    # ("criteria.alpha", 0.05), ...

    def resolve(self, data_path: str) -> Path:
        """A data path from the study file, relative to the study file's folder."""
        p = Path(data_path)
        return p if p.is_absolute() else self.path.parent / p


def _key_line(text: str, loc: tuple) -> int | None:
    """Best-effort line number of the key at ``loc`` in the TOML text."""
    lines = text.splitlines()
    section, key = (loc[0], loc[-1]) if len(loc) > 1 else (None, loc[0])
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


def _fields_of(loc: tuple):
    model = StudyConfig
    for part in loc[:-1]:
        if part.isdigit():
            continue
        field = model.model_fields.get(part)
        if field is None:
            return []
        ann = field.annotation
        args = getattr(ann, "__args__", None)
        model = next((a for a in (args or (ann,)) if isinstance(a, type) and issubclass(a, BaseModel)), None)
        if model is None:
            return []
    return list(model.model_fields)


def _translate(exc: ValidationError, shown: str, text: str) -> StudyError:
    errors = exc.errors(include_url=False)
    # an unknown key usually explains a "missing" one (a typo), so report it first
    err = sorted(errors, key=lambda e: e["type"] != "extra_forbidden")[0]
    loc = tuple(str(p) for p in err["loc"])
    dotted = ".".join(loc) if loc else "(top level)"
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
    if kind == "value_error" or not loc or kind.startswith("model"):
        return StudyError(message, file=shown, line=line, key=dotted or None)
    return StudyError(f"{message}; got {value!r}", file=shown, line=line, key=dotted, value=value)


def _defaults(model: BaseModel, prefix: str = "") -> list:
    out = []
    for name, field in type(model).model_fields.items():
        value = getattr(model, name)
        if isinstance(value, BaseModel):
            out.extend(_defaults(value, f"{prefix}{name}."))
        elif name not in model.model_fields_set and value is not None and value != []:
            out.append((f"{prefix}{name}", value))
    return out


def read_study_file(path: str | Path) -> StudyFile:
    """Read and validate a study file (the data files are not opened here)."""
    from .csvdata import decode_text  # the same UTF-8 rules as data files

    shown = str(path)
    p = Path(path)
    if not p.exists():
        raise StudyError("study file not found", file=shown)
    if not p.is_file():
        raise StudyError("is not a regular file", file=shown)
    raw = p.read_bytes()
    text = decode_text(raw, shown)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StudyError(f"TOML syntax error: {exc}", file=shown) from None
    try:
        config = StudyConfig.model_validate(data)
    except ValidationError as exc:
        raise _translate(exc, shown, text) from None
    return StudyFile(path=p, shown=shown, text=text, sha256=hashlib.sha256(raw).hexdigest(),
                     config=config, defaults_applied=tuple(_defaults(config)))
