"""Analytical runs: instrument exports read as they are, through the study's column mapping.

A validation is a set of runs. Each ``[[runs]]`` table names one export (CSV or one .xlsx
sheet), read untouched: ``[columns]`` says which of its headers holds each field the tool
reads (sample, type, level, response, internal standard, analyte, run, day, and the optional
order, lot, condition and dilution), ``[types]`` which of its words means which injection type (the export's "Cal
Std" is a calibrator). Columns the study does not map are left unread.

Each row becomes an :class:`Injection` with its run and day labels, its analyte, its type
(calibrator, blank, zero, qc, spiked, unspiked, reference, sample, matrix_blank, low_level,
post_extraction, neat, solvent_calibrator), its
level (the nominal concentration of a calibrator or QC, the added amount of a spiked sample),
its response, its lot and its place in the run's sequence (the ``order`` column, else the row).
When an internal-standard column is mapped, the response is the ratio analyte / internal
standard, computed here; both raw areas are kept for the audit trail, and a missing, zero
or negative internal-standard area is an error naming the row, except that a blank or a
matrix blank (neither analyte nor internal standard, ICH M10) may have none or 0. A blank's
or matrix blank's ratio is never computed when an internal standard is mapped (``response``
None), whatever IS area it shows: the IS area of a blank is carry-over or noise, so the ratio
means nothing, and the injection serves the checks on raw areas only (carry-over,
selectivity). Blank matrix with the internal standard is a zero sample (type ``zero``): it
needs its IS area, has a ratio and is quantified (limits of blank, MDL method blanks).

Quantification (a response read back through its run's calibration) is analysis and happens
downstream; this module only reads.
"""

from __future__ import annotations

import dataclasses
import unicodedata
from dataclasses import dataclass

from ..errors import DataError, StudyError, show
from ..maths.regression import MAGNITUDE_LIMIT, first_out_of_range
from .study import BLANK_TYPES, INJECTION_TYPES, QC_ROLES
from .tables import MAX_NAME_LENGTH

__all__ = ["Injection", "RunsData", "read_runs", "load_runs", "by_analyte", "check_run_calibrations", "NEEDS_LEVEL"]

# the types whose level (nominal concentration, or added amount) must be given
NEEDS_LEVEL = ("calibrator", "qc", "spiked", "solvent_calibrator")


@dataclass(frozen=True)
class Injection:
    """One row of a run export, typed and mapped.

    Attributes
    ----------
    run, day : str
        The run's label, and the day it was measured on (the run's label when unknown).
    analyte, sample, type : str
        The analyte, the injection's name in the export, and its type (one of
        :data:`validator.inputs.study.INJECTION_TYPES`).
    level : float or None
        Nominal concentration (calibrator, QC) or added amount (spiked); None when not given.
    response : float or None
        What is calibrated: the analyte's response, or its ratio to the internal standard; None
        for a blank or matrix blank when an internal standard is mapped (it has none: the ratio is
        not computed, whatever IS area is read) and the injection serves the checks on raw areas
        only (carry-over, selectivity).
    analyte_response, internal_standard_response : float, float or None
        The raw areas (heights) as read; the second is None without an internal standard, or
        when a blank's IS area is not given.
    file, sheet, row : str, str or None, int
        Where the injection is: the export as named in the study, the sheet of a workbook,
        the file row (CSV line, header = row 1) or sheet row.
    """

    run: str
    day: str
    analyte: str
    sample: str
    type: str
    level: float | None
    response: float | None
    analyte_response: float
    internal_standard_response: float | None
    file: str
    sheet: str | None
    row: int
    matrix: str = ""             # spiked: the unspiked injections' sample id giving the native level ("": none)
    lot: str = ""                # the matrix lot ([columns] lot; "": not given)
    position: float = 0.0        # the place in the run's sequence: [columns] order, else the row
    condition: str = ""          # a QC's storage condition ([columns] condition; "": not given)
    dilution: float | None = None    # a diluted QC's dilution factor, above 1 ([columns] dilution; None: not diluted)
    # the sector table a QC with a lot, a condition or a dilution factor feeds instead of precision (a value of
    # validator.inputs.study.QC_ROLES: "matrix_effect", "stability", "dilution_integrity"); "" for any other
    role: str = ""


def _subset(table, idx: list):
    """``table`` restricted to the records at positions ``idx`` (row numbers kept)."""
    changes = {"columns": {n: [v[i] for i in idx] for n, v in table.columns.items()},
               "rows": tuple(table.rows[i] for i in idx)}
    if hasattr(table, "kinds"):
        changes["kinds"] = {n: tuple(v[i] for i in idx) for n, v in table.kinds.items()}
    return dataclasses.replace(table, **changes)


def _error(table, problem: str, *, row: int, column: str, value: object = None) -> DataError:
    """A DataError at a cell: named by sheet and cell in a workbook, by row and column in CSV."""
    if hasattr(table, "error") and column in getattr(table, "letters", {}):
        return table.error(problem, column=column, row=row, value=value)
    return DataError(problem, file=table.path, row=row, column=column, value=value)


def _header(name: str | None) -> str | None:
    return None if name is None else name.strip().lower()


def read_runs(reader, runs, columns, types, default_analyte: str) -> tuple[Injection, ...]:
    """Every injection of every ``[[runs]]`` export, in the order of the study and the files.

    Parameters
    ----------
    reader : validator.inputs.loading.Reader
        Reads a data file into a table (audit trail, exclusions, dialect, sheet).
    runs : sequence of RunSource
        The ``[[runs]]`` tables.
    columns : ColumnsSection
        ``[columns]``: the export's header of each field.
    types : TypesSection
        ``[types]``: the export's words of each injection type.
    default_analyte : str
        The analyte's name when no analyte column is mapped (the study id).
    """
    mapped = {field: _header(getattr(columns, field)) for field in type(columns).model_fields}
    # the fields every injection needs, and every header the study names, must be in each export
    named = {"sample", "type", "response"} | set(columns.model_fields_set)
    required = tuple(h for f, h in mapped.items() if h is not None and f in named)
    optional = tuple(h for f, h in mapped.items() if h is not None and f not in named)
    out, read, by_row = [], {}, {}
    for k, source in enumerate(runs):
        before = len(reader.exclusions.applied)
        table = reader.table("runs", source, required, optional, other_columns="ignore")
        _check_not_read_twice(read, k, source, reader.inputs[-1], reader.study)
        by_row.update(_excluded_injections(reader.exclusions.applied[before:], table, source, k, mapped))
        analyte_column = mapped["analyte"] if mapped["analyte"] and table.has(mapped["analyte"]) else None
        reader.exclusions.name_analytes(before, lambda cells: unicodedata.normalize(
            "NFC", cells.get(analyte_column, "").strip()) if analyte_column else default_analyte)
        out.extend(_injections(table, source, k, mapped, types, default_analyte, reader.study.shown))
    _check_labels(out, reader.study.shown)
    _check_lots(out)
    _check_spellings(out)
    return _match_matrices(reader.exclusions.apply_injections(out, excluded_by_row=by_row))


def _excluded_injections(excluded, table, source, k: int, mapped: dict) -> dict:
    """``{(run, injection name): Excluded}`` of the export's rows [[exclusions]] left out by file and row,
    so that an exclusion of the same injection by run and name is named as a second one."""
    out = {}
    run_column = mapped["run"] if mapped["run"] and table.has(mapped["run"]) else None
    for e in excluded:
        cells = dict(e.cells)
        run = cells.get(run_column, "").strip() if run_column else (source.run or f"run {k + 1}")
        out[(run, cells.get(mapped["sample"], "").strip())] = e
    return out


def _check_not_read_twice(read: dict, k: int, source, record, study) -> None:
    """Two ``[[runs]]`` never read the same export: the same file (and sheet), or a copy of it.

    The export is known by its content (SHA-256 of the file) and the sheet read, so a path written
    two ways, a link and a copied file are all caught; two sheets of one workbook are two exports.
    Read twice, every injection would count as two runs' results (doubled degrees of freedom, no
    between-run variance).
    """
    from .study import item_line

    key = (record.sha256, record.sheet)
    if key not in read:
        read[key] = (k, source, record)
        return
    first, earlier, was = read[key]
    import os

    how = ("the same file" if os.path.realpath(was.resolved) == os.path.realpath(record.resolved) else
           f"a file with the same content (SHA-256 {record.sha256[:12]}...)")
    sheet = f', sheet "{show(record.sheet)}"' if record.sheet else ""
    raise StudyError(f'[[runs]] {k + 1} (data = "{show(source.data)}"{sheet}) reads {how} as [[runs]] {first + 1} '
                     f'(data = "{show(earlier.data)}"): one export would count as two runs; give each run its '
                     "own export", file=study.shown, line=item_line(study.text, "runs", k, "data"),
                     key=f"runs[{k}].data", value=source.data)


def _check_lots(injections) -> None:
    """One spelling per lot of an analyte: lots "A" and "a" would count as two (names compared ignoring case)."""
    seen: dict = {}
    for inj in injections:
        if not inj.lot:
            continue
        first = seen.setdefault((inj.analyte, inj.lot.casefold()), inj)
        if first.lot != inj.lot:
            raise DataError(f'lot "{show(inj.lot)}" and "{show(first.lot)}" ({show(first.file)} row {first.row}) '
                            "differ only in letter case: names are compared ignoring case, so they would be one "
                            "lot; write it one way", file=inj.file, row=inj.row, column="lot", value=inj.lot)


def _match_matrices(injections) -> tuple:
    """Each spiked injection with the unspiked matrix of its run whose found level is its native level.

    The unspiked injections of the same run with the same sample id; else, when the run has
    unspiked injections of one sample id only, those; else, when it has none, no native level
    (0). Unspiked injections of several ids and none with the spiked one's id are ambiguous.
    """
    unspiked: dict = {}
    for inj in injections:
        if inj.type == "unspiked":
            unspiked.setdefault((inj.analyte, inj.run), set()).add(inj.sample)
    out = []
    for inj in injections:
        if inj.type == "spiked":
            ids = unspiked.get((inj.analyte, inj.run), set())
            if inj.sample in ids:
                matrix = inj.sample
            elif len(ids) == 1:
                matrix = next(iter(ids))
            elif not ids:
                matrix = ""
            else:
                raise DataError(f'spiked injection "{show(inj.sample)}" has no unspiked injection of the same '
                                f'sample id in run "{show(inj.run)}", which has unspiked injections of '
                                + ", ".join(f'"{show(i)}"' for i in sorted(ids))
                                + "; give the spiked and the unspiked injection of one matrix the same sample id",
                                file=inj.file, row=inj.row, value=inj.sample)
            inj = dataclasses.replace(inj, matrix=matrix)
        out.append(inj)
    return tuple(out)


def _injections(table, source, k: int, mapped: dict, types, default_analyte: str, study: str):
    sheet = getattr(table, "sheet", None) or None
    words = table.texts(mapped["type"])
    kinds = []
    for word, row in zip(words, table.rows):
        kind = types.type_of(word)
        if kind is None:
            known = ", ".join(f'"{show(w, 30)}"' for t in INJECTION_TYPES for w in getattr(types, t))
            raise _error(table, f'injection type "{show(word)}" is not listed in [types] (listed: {known}); '
                         "add it to the type it means", row=row, column=mapped["type"], value=word)
        kinds.append(kind)
    samples = table.texts(mapped["sample"], MAX_NAME_LENGTH)
    analytes = (table.texts(mapped["analyte"], MAX_NAME_LENGTH) if mapped["analyte"] and table.has(mapped["analyte"])
                else [default_analyte] * len(table))
    run_label = source.run or f"run {k + 1}"
    if mapped["run"] and table.has(mapped["run"]):
        if source.run is not None:
            raise StudyError(f"[[runs]] {k + 1} gives run = \"{show(source.run)}\" but its export also has the "
                             f'run column "{show(mapped["run"])}"; keep one', file=study, key=f"runs[{k}].run")
        runs = table.texts(mapped["run"], MAX_NAME_LENGTH)
    else:
        runs = [run_label] * len(table)
    if mapped["day"] and table.has(mapped["day"]):
        if source.day is not None:
            raise StudyError(f"[[runs]] {k + 1} gives day = \"{show(source.day)}\" but its export also has the "
                             f'day column "{show(mapped["day"])}"; keep one', file=study, key=f"runs[{k}].day")
        days = table.texts(mapped["day"], MAX_NAME_LENGTH)
    else:
        days = [source.day] * len(table) if source.day else list(runs)

    response = table.numbers(mapped["response"])
    _within_magnitudes(table, mapped["response"], response, table.rows)
    for value, row in zip(response, table.rows):
        if value < 0:
            raise _error(table, f"the response {value:g} is negative", row=row, column=mapped["response"], value=value)
    internal = [None] * len(table)
    if mapped["internal_standard"]:
        column = mapped["internal_standard"]
        # a blank (no analyte, no internal standard) may have no IS area, or 0: its ratio is undefined
        for i, (cell, row) in enumerate(zip(table.columns[column], table.rows)):
            if cell.strip() == "" and kinds[i] not in BLANK_TYPES:
                raise _error(table, f"the internal-standard area is missing; a {kinds[i]} injection needs one to "
                             "compute the response ratio (only blank and matrix_blank injections may have none)",
                             row=row, column=column, value=cell)
        internal = _optional_numbers(table, column)
        for value, kind, row in zip(internal, kinds, table.rows):
            if value is None:
                continue
            if value < 0 or (not value > 0 and kind not in BLANK_TYPES):
                raise _error(table, f"the internal-standard area is {value:g}; the response ratio of a {kind} "
                             "injection needs an area above zero" + ("" if value < 0 else
                             " (only blank and matrix_blank injections may have none)"),
                             row=row, column=column, value=value)

    levels = _optional_numbers(table, mapped["level"])
    for i, (kind, row) in enumerate(zip(kinds, table.rows)):
        if kind in NEEDS_LEVEL and levels[i] is None:
            what = {"calibrator": "its nominal concentration", "qc": "its nominal concentration",
                    "spiked": "the amount added", "solvent_calibrator": "its nominal concentration"}[kind]
            raise _error(table, f"a {kind} injection needs a level ({what})", row=row, column=mapped["level"])
        if levels[i] is not None and levels[i] < 0:
            raise _error(table, f"the level {levels[i]:g} is negative", row=row, column=mapped["level"],
                         value=levels[i])
        if kind == "spiked" and not levels[i] > 0:
            raise _error(table, "a spiked injection needs an added amount above zero", row=row,
                         column=mapped["level"], value=levels[i])

    lots = _optional_names(table, mapped["lot"])
    for i, (kind, row) in enumerate(zip(kinds, table.rows)):
        if kind in ("matrix_blank", "post_extraction") and not lots[i]:
            raise _error(table, f"a {kind} injection needs its lot (map the lot column in [columns] lot)",
                         row=row, column=mapped["lot"] or "lot", value=lots[i])
        if kind == "neat" and lots[i]:
            raise _error(table, "a neat injection is the neat solution (no matrix): it has no lot; a spike into "
                         "extracted blank matrix of one lot is a post_extraction injection", row=row,
                         column=mapped["lot"], value=lots[i])
    conditions = _optional_names(table, mapped["condition"])
    for condition, kind, row in zip(conditions, kinds, table.rows):
        if condition and kind != "qc":
            raise _error(table, f"a storage condition is read for QC injections only (stability), not for a "
                         f"{kind} injection", row=row, column=mapped["condition"], value=condition)
    dilutions = _optional_numbers(table, mapped["dilution"])
    for i, (value, row) in enumerate(zip(dilutions, table.rows)):
        if value is None:
            continue
        if not value >= 1:
            raise _error(table, f"the dilution factor {value:g} is below 1", row=row, column=mapped["dilution"],
                         value=value)
        if value == 1:
            dilutions[i] = None          # not diluted
        elif kinds[i] != "qc":
            raise _error(table, f"a dilution factor other than 1 is read for QC injections only (dilution "
                         f"integrity), not for a {kinds[i]} injection; give a sample's dilution in "
                         "[sample_preparation]", row=row, column=mapped["dilution"], value=value)
    marks = {"lot": lots, "condition": conditions, "dilution": dilutions}
    roles = [""] * len(table)
    for i, row in enumerate(table.rows):
        if kinds[i] != "qc":
            continue
        given = [column for column in QC_ROLES if marks[column][i]]
        if len(given) > 1:
            raise _error(table, "a QC injection serves one of matrix lots (lot), stability (condition) and "
                         f"dilution integrity (dilution); this one has {' and '.join(given)}", row=row,
                         column=mapped[given[1]])
        roles[i] = QC_ROLES[given[0]] if given else ""
    positions = [float(r) for r in table.rows]
    if mapped["order"] and table.has(mapped["order"]):
        column = mapped["order"]
        for cell, row in zip(table.columns[column], table.rows):
            if cell.strip() == "":
                raise _error(table, "the injection's position in the sequence is missing", row=row, column=column,
                             value=cell)
        positions = table.numbers(column)
        seen: dict = {}
        for i, (value, row) in enumerate(zip(positions, table.rows)):
            key = (runs[i], analytes[i], value)
            if key in seen:
                raise _error(table, f"position {value:g} is also that of row {seen[key]} of run "
                             f'"{show(runs[i])}"; each injection of a run has its own place in the sequence',
                             row=row, column=column, value=value)
            seen[key] = row

    out = []
    for i, row in enumerate(table.rows):
        if not mapped["internal_standard"]:
            ratio = response[i]
        else:             # a blank has no IS: its ratio means nothing, whatever IS area it shows (raw areas only)
            ratio = response[i] / internal[i] if kinds[i] not in BLANK_TYPES else None
            if ratio is not None and first_out_of_range([ratio]) is not None:
                raise _error(table, f"the response ratio {response[i]:g} / {internal[i]:g} = {ratio:g} is outside "
                             f"the magnitudes validator can compute with (non-zero values from "
                             f"{1 / MAGNITUDE_LIMIT:g} to {MAGNITUDE_LIMIT:g}); check the areas or rescale them",
                             row=row, column=mapped["response"], value=response[i])
        out.append(Injection(run=runs[i], day=days[i], analyte=analytes[i], sample=samples[i], type=kinds[i],
                             level=levels[i], response=ratio, analyte_response=response[i],
                             internal_standard_response=internal[i], file=table.path, sheet=sheet, row=row,
                             lot=lots[i], position=float(positions[i]), condition=conditions[i],
                             dilution=dilutions[i], role=roles[i]))
    return out


def _filled(table, column: str) -> tuple[list[int], object]:
    """The positions of the non-empty cells of ``column``, and ``table`` restricted to them (row numbers
    kept): an optional field is read, and checked, only where it is given."""
    given = [i for i, cell in enumerate(table.columns[column]) if cell.strip() != ""]
    return given, _subset(table, given)


def _optional_names(table, column: str | None) -> list[str]:
    """The names of an optional column (lot, condition) per row, as :meth:`texts` reads names; ``""`` where
    the cell is empty, and on every row when the column is not mapped or not in this export."""
    names = [""] * len(table)
    if column and table.has(column):
        given, filled = _filled(table, column)
        for i, text in zip(given, filled.texts(column, MAX_NAME_LENGTH)):
            names[i] = text.strip()
    return names


def _optional_numbers(table, column: str | None) -> list:
    """The numbers of an optional column (level, dilution; an internal standard area may be left empty on a
    blank) per row, within the magnitudes the statistics compute with; None where the cell is empty, and on
    every row when the column is not mapped or not in this export."""
    values = [None] * len(table)
    if column and table.has(column):
        given, filled = _filled(table, column)
        for i, value in zip(given, filled.numbers(column)):
            values[i] = value
        _within_magnitudes(table, column, [values[i] for i in given], [table.rows[i] for i in given])
    return values


def _within_magnitudes(table, column: str, values, rows) -> None:
    """Refuse a number of a run export beyond the magnitudes the statistics compute with (as
    :func:`validator.inputs.loading.numeric_column` does for the other tables): an instrument's overflow
    value or a mistyped exponent is an input error naming its cell, never an internal one later on."""
    i = first_out_of_range(values)
    if i is not None:
        raise _error(table, f"{column} {values[i]:g} is outside the magnitudes validator can compute with "
                     f"(non-zero values from {1 / MAGNITUDE_LIMIT:g} to {MAGNITUDE_LIMIT:g}, so that squares and "
                     "products of the data stay finite); check the cell or rescale the unit", row=rows[i],
                     column=column, value=values[i])


def _check_low_levels(own, cfg) -> None:
    """The level of a low_level injection is optional, but for all of an analyte's or none: one empty cell
    among given levels would silently drop the MDL's spike level (and its check) or the LoQ's nominal
    values for the whole analyte."""
    low = [i for i in own if i.type == "low_level"]
    given = next((i for i in low if i.level is not None), None)
    empty = next((i for i in low if i.level is None), None)
    if given is not None and empty is not None:
        from .study import ColumnsSection

        column = (cfg.columns or ColumnsSection()).level or "level"
        raise DataError(f'low_level injection "{show(empty.sample)}" of analyte "{show(empty.analyte)}" has no level, '
                        f'but "{show(given.sample)}" ({show(given.file)} row {given.row}) has {given.level:g}: give the '
                        "level (the spike level) on every low_level injection of the analyte, or on none",
                        file=empty.file, row=empty.row, column=column)


def _check_labels(injections, study: str) -> None:
    """A run label belongs to one export, and a run is measured on one day."""
    where, day = {}, {}
    for inj in injections:
        first = where.setdefault(inj.run, (inj.file, inj.sheet, inj.row))
        if first[:2] != (inj.file, inj.sheet):
            raise DataError(f'run "{show(inj.run)}" appears in two exports ({show(first[0])} row {first[2]}); '
                            "give each run its own label", file=inj.file, row=inj.row)
        d = day.setdefault(inj.run, (inj.day, inj.row))
        if d[0] != inj.day:
            raise DataError(f'run "{show(inj.run)}" has day "{show(inj.day)}" here but "{show(d[0])}" at row {d[1]}; '
                            "a run is measured on one day", file=inj.file, row=inj.row, value=inj.day)


def _check_spellings(injections) -> None:
    """One spelling per run, day and sample: labels differing only in letter case or spacing ("B1" and
    "b1") would silently be two runs (another precision series), two days or two samples."""
    from .sample_ids import spelling_variant

    samples = [inj for inj in injections if inj.type == "sample"]
    for what, group, label in (("run", injections, lambda inj: inj.run), ("day", injections, lambda inj: inj.day),
                               ("sample id", samples, lambda inj: inj.sample)):
        labels = [label(inj) for inj in group]
        clash = spelling_variant(labels)
        if clash is not None:
            first, inj = group[clash[0]], group[clash[1]]
            where = f"row {first.row}" if first.file == inj.file else f"{show(first.file)} row {first.row}"
            raise DataError(f'{what} "{show(labels[clash[1]])}" differs only in letter case or spacing from '
                            f'{what} "{show(labels[clash[0]])}" ({where}): they would count as two; write one '
                            "spelling", file=inj.file, row=inj.row, value=labels[clash[1]])


def by_analyte(injections) -> dict:
    """``{analyte: tuple of its injections}``, analytes in order of first appearance."""
    out: dict = {}
    for inj in injections:
        out.setdefault(inj.analyte, []).append(inj)
    return {name: tuple(v) for name, v in out.items()}


def check_run_calibrations(injections, *, needed: int, pooled: bool) -> None:
    """Every run whose injections are quantified has a calibration of ``needed`` levels or more.

    With ``pooled``, the calibrators of all runs together must have them.
    """
    levels: dict = {}
    first: dict = {}
    for inj in injections:
        first.setdefault(inj.run, inj)
        if inj.type == "calibrator":
            levels.setdefault("" if pooled else inj.run, set()).add(inj.level)
    if pooled:
        have = len(levels.get("", ()))
        if have < needed:
            inj = injections[0]
            raise DataError(f'analyte "{show(inj.analyte)}" has {have} calibrator level(s) over all runs; at least '
                            f"{needed} are needed for this model", file=inj.file)
        return
    for run, inj in first.items():
        have = len(levels.get(run, ()))
        if have < needed:
            raise DataError(f'run "{show(run)}" has {have} calibrator level(s) for analyte "{show(inj.analyte)}"; '
                            f"at least {needed} are needed for this model to quantify the run's injections "
                            '(or quantify with a pooled calibration: [calibration] quantify_with = "pooled")',
                            file=inj.file, row=inj.row)


def _check_sector_injections(own, cfg, pooled: bool) -> None:
    """What the sector tables that read the runs need of one analyte's injections.

    A matrix blank is compared with its own run's LLOQ: its run needs calibrators. The low_level
    injections of one sample id have one nominal level (EP17), and one spike level per analyte (MDL).
    """
    from .study import ColumnsSection, fed_by_runs

    header = (cfg.columns or ColumnsSection()).level
    calibrated = {i.run for i in own if i.type == "calibrator"}
    if fed_by_runs(cfg, "selectivity"):
        internal = (cfg.columns or ColumnsSection()).internal_standard
        for inj in own:
            if inj.type == "matrix_blank" and internal and inj.internal_standard_response is None:
                raise DataError(f'matrix blank "{show(inj.sample)}" has no internal-standard area; selectivity '
                                "compares it with the IS area of the run's lowest calibrators: write 0 when no IS "
                                "peak was found", file=inj.file, row=inj.row, column=internal.strip().lower())
            if inj.type == "matrix_blank" and inj.run not in calibrated:
                raise DataError(f'matrix blank "{show(inj.sample)}" is in run "{show(inj.run)}", which has no '
                                f'calibrator of analyte "{show(inj.analyte)}": selectivity compares it with its own '
                                "run's lowest calibrator", file=inj.file, row=inj.row, value=inj.sample)
        for run in dict.fromkeys(i.run for i in own if i.type == "matrix_blank"):
            cal = [i for i in own if i.type == "calibrator" and i.run == run]
            lowest = [i for i in cal if i.level == min(c.level for c in cal)]
            if not sum(i.analyte_response for i in lowest) > 0:
                raise DataError(f'the lowest calibrators of run "{show(run)}" have no response above zero; '
                                "selectivity compares the matrix blanks with it", file=lowest[0].file,
                                row=lowest[0].row, value=lowest[0].analyte_response)
    if fed_by_runs(cfg, "stability"):
        from .sector_names import slug
        cond = (cfg.columns or ColumnsSection()).condition
        stored = [i for i in own if i.type == "qc" and i.condition]
        seen: dict = {}
        for inj in stored:
            first = seen.setdefault(slug(inj.condition), inj)
            if first.condition != inj.condition:
                raise DataError(f'condition "{show(inj.condition)}" and "{show(first.condition)}" ({show(first.file)} '
                                f"row {first.row}) differ only in letter case or punctuation and would give one "
                                "criterion id; write it one way", file=inj.file, row=inj.row,
                                column=cond.strip().lower(), value=inj.condition)
        if cfg.stability.reference == "fresh":
            fresh = {i.level for i in stored if i.condition.casefold() == "fresh"}
            for inj in stored:
                if inj.level not in fresh:
                    raise DataError(f'reference = "fresh" but nominal {inj.level:g} has no QC of condition "fresh" '
                                    "to compare with", file=inj.file, row=inj.row, column=header, value=inj.level)
    _check_matrix_factor(own, header)
    low = [i for i in own if i.type == "low_level" and i.level is not None]
    if fed_by_runs(cfg, "limit_of_blank"):
        first: dict = {}
        for inj in low:
            f = first.setdefault(inj.sample, inj)
            if f.level != inj.level:
                raise DataError(f'low-level sample "{show(inj.sample)}" has level {inj.level:g} here and '
                                f"{f.level:g} at {show(f.file)} row {f.row}; one nominal level per sample",
                                file=inj.file, row=inj.row, column=header, value=inj.level)
    if fed_by_runs(cfg, "method_detection_limit") and low:
        for inj in low:
            if inj.level != low[0].level:
                raise DataError(f"low-level injection at level {inj.level:g}, but {show(low[0].file)} row "
                                f"{low[0].row} has {low[0].level:g}; the MDL takes one spike level per analyte",
                                file=inj.file, row=inj.row, column=header, value=inj.level)


def _level_text(level) -> str:
    return "no level" if level is None else f"level {level:g}"


def _check_matrix_factor(own, header: str) -> None:
    """The matrix factor's injections of one analyte: one level for every post_extraction injection (one
    factor per analyte, as from factor_data), and neat injections at that level to divide by."""
    spiked = [i for i in own if i.type == "post_extraction"]
    neat = [i for i in own if i.type == "neat"]
    if neat and not spiked:
        raise DataError(f'neat injection "{show(neat[0].sample)}" has no post_extraction injection of analyte '
                        f'"{show(neat[0].analyte)}" to compare with: the matrix factor divides the response in each '
                        "lot by the neat solution's", file=neat[0].file, row=neat[0].row, value=neat[0].sample)
    if not spiked:
        return
    first = spiked[0]
    for inj in spiked[1:]:
        if inj.level != first.level:
            raise DataError(f"post_extraction injection at {_level_text(inj.level)}, but {show(first.file)} row "
                            f"{first.row} is at {_level_text(first.level)}; the matrix factor takes one level per "
                            "analyte", file=inj.file, row=inj.row, column=header, value=inj.level)
    if not any(i.level == first.level for i in neat):
        have = ", ".join(dict.fromkeys(_level_text(i.level) for i in neat)) or "none"
        raise DataError(f'post_extraction injection "{show(first.sample)}" at {_level_text(first.level)} has no neat '
                        f"injection at the same level to compare with (neat injections of analyte "
                        f'"{show(first.analyte)}": {have})', file=first.file, row=first.row, column=header,
                        value=first.level)
    for inj in neat:
        if inj.level != first.level:
            raise DataError(f"neat injection at {_level_text(inj.level)}, but the post_extraction injections are at "
                            f"{_level_text(first.level)} ({show(first.file)} row {first.row}); the matrix factor "
                            "compares one level", file=inj.file, row=inj.row, column=header, value=inj.level)


@dataclass(frozen=True)
class RunsData:
    """What the run exports give each analyte before any fit: its pooled calibrators, its blanks'
    responses and its injections (``{analyte: ...}``, analytes in order of first appearance)."""

    calibration: dict
    blanks: dict
    injections: dict


def _check_sequence_kept(reader, injections, columns, types) -> None:
    """Carry-over read from the runs' sequences needs the sequence around each highest calibrator whole.

    [[exclusions]] leave a row out of the statistics, but the injection was still made: with a
    calibrator at (or above) its run's highest kept level, or a blank or zero sample, left out, the
    blank found "right after the highest calibrator" would be another one (or none), and the
    carry-over would be judged on the wrong injection. Refused, naming the row: keep the injection,
    or give [carry_over] its own data file.
    """
    type_header, level_header = _header(columns.type), _header(columns.level)
    top: dict = {}
    for i in injections:
        if i.type == "calibrator" and i.level is not None:
            top[i.file] = max(top.get(i.file, i.level), i.level)
    for e in reader.exclusions.applied:
        if e.role != "runs":
            continue
        cells = dict(e.cells)
        word = (cells.get(type_header) or cells.get("type") or "").strip()
        kind = types.type_of(word) or (word if word in INJECTION_TYPES else None)
        if kind == "calibrator":
            text = (cells.get(level_header) or cells.get("level") or "").strip()
            try:
                level = float(text.replace(",", "."))
            except ValueError:
                level = None
            if level is not None and e.file in top and level < top[e.file]:
                continue          # below the run's highest kept level: the sequence after the top is unchanged
        elif kind not in ("blank", "zero"):
            continue
        raise DataError(f"[carry_over] reads the injection sequence of the runs, and [[exclusions]] leave out a "
                        f"{kind} injection of it (exclusions[{e.index}]): the blank right after the highest "
                        "calibrator would then be another injection, or none; the injection was made, so keep it "
                        "in the sequence (remove the exclusion) or give [carry_over] its own data file",
                        file=e.file, row=e.row)


def load_runs(reader) -> RunsData:
    """Read every ``[[runs]]`` export of the study and check what the fits will need.

    The calibration of each analyte is its calibrator injections of all runs (level,
    response, the run as series), as a calibration file with a series column would give it.
    """
    import numpy as np

    from ..maths.regression import WEIGHTED_BY
    from ..characteristics.calibration.settings import CalibrationData
    from .sample_ids import check_expected, near_duplicates
    from .study import ColumnsSection, TypesSection

    cfg = reader.study.config
    injections = read_runs(reader, cfg.runs, cfg.columns or ColumnsSection(), cfg.types or TypesSection(),
                           cfg.study.id)
    pooled = cfg.calibration.quantify_with == "pooled"
    needed = 2 if cfg.calibration.through_origin else (4 if cfg.calibration.model == "quadratic" else 3)
    calibration, blanks, grouped = {}, {}, by_analyte(injections)
    for name, own in grouped.items():
        cal = [i for i in own if i.type == "calibrator"]
        if not cal:
            after = " left after [[exclusions]]" if reader.exclusions.applied else ""
            raise DataError(f'analyte "{show(name)}" has no calibrator injection in any run{after}',
                            file=own[0].file, row=own[0].row)
        check_run_calibrations(own, needed=needed, pooled=pooled)
        x = np.array([i.level for i in cal], float)
        y = np.array([i.response for i in cal], float)
        if np.unique(x).size < needed:
            raise DataError(f'analyte "{show(name)}" has {np.unique(x).size} calibrator level(s); at least '
                            f"{needed} are needed for this model", file=cal[0].file, row=cal[0].row)
        if np.ptp(y) == 0:
            raise DataError(f'every calibrator response of analyte "{show(name)}" is {y[0]:g}: the instrument '
                            "does not respond to concentration", file=cal[0].file, row=cal[0].row)
        by = WEIGHTED_BY.get(cfg.calibration.weighting)
        for i in cal:
            if (by == "concentration" and not i.level > 0) or (by == "response" and not i.response > 0):
                raise DataError(f"calibrator {show(i.sample)} cannot be weighted by {cfg.calibration.weighting} "
                                f"(its {by} is {i.level if by == 'concentration' else i.response:g}); use another "
                                "weighting or leave the injection out ([[exclusions]])", file=i.file, row=i.row)
        calibration[name] = CalibrationData(x, y, tuple(i.run for i in cal), tuple(i.row for i in cal))
        blank = [i.response for i in own if i.type in ("blank", "zero") and i.response is not None]
        if blank:
            blanks[name] = np.array(blank, float)
        samples = [i for i in own if i.type == "sample"]
        if samples and cfg.samples is not None and cfg.samples.expected:
            check_expected(analyte=name, ids=[i.sample for i in samples], rows=[i.row for i in samples],
                           file=samples[0].file, expected=tuple(cfg.samples.expected),
                           expected_readings=cfg.samples.expected_readings, study=reader.study.shown)
        elif samples:
            for file in dict.fromkeys(i.file for i in samples):      # rows are named per export
                own_file = [i for i in samples if i.file == file]
                reader.near_duplicate_ids.extend(near_duplicates(analyte=name, ids=[i.sample for i in own_file],
                                                                 rows=[i.row for i in own_file], file=file))
    for kind, table, what in (("spiked", "recovery", "its acceptance range"), ("qc", "precision", "its limits"),
                              ("reference", "reference_material", "the certified value")):
        first = next((i for i in injections if i.type == kind and not i.role), None)
        if first is not None and getattr(cfg, table) is None:
            raise DataError(f'the runs have {kind} injections (first: "{show(first.sample)}") but the study has no '
                            f"[{table}] table; add it with {what}", file=first.file, row=first.row)
    from .study import fed_by_runs
    for kind, tables in (("matrix_blank", ("selectivity",)), ("low_level", ("limit_of_blank", "method_detection_limit"))):
        first = next((i for i in injections if i.type == kind), None)
        if first is not None and not any(fed_by_runs(cfg, t) for t in tables):
            names = " or ".join(f"[{t}]" for t in tables)
            raise DataError(f'the runs have {kind} injections (first: "{show(first.sample)}") but no {names} table '
                            "takes its data from the runs; add one without a data file of its own",
                            file=first.file, row=first.row)
    internal = (cfg.columns or ColumnsSection()).internal_standard
    if internal and fed_by_runs(cfg, "limit_of_blank"):
        for own in grouped.values():
            blank = next((i for i in own if i.type == "blank"), None)
            if blank is not None and not any(i.type == "zero" for i in own):
                raise DataError(f'[limit_of_blank] reads the runs\' blank results, but analyte "{show(blank.analyte)}" '
                                f'has blank injections (first: "{show(blank.sample)}") and no zero injection: with an '
                                "internal standard a blank (neither analyte nor IS) has no ratio and is not "
                                "quantified; type blank matrix with the internal standard as zero ([types] zero)",
                                file=blank.file, row=blank.row, value=blank.sample)
    if fed_by_runs(cfg, "carry_over"):
        _check_sequence_kept(reader, injections, cfg.columns or ColumnsSection(), cfg.types or TypesSection())
    from .study import RUN_FED_PARTS, part_fed_by_runs
    for kind, (table, key) in RUN_FED_PARTS.items():
        first = next((i for i in injections if i.type == kind), None)
        if first is not None and not part_fed_by_runs(cfg, kind):
            how = (f"[{table}] names its own {key}" if getattr(cfg, table, None) is not None
                   else f"the study has no [{table}] table")
            raise DataError(f'the runs have {kind} injections (first: "{show(first.sample)}") but {how}: no table '
                            f"reads them; add [{table}] without {key} to take them from the runs",
                            file=first.file, row=first.row, value=first.sample)
    factor = [i for i in injections if i.type in ("post_extraction", "neat")]
    if factor and not internal:
        raise DataError(f'{factor[0].type} injection "{show(factor[0].sample)}": the IS-normalised matrix factor '
                        "needs the internal-standard area of each injection; map its column ([columns] "
                        "internal_standard)", file=factor[0].file, row=factor[0].row, value=factor[0].sample)
    for column, table in QC_ROLES.items():
        first = next((i for i in injections if i.role == table), None)
        if first is not None and not fed_by_runs(cfg, table):
            raise DataError(f'the runs have QC injections with a {column} (first: "{show(first.sample)}") but no '
                            f"[{table}] table takes its data from the runs; add one without a data file of its own "
                            f"(or leave the {column} column unmapped)", file=first.file, row=first.row)
    for own in grouped.values():
        _check_sector_injections(own, cfg, pooled)
        _check_low_levels(own, cfg)
    design = tuple(getattr(cfg.precision, "design", None) or ()) if cfg.precision is not None else ()
    if set(design) - {"day", "run"}:
        raise StudyError("with [[runs]], a precision design can name the factors day and run only (they come "
                         f"from the runs); got {', '.join(show(d) for d in design)}", file=reader.study.shown,
                         key="precision.design")
    if cfg.reference_material is not None and len(grouped) > 1 and cfg.reference_material.analyte is None:
        raise StudyError("the study covers several analytes; say which one the reference material certifies "
                         "(analyte = ...)", file=reader.study.shown, key="reference_material.analyte")
    return RunsData(calibration=calibration, blanks=blanks, injections=grouped)
