"""[[exclusions]]: documented data rows left out of the statistics, kept in results.json and the dossier.

The reference for "left out" is the same study with the row deleted from the file: the fit
and everything downstream must be identical (hand computation: the same numbers go in).
Messages are this project's own wording (common practice, no published source).
"""

from __future__ import annotations

import json

import openpyxl
from bs4 import BeautifulSoup

from conftest import CALIBRATION
from validator.cli import main

SAMPLES = "sample,response\nS1,5.1\nS1,5.3\nS2,9.9\n"
BODY = '[calibration]\ndata = "calibration.csv"\n[samples]\ndata = "samples.csv"\n'
EXCLUDE_ROW_4 = ('[[exclusions]]\nfile = "calibration.csv"\nrow = 4\nreason = "injection failed, see logbook"\n'
                 'who = "A. Analyst"\n')


def run(study, out, formats="json"):
    assert main(["run", str(study), "--out", str(out), "--format", formats]) == 0
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


def test_the_fit_without_an_excluded_row_equals_the_fit_on_the_data_with_the_row_deleted(
        make_study, tmp_path, outside):
    lines = CALIBRATION.splitlines(keepends=True)
    study = make_study(BODY + EXCLUDE_ROW_4, {"calibration.csv": CALIBRATION, "samples.csv": SAMPLES})
    excluded = run(study, outside / "excluded", "json,html")
    deleted_study = make_study(BODY, {"calibration.csv": "".join(lines[:3] + lines[4:]), "samples.csv": SAMPLES})
    deleted = run(deleted_study, outside / "deleted")
    a, b = excluded["analytes"][0], deleted["analytes"][0]
    assert a["calibration"] == b["calibration"]        # same data in: identical fit
    assert a["samples"] == b["samples"] and a["criteria"] == b["criteria"]
    x, y = lines[3].strip().split(",")
    assert excluded["exclusions"] == [{"file": "calibration.csv", "sheet": None, "row": 4, "role": "calibration",
                                       "reason": "injection failed, see logbook", "who": "A. Analyst",
                                       "cells": [{"column": "concentration", "value": x},
                                                 {"column": "response", "value": y}]}]
    assert deleted["exclusions"] == []
    soup = BeautifulSoup((outside / "excluded" / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    row = soup.select_one('tr[data-exclusion="0"]')
    assert "injection failed, see logbook" in row.get_text() and "A. Analyst" in row.get_text()
    assert "1, each with its reason" in soup.select_one("#cover").get_text()


def test_an_exclusion_in_a_workbook_names_the_sheet_row(make_study, tmp_path, outside):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Samples"
    ws.append(["Sample", "Response"])
    for sid, r in (("S1", 5.1), ("S1", 5.3), ("S2", 9.9)):
        ws.append([sid, r])
    wb.save(tmp_path / "samples.xlsx")
    study = make_study('[calibration]\ndata = "calibration.csv"\n[samples]\ndata = "samples.xlsx"\n'
                       '[[exclusions]]\nfile = "samples.xlsx"\nsheet = "Samples"\nrow = 3\nreason = "vial cracked"\n')
    results = run(study, outside / "o")
    assert [s["id"] for s in results["analytes"][0]["samples"]] == ["S1", "S2"]
    assert results["analytes"][0]["samples"][0]["replicates"] == 1        # S1 row 3 left out
    assert results["exclusions"][0]["sheet"] == "Samples" and results["exclusions"][0]["role"] == "samples"


def test_an_exclusion_matching_nothing_is_an_error(make_study, capsys):
    study = make_study(BODY + EXCLUDE_ROW_4.replace("row = 4", "row = 40"),
                       {"calibration.csv": CALIBRATION, "samples.csv": SAMPLES})
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err.endswith(
        "key exclusions[0]: calibration.csv has no data row 40 read by this study, so this exclusion would "
        "leave nothing out (rows are file lines: the data rows read are 2 to 11)\n")   # 10 rows below the header


def test_an_exclusion_needs_a_reason(make_study, capsys):
    study = make_study(BODY + '[[exclusions]]\nfile = "calibration.csv"\nrow = 4\nreason = " "\n',
                       {"calibration.csv": CALIBRATION, "samples.csv": SAMPLES})
    assert main(["check", str(study)]) == 2
    assert "key exclusions[0].reason: must not be blank" in capsys.readouterr().err


def test_an_injection_excluded_by_run_and_name_equals_the_same_row_excluded_by_file(tmp_path, outside):
    # the LC-MS/MS example excludes run-2.csv row 11 ("QC 1.5-2"); by run and injection name it is the same point
    import shutil

    from conftest import REPO

    example = REPO / "example_studies" / "marbofloxacin-milk-runs"
    for name in ("run-1.xlsx", "run-2.csv", "run-3.csv", "study.toml"):
        shutil.copy(example / name, tmp_path / name)
    text = (tmp_path / "study.toml").read_text(encoding="utf-8")
    assert 'file = "run-2.csv"\nrow = 11\n' in text
    (tmp_path / "study.toml").write_text(text.replace('file = "run-2.csv"\nrow = 11\n',
                                                      'run = "run-2"\ninjection = "QC 1.5-2"\n'), encoding="utf-8")
    by_name = run(tmp_path / "study.toml", outside / "name")
    by_row = run(example / "study.toml", outside / "row")
    assert by_name["analytes"] == by_row["analytes"]
    assert by_name["exclusions"][0]["row"] == 11 and by_name["exclusions"][0]["file"] == "run-2.csv"


def test_an_injection_name_matching_two_injections_is_refused(tmp_path, capsys):
    import shutil

    from conftest import REPO

    example = REPO / "example_studies" / "marbofloxacin-milk-runs"
    for name in ("run-1.xlsx", "run-2.csv", "run-3.csv", "study.toml"):
        shutil.copy(example / name, tmp_path / name)
    text = (tmp_path / "study.toml").read_text(encoding="utf-8")
    (tmp_path / "study.toml").write_text(text.replace('file = "run-2.csv"\nrow = 11\n',
                                                      'run = "run-2"\ninjection = "Milk A"\n'), encoding="utf-8")
    assert main(["check", str(tmp_path / "study.toml")]) == 2
    assert 'run "run-2" has 2 injections named "Milk A"' in capsys.readouterr().err
