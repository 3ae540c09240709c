"""The protocol stage: design and acceptance criteria fixed before the data exist.

``validator protocol STUDY.toml --out DIR`` reads the study file only (no data
file is opened), checks the declared design (the optional ``[design]`` table)
against the acceptance criteria, and writes ``protocol.json`` (the normalised
design and criteria and their SHA-256 digest) with a protocol document
(``protocol.html``, ``protocol.pdf``) and a manifest, so that ``validator
verify`` and ``validator sign`` work on a protocol folder as on a run's.

``validator run STUDY.toml --out DIR --protocol DIR/protocol.json`` (or
``[protocol] file = "..."`` in the study file) compares the run's normalised
design and criteria with the protocol's, key by key, and the design seen in
the data with the declared one. Every difference is a *deviation*: it is
listed in results.json (top-level ``protocol``) and on the dossier's cover,
and it is a ``protocol-deviation`` criterion that is not met. A criterion
changed after the protocol is never silent.

Normalised design and criteria
------------------------------
The study configuration dumped as JSON (``model_dump(mode="json")``, so every
default is filled in and a default written explicitly normalises the same),
reduced to the keys that count as design or criteria (:func:`criteria_and_design`:
for the characteristics' tables every key of the registry's settings model but
data paths and keys declared not to count; data paths and free text are left
out, see :func:`not_criteria`), written with sorted keys, no spaces and floats in
Python's shortest round-trip form. The digest is the SHA-256 of that text.
"""

from __future__ import annotations

import hashlib
import json
import re
import typing
from dataclasses import dataclass, replace
from datetime import date, timedelta
from pathlib import Path
from typing import Annotated, Optional

from pydantic import BaseModel, ConfigDict, Field, model_validator

from .errors import StudyError, ValidatorError, show

__all__ = ["DesignSection", "ProtocolSection", "criteria_and_design", "not_criteria", "later_additions",
           "counting_keys", "PROTOCOL_1_0_TABLES", "LATER_KEYS", "LATER_ITEM_KEYS", "PROTOCOL_VERSION",
           "PROTOCOL_JSON", "normalised", "canonical_text", "digest", "design_checks", "build_protocol",
           "read_protocol", "compare", "Deviation", "deviation_criteria", "with_deviations",
           "protocol_entry", "write_protocol_folder"]

PROTOCOL_VERSION = "1.0"
PROTOCOL_JSON = "protocol.json"
MAX_PROTOCOL_BYTES = 4 * 1024 * 1024
MAX_COUNT = 10_000


# ---- the [design] and [protocol] tables of the study file -------------------------------------------

class _Table(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True, frozen=True, allow_inf_nan=False)


Level = Annotated[float, Field(ge=0)]
Count = Annotated[int, Field(ge=1, le=MAX_COUNT)]


def _distinct(levels: list, key: str) -> None:
    if not levels:
        raise ValueError(f"{key} must list at least one level")
    seen = sorted(levels)
    for a, b in zip(seen, seen[1:]):
        if abs(a - b) <= 1e-9 * max(abs(a), 1.0):
            raise ValueError(f"{key} lists the level {a:g} twice")


class _LevelDesign(_Table):
    levels: list[Level]
    replicates: Count = 1
    runs: Count = 1

    @model_validator(mode="after")
    def _levels(self):
        _distinct(self.levels, "levels")
        return self


class CalibrationDesign(_LevelDesign):
    """Calibration levels, results per level in each run, and runs (calibration series)."""


class RecoveryDesign(_LevelDesign):
    """Added amounts, results per level in each run, runs, and days (recorded, not seen in the data)."""
    levels: list[Annotated[float, Field(gt=0)]]
    days: Count = 1


class PrecisionDesign(_LevelDesign):
    """Precision levels, results per series, series (runs) per level, and days (recorded only)."""
    days: Count = 1


class BlanksDesign(_Table):
    count: Count


class ReferenceMaterialDesign(_Table):
    replicates: Count


class ComparisonDesign(_Table):
    samples: Annotated[int, Field(ge=3, le=MAX_COUNT)]


class DesignSection(_Table):
    """``[design]``: the experiment as planned, per characteristic (every table optional)."""

    calibration: Optional[CalibrationDesign] = None
    recovery: Optional[RecoveryDesign] = None
    precision: Optional[PrecisionDesign] = None
    blanks: Optional[BlanksDesign] = None
    reference_material: Optional[ReferenceMaterialDesign] = None
    comparison: Optional[ComparisonDesign] = None


class ProtocolSection(_Table):
    """``[protocol] file = "path/to/protocol.json"``: the approved protocol a run is held to."""

    file: Annotated[str, Field(min_length=1, max_length=4096)]


# ---- what counts as design and criteria ------------------------------------------------------------

ALL = "*"
# The tables that are no characteristic's (the study file's frame), kept by hand: the keys of each
# that are design or acceptance criteria ("*": every key), and every other key with why it is left out.
FRAME_CRITERIA_AND_DESIGN = {
    "study": ("purpose", "concentration_unit", "guideline"),     # the unit gives every level and limit its meaning
    "criteria": ALL,
    "design": ALL,
    # per-analyte values of the characteristics' keys (validator.inputs.analyte_settings): each table's
    # design and criteria keys, by analyte; a reference material's own data file is left out, and so are
    # an analyte's response unit and reporting (its concentration unit counts, as the study's does)
    "analyte_settings": ALL,
}
FRAME_NOT_CRITERIA = {
    "study": ("id", "title", "response_unit", "analyst", "reviewer", "instrument", "method", "notes",
              "scope", "intended_use", "method_summary", "protocol_reference", "document_number",
              "document_version", "decimal", "delimiter", "max_data_file_mb"),      # free text and how the files are read
    "protocol": ALL,                                             # the path of the protocol itself
    "exclusions": ALL,          # data rows left out with their reasons: listed in results, not design
    # the run exports, how their columns and type words map, and which calibration quantifies them
    "runs": ALL, "columns": ALL, "types": ALL,
}
# The characteristics' tables that protocol version 1.0 knew. Every other characteristic's table was
# added later: absent, it is left out of the normalised dict (not null), so that the digest of a study
# that does not use it is unchanged and a protocol approved before it existed compares without deviations.
PROTOCOL_1_0_TABLES = ("calibration", "samples", "blanks", "detection", "recovery", "precision",
                       "reference_material", "revalidation", "comparison")
# Keys added later to the tables of protocol 1.0 (issues #13 and #15): left out while null, for the same
# reason. Frozen: a key added to one of these tables from now on goes here, with a default of None.
LATER_KEYS = {"study": ("guideline",), "criteria": ("judge_on",),
              "precision": ("design", "claimed_repeatability_rsd_pct", "claimed_within_laboratory_rsd_pct",
                            "min_series", "min_replicates", "min_levels"),
              "analyte_settings": ALL}       # a frame table added later (issue #12), left out while absent
# Keys added later to the items of a list of tables (e.g. [[precision.levels]]): left out of each item while
# null, so that the digest of a protocol approved before them is unchanged.
LATER_ITEM_KEYS = {("precision", "levels"): ("claimed_repeatability_sd", "claimed_within_laboratory_sd",
                                             "reference_value", "reference_standard_uncertainty", "reference_df")}


def _declared_not_to_count(info) -> bool:
    """True if a field (or a type inside its annotation, e.g. ``Optional[DataPath]``) or a settings
    model carries ``json_schema_extra={"protocol": False}``."""
    from pydantic.fields import FieldInfo

    extra = getattr(info, "json_schema_extra", None)
    if extra is None and isinstance(info, type) and issubclass(info, BaseModel):
        extra = info.model_config.get("json_schema_extra")
    if isinstance(extra, dict) and extra.get("protocol") is False:
        return True
    if isinstance(info, FieldInfo):
        return any(_declared_not_to_count(m) for m in info.metadata) or _declared_not_to_count(info.annotation)
    if isinstance(info, type):
        return False
    return any(_declared_not_to_count(a) for a in typing.get_args(info))


def counting_keys(settings: type[BaseModel]):
    """The keys of a characteristic's settings model that are design or criteria: every key but those
    that say where or how data are read (``DataPath`` keys, ``sheet``, ``header_row``) or are declared
    not to count (``json_schema_extra={"protocol": False}`` on the field); ``None`` when the whole
    table is declared not to count (``json_schema_extra={"protocol": False}`` in its model_config)."""
    if _declared_not_to_count(settings):
        return None
    return tuple(k for k, f in settings.model_fields.items() if not _declared_not_to_count(f))


def _characteristic_tables():
    from .registry import REGISTRY

    return [(e.name, e.settings) for e in REGISTRY if e.settings is not None]


def criteria_and_design() -> dict:
    """Table -> the keys that are design or acceptance criteria (``"*"``: every key; ``()``: only
    whether the table is there counts, normalised to "assessed"). A table absent from the study
    normalises to null (unless added after protocol 1.0), so adding or removing one is a deviation.
    Derived for the characteristics' tables from the registry's settings models."""
    out = dict(FRAME_CRITERIA_AND_DESIGN)
    for name, settings in _characteristic_tables():
        keys = counting_keys(settings)
        if keys is not None:
            out[name] = keys
    return out


def not_criteria() -> dict:
    """Table -> every key that is not design or criteria (tests check the two cover the whole schema)."""
    out = dict(FRAME_NOT_CRITERIA)
    for name, settings in _characteristic_tables():
        keys = counting_keys(settings)
        out[name] = ALL if keys is None else tuple(k for k in settings.model_fields if k not in keys)
    return out


def later_additions() -> dict:
    """Table -> the keys added after protocol 1.0 (``"*"``: the whole table)."""
    out = dict(LATER_KEYS)
    for name, settings in _characteristic_tables():
        if name not in PROTOCOL_1_0_TABLES and counting_keys(settings) is not None:
            out[name] = ALL
    return out


def __getattr__(name):
    # the lists as module attributes, derived from the registry on each use
    derived = {"CRITERIA_AND_DESIGN": criteria_and_design, "NOT_CRITERIA": not_criteria,
               "LATER_ADDITIONS": later_additions}
    if name in derived:
        return derived[name]()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def normalised(config) -> dict:
    """The design and criteria of a validated study configuration, as a plain JSON dict."""
    dumped = config.model_dump(mode="json")
    later_all = later_additions()
    out = {}
    counting = criteria_and_design()
    for section, keys in counting.items():
        value, later = dumped.get(section), later_all.get(section, ())
        if value is None and later == ALL:
            continue
        if section == "analyte_settings":       # {analyte: {table: {key: value}}}, the design and criteria keys
            per_analyte = {analyte: own for analyte, tables in value.items()
                           if (own := _analyte_criteria(counting, tables)) is not None}
            if per_analyte:          # only units or reporting set per analyte: as if absent
                out[section] = per_analyte
            continue
        if value is None:
            out[section] = None
        elif not keys:
            out[section] = "assessed"       # only whether the characteristic is assessed counts
        else:
            out[section] = {k: value[k] for k in (value if keys == ALL else keys) if k in value
                            and not (value[k] is None and later != ALL and k in later)}
            for (table, key), item_keys in LATER_ITEM_KEYS.items():
                if table == section and isinstance(out[section].get(key), list):
                    out[section][key] = [{k: v for k, v in item.items() if not (v is None and k in item_keys)}
                                         if isinstance(item, dict) else item for item in out[section][key]]
    return out


def _analyte_criteria(counting: dict, tables: dict) -> dict | None:
    """One analyte's [analyte_settings] tables reduced to their design and criteria keys. A table that is
    no characteristic's with criteria (``[study]``: its units; ``[sample_preparation]``: how results are
    reported) is left out when none of its keys count, and an analyte left with no table is ``None``."""
    out = {}
    for table, keys_of in tables.items():
        kept = {k: v for k, v in keys_of.items() if _counts_as_criterion(counting, table, k)}
        if kept or (table in counting and table != "study"):
            out[table] = kept
    return out or None


def _counts_as_criterion(counting: dict, table: str, key: str) -> bool:
    keys = counting.get(table, ())
    return keys == ALL or key in keys


def canonical_text(design_and_criteria: dict) -> str:
    """Sorted keys, no spaces, floats in shortest round-trip form (json's float repr), UTF-8 text."""
    return json.dumps(design_and_criteria, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      allow_nan=False)


def digest(design_and_criteria: dict) -> str:
    return hashlib.sha256(canonical_text(design_and_criteria).encode("utf-8")).hexdigest()


# ---- checks of the design against the criteria, without data ----------------------------------------

def _has_level(levels, value) -> bool:
    return any(abs(value - v) <= 1e-9 * max(abs(v), 1.0) for v in levels)


def design_checks(study) -> tuple:
    """(errors, notes) about the declared design: errors are refused, notes are shown in the protocol.

    Errors: a per-level limit at a level the design does not plan (it would judge nothing), a design
    table for a characteristic the study does not assess, a calibration design with fewer levels than
    the model has parameters plus one. Notes: designs on which a criterion will be not applicable.
    """
    cfg = study.config
    design = cfg.design
    errors, notes = [], []
    if design is None:
        notes.append("no [design] table: the levels, replicates and runs are not fixed by this protocol, "
                     "only the criteria")
        return tuple(errors), tuple(notes)
    for name in ("recovery", "precision", "blanks", "reference_material", "comparison"):
        if getattr(design, name) is not None and getattr(cfg, name) is None:
            errors.append((f"design.{name}", f"plans {name.replace('_', ' ')} but the study has no [{name}] "
                                             "section to assess it"))
    cal = design.calibration
    if cal is not None:
        # the same minimum as the data check in validator.inputs.loading
        need = 2 if cfg.calibration.through_origin else (4 if cfg.calibration.model == "quadratic" else 3)
        if len(cal.levels) < need:
            errors.append(("design.calibration.levels", f"plans {len(cal.levels)} level(s); the "
                           f"{cfg.calibration.model} model needs at least {need}"))
        if cal.replicates < 2:
            notes.append("calibration: one result per level, so the lack-of-fit test will be not applicable")
    if design.recovery is not None and cfg.recovery is not None:
        for i, lv in enumerate(cfg.recovery.levels):
            if not _has_level(design.recovery.levels, lv.added):
                errors.append((f"recovery.levels[{i}].added", f"a limit at added = {lv.added:g}, a level the "
                               "design does not plan, would judge nothing"))
        if design.recovery.replicates * design.recovery.runs < 2:
            notes.append("recovery: one result per level, so no SD, confidence interval or t test")
    if design.precision is not None and cfg.precision is not None:
        for i, lv in enumerate(cfg.precision.levels):
            if not _has_level(design.precision.levels, lv.level):
                errors.append((f"precision.levels[{i}].level", f"a limit at level {lv.level:g}, a level the "
                               "design does not plan, would judge nothing"))
        if design.precision.replicates < 2:
            notes.append("precision: one result per series, so repeatability cannot be estimated")
        if design.precision.runs < 2 and cfg.precision.intermediate_rsd_max_pct is not None:
            notes.append("precision: one series per level, so intermediate precision equals repeatability "
                         "and its criterion judges no between-series variation")
    return tuple(errors), tuple(notes)


def check_design(study) -> tuple:
    """The notes of :func:`design_checks`, after refusing its first error as a StudyError."""
    errors, notes = design_checks(study)
    if errors:
        key, problem = errors[0]
        raise StudyError(problem, file=study.shown, key=key)
    return notes


# ---- protocol.json -------------------------------------------------------------------------------

def _approval(approved_on: str | None, approved_by: str | None) -> tuple:
    if (approved_on is None) != (approved_by is None):
        raise ValidatorError("usage: --approved-on and --approved-by go together: the approval names "
                             "both the date and who approved")
    if approved_on is None:
        return None, None
    try:
        if not re.fullmatch(r"[0-9]{4}-[0-9]{2}-[0-9]{2}", approved_on):
            raise ValueError
        date.fromisoformat(approved_on)
    except ValueError:
        raise ValidatorError(f'--approved-on: "{show(approved_on)}" is not a date YYYY-MM-DD') from None
    if not approved_by.strip() or len(approved_by) > 200:
        raise ValidatorError(f'--approved-by: "{show(approved_by)}" must name who approved (1 to 200 characters)')
    return approved_on, approved_by


def _latest_approval(generated_at: str) -> str:
    """The latest approval date (YYYY-MM-DD) a protocol written at ``generated_at`` (UTC) may carry:
    its own day, plus one for time zones ahead of UTC. "9999-12-31" when the time cannot be read."""
    try:
        return (date.fromisoformat(generated_at[:10]) + timedelta(days=1)).isoformat()
    except (ValueError, OverflowError):
        return "9999-12-31"


def build_protocol(study, *, generated_at: str, approved_on=None, approved_by=None) -> dict:
    from . import __version__

    approved_on, approved_by = _approval(approved_on, approved_by)
    if approved_on is not None and approved_on > _latest_approval(generated_at):
        raise ValidatorError(f"--approved-on: {approved_on} is later than today ({generated_at[:10]}); a protocol "
                             "is approved on or before the day it is written")
    dc = normalised(study.config)
    return {
        "protocol_version": PROTOCOL_VERSION,
        "study_id": study.config.study.id,
        "title": study.config.study.title,
        "approved_on": approved_on,
        "approved_by": approved_by,
        "digest": digest(dc),
        "design_and_criteria": dc,
        "study_file": {"path": study.shown, "sha256": study.sha256},
        "generated_at": generated_at,
        "tool": {"name": "validator", "version": __version__},
    }


_REQUIRED = {"protocol_version": str, "study_id": str, "digest": str, "design_and_criteria": dict}


def read_protocol(path: str) -> tuple:
    """(protocol dict, sha256 of the file) after checking its shape and that its digest matches."""
    from .inputs.tables import read_bytes

    if not Path(path).exists():
        raise StudyError("protocol file not found; give the protocol.json that `validator protocol` wrote",
                         file=path)
    data = read_bytes(Path(path), path, MAX_PROTOCOL_BYTES)
    try:
        doc = json.loads(data.decode("utf-8"), parse_constant=lambda c: (_ for _ in ()).throw(ValueError(c)))
    except (UnicodeDecodeError, ValueError, RecursionError) as exc:
        raise StudyError(f"is not a protocol.json written by validator ({show(str(exc), 120)})", file=path) from None
    if not isinstance(doc, dict):
        raise StudyError("is not a protocol.json written by validator (not a JSON object)", file=path)
    for key, kind in _REQUIRED.items():
        if not isinstance(doc.get(key), kind):
            raise StudyError(f'is not a protocol.json written by validator ("{key}" is missing or not '
                             f"{ {str: 'text', dict: 'an object'}[kind]})", file=path, key=key)
    if doc["protocol_version"] != PROTOCOL_VERSION:
        raise StudyError(f"protocol version {show(doc['protocol_version'])} is not supported (this validator "
                         f"reads {PROTOCOL_VERSION})", file=path, key="protocol_version")
    if digest(doc["design_and_criteria"]) != doc["digest"]:
        raise StudyError("its design_and_criteria do not match its digest: the file was changed after "
                         "validator wrote it; use the approved protocol as written", file=path, key="digest")
    for key in ("approved_on", "approved_by"):
        if doc.get(key) is not None and not isinstance(doc[key], str):
            raise StudyError(f'"{key}" must be text or null', file=path, key=key)
    try:                                    # the same rules as --approved-on and --approved-by
        _approval(doc.get("approved_on"), doc.get("approved_by"))
    except ValidatorError as exc:
        raise StudyError(f"its approval is not one validator wrote ({exc})", file=path, key="approved_on") from None
    if doc.get("approved_on") and doc["approved_on"] > _latest_approval(str(doc.get("generated_at", ""))):
        raise StudyError(f'approved_on {doc["approved_on"]} is later than the day the protocol was written '
                         f'({str(doc["generated_at"])[:10]})', file=path, key="approved_on")
    return doc, hashlib.sha256(data).hexdigest()


def check_protocol_record(path: str) -> str | None:
    """Check the protocol's folder as a record: its manifest, and its signature if it has one.

    The digest only shows that design and criteria agree with each other; the manifest shows that
    protocol.json (approval included) is the file validator wrote, and a signature who released it.
    Returns the signing key's fingerprint, or ``None`` for an unsigned folder (the dossier says that
    its approval is then not protected against editing).
    """
    from .inputs.integrity import verify
    from .signing import check_signature

    folder = Path(path).parent
    try:
        problems = verify(folder)
    except ValidatorError as exc:
        raise StudyError(f"its folder is not a protocol folder validator wrote ({exc})", file=path) from None
    if problems:
        raise StudyError("its folder changed since validator wrote it (" + "; ".join(problems[:3]) + "); "
                         "use the approved protocol as written", file=path)
    signature = check_signature(str(folder))
    if signature.present and not signature.valid:
        raise StudyError("its folder's signature is not valid (" + "; ".join(signature.problems[:3]) + ")",
                         file=path)
    return signature.key_fingerprint if signature.present else None


# ---- deviations ----------------------------------------------------------------------------------

_MISSING = object()


@dataclass(frozen=True)
class Deviation:
    """One difference from the approved protocol. ``analyte`` is set for a design seen in one analyte's data."""

    key: str
    protocol: object
    run: object
    analyte: str | None = None

    @property
    def text(self) -> str:
        where = f" (analyte {self.analyte})" if self.analyte else ""
        return f"deviation: {self.key}: protocol {_shown(self.protocol)}, run {_shown(self.run)}{where}"


def _shown(value) -> str:
    if value is _MISSING:
        return "not declared"
    if value is None:
        return "none"
    if isinstance(value, str):
        return show(value)
    return show(json.dumps(value, sort_keys=True, ensure_ascii=False), 200)


def _flat(value, prefix: str, out: dict) -> None:
    if isinstance(value, dict) and value:
        for k, v in value.items():
            _flat(v, f"{prefix}.{k}" if prefix else k, out)
    else:
        out[prefix] = value        # lists (levels, ranges) are compared whole


def _differences(before, now, prefix: str, out: list) -> None:
    """Key by key where both sides are tables; a whole value (a list, a section added or removed) otherwise."""
    if isinstance(before, dict) and isinstance(now, dict):
        for key in sorted(set(before) | set(now)):
            _differences(before.get(key, _MISSING), now.get(key, _MISSING),
                         f"{prefix}.{key}" if prefix else key, out)
    elif before is _MISSING or now is _MISSING or canonical_text(before) != canonical_text(now):
        out.append(Deviation(prefix, before, now))


def compare(protocol: dict, study) -> list:
    """Deviations of the study's design and criteria from the protocol's: changed, added and removed keys
    (a section added or removed is one deviation), and a different study id."""
    out = []
    if protocol["study_id"] != study.config.study.id:
        out.append(Deviation("study.id", protocol["study_id"], study.config.study.id))
    before, now = dict(protocol["design_and_criteria"]), normalised(study.config)
    own_before, own_now = before.pop("analyte_settings", {}), now.pop("analyte_settings", {})
    _differences(before, now, "", out)
    # one analyte's own settings concern that analyte only (its verdict, not the others')
    own_before = own_before if isinstance(own_before, dict) else {}
    own_now = own_now if isinstance(own_now, dict) else {}
    for analyte in sorted(set(own_before) | set(own_now)):
        found: list = []
        _differences(own_before.get(analyte, _MISSING), own_now.get(analyte, _MISSING),
                     f"analyte_settings.{analyte}", found)
        out += [replace(d, analyte=analyte) for d in found]
    return out


def _counts(levels, series) -> tuple:
    """(sorted distinct levels, distinct results-per-level-per-series counts, distinct series-per-level counts)."""
    cells, per_level = {}, {}
    for lv, s in zip(levels, series):
        lv = float(lv)
        cells[(lv, s)] = cells.get((lv, s), 0) + 1
        per_level.setdefault(lv, set()).add(s)
    return (sorted(per_level), sorted(set(cells.values())), sorted({len(v) for v in per_level.values()}))


def _seen(counts: list):
    return counts[0] if len(counts) == 1 else f"{counts[0]} to {counts[-1]}" if counts else 0


def _level_deviations(name: str, planned, levels, series, analyte: str) -> list:
    seen_levels, reps, runs = _counts(levels, series)
    out = []
    missing = [v for v in planned.levels if not _has_level(seen_levels, v)]
    extra = [v for v in seen_levels if not _has_level(planned.levels, v)]
    if missing or extra:
        out.append(Deviation(f"design.{name}.levels", sorted(planned.levels), seen_levels, analyte))
    if reps != [planned.replicates]:
        out.append(Deviation(f"design.{name}.replicates", planned.replicates, _seen(reps), analyte))
    if runs != [planned.runs]:
        out.append(Deviation(f"design.{name}.runs", planned.runs, _seen(runs), analyte))
    return out


def design_deviations(design, analytes) -> list:
    """The design seen in each analyte's data against the declared one (levels, replicates, runs, counts).

    Days are recorded in the protocol but not seen in the data (the data files have no day column).
    """
    out = []
    if design is None:
        return out
    for a in analytes:
        if design.calibration is not None:
            out += _level_deviations("calibration", design.calibration, a.calibration.concentration,
                                     a.calibration.series, a.name)
        recovery = a.of("recovery")
        if design.recovery is not None and recovery is not None:
            out += _level_deviations("recovery", design.recovery, recovery.added, recovery.series, a.name)
        precision = a.of("precision")
        if design.precision is not None and precision is not None:
            out += _level_deviations("precision", design.precision, precision.level, precision.series, a.name)
        for name, planned, seen in (
                ("blanks.count", design.blanks and design.blanks.count, a.of("blanks")),
                ("reference_material.replicates",
                 design.reference_material and design.reference_material.replicates, a.of("reference_material")),
                ("comparison.samples", design.comparison and design.comparison.samples,
                 None if a.of("comparison") is None else a.of("comparison").samples)):
            if planned and seen is not None and len(seen) != planned:
                out.append(Deviation(f"design.{name}", planned, len(seen), a.name))
    return out


def deviation_criteria(deviations) -> tuple:
    """One not-met ``protocol-deviation`` criterion per deviation: 1 deviation at the key, 0 allowed."""
    from .criteria import Criterion

    return tuple(Criterion("protocol-deviation", d.text, 1, 0, False,
                           "differs from the approved protocol; a deviation needs its own assessment and "
                           "approval") for d in deviations)


def with_deviations(result, deviations):
    """The study result with each deviation appended to the criteria of the analytes it concerns
    (a deviation without an analyte concerns every analyte): the one place they join the verdict."""
    analytes = tuple(
        replace(a, criteria=tuple(a.criteria) + deviation_criteria(
            [d for d in deviations if d.analyte is None or d.analyte == a.name]))
        for a in result.analytes)
    return replace(result, analytes=analytes)


def protocol_entry(path: str, sha256: str, protocol: dict, deviations, signed_by_key: str | None = None) -> dict:
    """The top-level ``protocol`` object of results.json."""
    return {"path": path, "sha256": sha256, "digest": protocol["digest"],
            "study_id": protocol["study_id"],
            "approved_on": protocol.get("approved_on"), "approved_by": protocol.get("approved_by"),
            "signed_by_key": signed_by_key,
            "identical": not deviations,
            "deviations": [{"key": d.key, "protocol": None if d.protocol is _MISSING else d.protocol,
                            "run": None if d.run is _MISSING else d.run, "analyte": d.analyte,
                            "text": d.text} for d in deviations]}


# ---- the protocol document -----------------------------------------------------------------------

_DESIGN_LABELS = (("calibration", "Calibration"), ("recovery", "Recovery (trueness)"),
                  ("precision", "Precision"), ("blanks", "Blanks"),
                  ("reference_material", "Reference material"), ("comparison", "Method comparison"))


def _design_rows(design) -> list:
    rows = []
    if design is None:
        return rows
    for name, label in _DESIGN_LABELS:
        d = getattr(design, name)
        if d is None:
            continue
        levels = getattr(d, "levels", None)
        rows.append({"characteristic": label,
                     "levels": ", ".join(f"{v:g}" for v in levels) if levels else "",
                     "n_levels": len(levels) if levels else None,
                     "replicates": getattr(d, "replicates", None), "runs": getattr(d, "runs", None),
                     "days": getattr(d, "days", None),
                     "count": getattr(d, "count", None) or getattr(d, "samples", None)})
    return rows


def _criteria_rows(study, dc: dict) -> list:
    defaults = {k for k, _ in study.defaults_applied}
    flat = {}
    _flat({k: v for k, v in dc.items() if k != "design"}, "", flat)
    rows = []
    for key, value in sorted(flat.items()):
        if value is None and key.count(".") == 0:
            continue            # a characteristic not assessed
        source = ("validator default (common practice, not a regulatory limit): confirm or declare it"
                  if key in defaults else "not set: no criterion on it" if value is None
                  else "declared in the study file")
        rows.append({"key": key, "value": _shown(value), "source": source})
    return rows


_ASSESSED = (("calibration", "calibration function, lack of fit and back-calculated accuracy"),
             ("detection", "detection and quantitation limits, working range"),
             ("samples", "quantification of unknowns"), ("blanks", "blanks (blank-based limits)"),
             ("recovery", "recovery (trueness)"), ("precision", "repeatability and intermediate precision"),
             ("reference_material", "bias against a certified reference material"),
             ("revalidation", "comparison with a previous validation"),
             ("comparison", "method comparison on shared samples"))


def document_data(protocol: dict, study, notes) -> dict:
    """Everything the protocol template shows, as finished text (templates never compute)."""
    cfg = study.config.study
    return {"p": protocol, "study": {"id": cfg.id, "title": cfg.title, "purpose": cfg.purpose,
                                     "method": cfg.method, "instrument": cfg.instrument,
                                     "analyst": cfg.analyst, "reviewer": cfg.reviewer,
                                     "concentration_unit": cfg.concentration_unit,
                                     "response_unit": cfg.response_unit, "notes": cfg.notes,
                                     # analytes with their own units ([analyte_settings.<analyte>.study])
                                     "own_units": [{"name": s.analyte,
                                                    "concentration": s.config.study.concentration_unit,
                                                    "response": s.config.study.response_unit}
                                                   for s in study.analyte_settings
                                                   if s.sets("study", "concentration_unit")
                                                   or s.sets("study", "response_unit")]},
            "assessed": [label for key, label in _ASSESSED
                         if protocol["design_and_criteria"].get(key) is not None],
            "design": _design_rows(study.config.design),
            "criteria": _criteria_rows(study, protocol["design_and_criteria"]),
            "notes": list(notes),
            "approval": (f"approved on {protocol['approved_on']} by {protocol['approved_by']}"
                         if protocol.get("approved_on") else "not yet approved")}


def render_protocol_html(data: dict, *, paper: str = "a4") -> str:
    from .report import _environment, templates_dir

    css = (templates_dir() / "dossier.css").read_text(encoding="utf-8")
    return _environment().get_template("protocol.html.j2").render(
        **data, css=css, page_size={"a4": "A4", "letter": "letter"}[paper])


def write_protocol_folder(study, out: str, *, force: bool, generated_at: str, approved_on=None,
                          approved_by=None, paper: str = "a4") -> dict:
    """Check the design and criteria and write protocol.json, protocol.html, protocol.pdf and the manifest."""
    from .inputs.integrity import write_manifest
    from .output import check_existing, check_target, write_output_folder

    notes = check_design(study)
    protocol = build_protocol(study, generated_at=generated_at, approved_on=approved_on,
                              approved_by=approved_by)
    target = check_target(out, [str(study.path.resolve())])
    check_existing(target, out, force)
    html = render_protocol_html(document_data(protocol, study, notes), paper=paper)

    def write(folder: Path):
        from .report import write_pdf
        from .results import dumps

        (folder / PROTOCOL_JSON).write_text(dumps(protocol), encoding="utf-8")
        (folder / "protocol.html").write_text(html, encoding="utf-8")
        write_pdf(html, folder / "protocol.pdf")
        write_manifest(folder)

    write_output_folder(target, out, force, write)
    return protocol
