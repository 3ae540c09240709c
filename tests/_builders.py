"""Builders shared by the tests that read ``[[runs]]`` exports (tests/test_sector_runs.py,
tests/test_sector_runs_matrix.py, tests/test_hostile_findings4.py).

The study's head mapping the exports' columns, the study naming one ``[[runs]]`` table per export,
results.json of ``validator run``, the same design given as the characteristics' own files, and the
comparison of two results to 1e-12. The data themselves stay in each test file (invented for the tests).
"""

from __future__ import annotations

import json
from pathlib import Path

from validator.cli import main

# the exports' headers the runs' tests map: Sample, Type, Level, Area (more columns are added after these)
RUN_COLUMNS = '[columns]\nsample = "Sample"\ntype = "Type"\nlevel = "Level"\nresponse = "Area"\n'
# the internal standard's area and the matrix lot, the columns the sector tests add
IS_AND_LOT = 'internal_standard = "IS Area"\nlot = "Lot"\n'
# the calibration file of a study given as the characteristics' own files
FILE_CALIBRATION = "concentration,response\n1,1\n2,2.1\n5,4.9\n10,10.1\n"


def runs_head(study_id: str, title: str, types: str, *, columns: str = IS_AND_LOT) -> str:
    """A study's tables before its ``[[runs]]``: [study] (ng/mL, area ratio), a straight unweighted
    [calibration], [columns] (:data:`RUN_COLUMNS` and ``columns``) and [types] (``types``, TOML lines)."""
    return (f'[study]\nid = "{study_id}"\ntitle = "{title}"\nconcentration_unit = "ng/mL"\n'
            'response_unit = "area ratio"\n\n[calibration]\nmodel = "linear"\nweighting = "none"\n\n'
            + RUN_COLUMNS + columns + "\n[types]\n" + types)


def runs_tables(names) -> str:
    """One ``[[runs]]`` table per export, its run named after the file ("run-1.csv": run "run-1")."""
    return "".join(f'\n[[runs]]\ndata = "{name}"\nrun = "{name[:-4]}"\n' for name in names)


def write_runs(folder: Path, runs: dict, *, head: str, sectors: str) -> Path:
    """Write the exports (``{file name: CSV text}``) into ``folder`` and the study reading them: ``head``,
    a ``[[runs]]`` table per export, then ``sectors``; returns the study's path."""
    for name, text in runs.items():
        (folder / name).write_text(text, encoding="utf-8")
    study = folder / "study.toml"
    study.write_text(head + runs_tables(runs) + sectors, encoding="utf-8")
    return study


def write_own_files(folder: Path, study_id: str, tables: str, files: dict, *, calibration: str = FILE_CALIBRATION,
                    response_unit: str = "area", calibration_keys: str = "") -> Path:
    """The same design given as the characteristics' own files: ``files`` (``{file name: CSV text}``), the
    calibration file and a study with [calibration] (``calibration_keys`` added) and ``tables``; returns its path."""
    for name, text in {**files, "calibration.csv": calibration}.items():
        (folder / name).write_text(text, encoding="utf-8")
    study = folder / "study.toml"
    study.write_text(f'[study]\nid = "{study_id}"\ntitle = "t"\nconcentration_unit = "ng/mL"\n'
                     f'response_unit = "{response_unit}"\n[calibration]\ndata = "calibration.csv"\n'
                     + calibration_keys + tables, encoding="utf-8")
    return study


def run_json(study: Path, outside: Path, name: str = "out") -> dict:
    """results.json of ``validator run STUDY --format json`` into ``outside / name`` (PASS or FAIL)."""
    out = outside / name
    assert main(["run", str(study), "--out", str(out), "--format", "json"]) in (0, 1)
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


def analyte(results: dict) -> dict:
    """The first (the only) analyte's entry of results.json."""
    return results["analytes"][0]


def close(x, y) -> bool:
    """Two results.json values equal: the same keys and items, floats to a relative 1e-12."""
    if isinstance(x, dict):
        return x.keys() == y.keys() and all(close(x[k], y[k]) for k in x)
    if isinstance(x, list):
        return len(x) == len(y) and all(close(a, b) for a, b in zip(x, y))
    if isinstance(x, float) and isinstance(y, (int, float)):
        return abs(x - y) <= 1e-12 * max(abs(x), abs(y), 1e-300)
    return x == y
