"""Documented exclusions: data rows left out of the statistics, with the reason, never deleted.

A study lists each exclusion as an ``[[exclusions]]`` table naming the data file (and, for a
workbook, the sheet), the row (the line number in a CSV file, header = row 1; the sheet row in a
workbook: the numbers every message uses) and the reason, optionally who decided it. The file
itself stays as the instrument or analyst wrote it, so its SHA-256 in the audit trail still
matches; the row is removed from the table before any statistic sees it, and the excluded
record (its cells as written) is kept for results.json and the dossier.

An exclusion that matches no data row is an error: a typo in a row number must not leave a
point in the fit that the study says is out, nor pass unnoticed.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from pathlib import Path

from ..errors import DataError, StudyError, show

__all__ = ["Excluded", "Exclusions"]


@dataclass(frozen=True)
class Excluded:
    """One data row left out, as the study documents it.

    Attributes
    ----------
    index : int
        The entry's position in the study's ``[[exclusions]]`` list (0-based).
    file, sheet : str, str or None
        The data file as written in the study, and the sheet of a workbook.
    row : int
        The file row (CSV line, header = row 1) or sheet row.
    role : str
        What the file feeds ("calibration", "samples", "recovery", ...).
    reason, who : str
        As written in the study (``who`` may be empty).
    cells : tuple of (column, value)
        The excluded record as written in the file.
    analyte : str or None
        The analyte a run export's row concerns (its analyte column, else the study's one analyte);
        ``None`` for the rows of other files (their analyte is in the raw data's tables).
    """

    index: int
    file: str
    sheet: str | None
    row: int
    role: str
    reason: str
    who: str
    cells: tuple[tuple[str, str], ...]
    analyte: str | None = None


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve()
    except OSError:
        return a == b


class Exclusions:
    """The study's ``[[exclusions]]``, applied to each table as it is read.

    Parameters
    ----------
    entries : sequence
        The validated ``[[exclusions]]`` tables (``file``, ``sheet``, ``row``, ``reason``, ``who``).
    resolve : callable
        Turns a data path from the study into a file path (relative to the study's folder).
    study : str
        The study file as given, for messages.
    text : str
        The study file's text, for the line of an entry in messages ("" when unknown).
    """

    def __init__(self, entries, resolve, study: str, text: str = ""):
        self.entries = tuple(entries)
        self.resolve = resolve
        self.study = study
        self.text = text
        self.applied: list[Excluded] = []
        self._sheets: dict[int, set] = {}
        self._read: list = []            # (resolved file, sheet, header row or None, first and last data row)

    def _line(self, i: int) -> int | None:
        from .study import item_line
        return item_line(self.text, "exclusions", i) if self.text else None

    def _rows_read(self, e) -> str:
        """Which rows of the entry's file were read: the numbers an exclusion's ``row`` is one of."""
        read = [r for r in self._read if _same_file(self.resolve(e.file), r[0]) and e.sheet in (None, r[1])]
        if not read:
            return ("this study reads no data from it" if not any(_same_file(self.resolve(e.file), r[0])
                                                                  for r in self._read)
                    else f"this study reads no sheet {show(e.sheet)} from it")
        parts = []
        for _, sheet, header, first, last in read:
            if sheet is None:
                parts.append(f"rows are file lines: the data rows read are {first} to {last}")
            else:
                parts.append(f"rows are sheet rows: sheet {show(sheet)} has its header at row {header} and data "
                             f"rows {first} to {last}")
        return "; ".join(dict.fromkeys(parts))

    def apply(self, role: str, path: str, resolved: Path, table):
        """``table`` without the rows the study excludes (the same table when none)."""
        sheet = getattr(table, "sheet", None) or None
        if table.rows:
            self._read.append((resolved, sheet, getattr(table, "header_row", None), table.rows[0], table.rows[-1]))
        drop = {}
        for i, e in enumerate(self.entries):
            if e.file is None:              # by run and injection: see apply_injections
                continue
            if not _same_file(self.resolve(e.file), resolved):
                continue
            if e.sheet is not None and e.sheet != sheet:
                continue
            if e.row not in table.rows:
                continue
            if e.row in drop:
                raise StudyError(f"excludes {show(e.file)} row {e.row} again (also exclusions[{drop[e.row]}]); "
                                 "give each excluded row once", file=self.study, line=self._line(i),
                                 key=f"exclusions[{i}].row", value=e.row)
            drop[e.row] = i
            self._sheets.setdefault(i, set()).add(sheet)
        if not drop:
            return table
        keep = [k for k, r in enumerate(table.rows) if r not in drop]
        for k, r in enumerate(table.rows):
            if r in drop:
                e = self.entries[drop[r]]
                self.applied.append(Excluded(index=drop[r], file=e.file, sheet=sheet, row=r, role=role,
                                             reason=e.reason, who=e.who,
                                             cells=tuple((name, values[k]) for name, values in table.columns.items())))
        if not keep:
            raise DataError("every data row is excluded in [[exclusions]]; nothing is left to analyse",
                            file=path)
        changes = {"columns": {n: [v[k] for k in keep] for n, v in table.columns.items()},
                   "rows": tuple(table.rows[k] for k in keep)}
        if hasattr(table, "kinds"):
            changes["kinds"] = {n: tuple(v[k] for k in keep) for n, v in table.kinds.items()}
        return dataclasses.replace(table, **changes)

    def name_analytes(self, start: int, analyte_of) -> None:
        """Say which analyte each row left out since ``applied[start]`` concerns: ``analyte_of(cells)``,
        ``cells`` the row as ``{column: value}`` (a run export's row names its analyte, or the study has one)."""
        self.applied[start:] = [dataclasses.replace(e, analyte=analyte_of(dict(e.cells)))
                                for e in self.applied[start:]]

    def refuse_emptied(self, role: str, column: str, kept, what: str) -> None:
        """Refuse a value of ``column`` (an analyte) whose every row of the ``role`` file is excluded.

        ``kept``: the values still in the table. Without this, the value would vanish from the
        file and a later message would say it "is not in the data" although its rows are there.
        """
        emptied: dict = {}
        for e in self.applied:
            name = dict(e.cells).get(column, "").strip()
            if e.role == role and name and name not in kept:
                emptied.setdefault(name, []).append(e)
        if not emptied:
            return
        name, rows = next(iter(emptied.items()))
        listed = ", ".join(f"exclusions[{e.index}]" for e in rows[:5]) + (", ..." if len(rows) > 5 else "")
        raise StudyError(f'every {what} row of {column} "{show(name)}" in {show(rows[0].file)} is excluded '
                         f"({len(rows)} row(s): {listed}), so nothing is left of it; keep the rows it needs, or "
                         f"leave {show(name)} out of the data", file=self.study, line=self._line(rows[0].index),
                         key=f"exclusions[{rows[0].index}]", value=name)

    def apply_injections(self, injections, excluded_by_row: dict | None = None) -> tuple:
        """``injections`` without those the study excludes by run and injection name (one each).

        ``excluded_by_row``: ``{(run, injection name): Excluded}`` of the rows already left out by
        file and row, so that excluding one of them again by run and name is said to be a repeat.
        """
        keep = list(injections)
        for i, e in enumerate(self.entries):
            if e.run is None:
                continue
            hits = [inj for inj in keep if inj.run == e.run and inj.sample == e.injection]
            earlier = (excluded_by_row or {}).get((e.run, e.injection))
            if not hits and earlier is not None:
                where = f"{show(earlier.file)}" + (f", sheet {show(earlier.sheet)}" if earlier.sheet else "")
                raise StudyError(f'injection "{show(e.injection)}" of run "{show(e.run)}" ({where} row '
                                 f"{earlier.row}) is already excluded by exclusions[{earlier.index}]; give each "
                                 "excluded row once",
                                 file=self.study, line=self._line(i), key=f"exclusions[{i}]", value=e.injection)
            if len(hits) > 1:
                rows = ", ".join(f"{show(h.file)} row {h.row}" for h in hits[:5])
                raise StudyError(f'run "{show(e.run)}" has {len(hits)} injections named "{show(e.injection)}" '
                                 f"({rows}); exclude one by file and row instead", file=self.study,
                                 line=self._line(i), key=f"exclusions[{i}]", value=e.injection)
            if not hits:
                continue
            inj = hits[0]
            keep.remove(inj)
            self._sheets.setdefault(i, set()).add(inj.sheet)
            cells = (("run", inj.run), ("injection", inj.sample), ("type", inj.type),
                     ("level", "" if inj.level is None else repr(inj.level)),
                     ("response", repr(inj.analyte_response)))
            if inj.internal_standard_response is not None:
                cells += (("internal standard", repr(inj.internal_standard_response)),)
            self.applied.append(Excluded(index=i, file=inj.file, sheet=inj.sheet, row=inj.row, role="runs",
                                         reason=e.reason, who=e.who, cells=cells, analyte=inj.analyte))
        return tuple(keep)

    def check(self) -> tuple[Excluded, ...]:
        """Every exclusion matched exactly one row; the rows left out, in the study's order."""
        for i, e in enumerate(self.entries):
            sheets = self._sheets.get(i)
            if not sheets and e.run is not None:
                raise StudyError(f'run "{show(e.run)}" has no injection "{show(e.injection)}", so this exclusion '
                                 "would leave nothing out", file=self.study, line=self._line(i),
                                 key=f"exclusions[{i}]", value=e.injection)
            if not sheets:
                where = f", sheet {show(e.sheet)}" if e.sheet is not None else ""
                raise StudyError(f"{show(e.file)}{where} has no data row {e.row} read by this study, so this "
                                 f"exclusion would leave nothing out ({self._rows_read(e)})", file=self.study,
                                 line=self._line(i), key=f"exclusions[{i}]", value=e.row)
            if len(sheets) > 1:
                raise StudyError(f"{show(e.file)} row {e.row} is a data row in sheets "
                                 + ", ".join(sorted(show(s) for s in sheets))
                                 + "; give sheet = ... to say which one is excluded",
                                 file=self.study, line=self._line(i), key=f"exclusions[{i}]", value=e.row)
        return tuple(sorted(self.applied, key=lambda x: x.index))
