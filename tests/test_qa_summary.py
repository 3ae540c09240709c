"""The summary (pages 1-2) says what a QA reviewer signs for: excluded rows among the deviations,
the precision the criteria judge, the range actually demonstrated, ranges resting on failed
calibration criteria not called validated, characteristics a guideline preset requires but the
study does not show, and the remarks the criteria table only hints at."""

import json

from bs4 import BeautifulSoup

from conftest import CALIBRATION
from validator.cli import main

RECOVERY = ("added,found,series\n" + "".join(f"{lv},{lv * f},s{k}\n" for lv in (2, 8) for k, f in
                                              enumerate((0.98, 1.01, 0.99, 1.03, 0.97))))


def _run(study, out, expect=None):
    code = main(["run", str(study), "--out", str(out), "--format", "html,json"])
    if expect is not None:
        assert code == expect
    return (json.loads((out / "results.json").read_text()),
            BeautifulSoup((out / "dossier.html").read_text(), "html.parser"))


def test_excluded_rows_are_listed_among_the_deviations(make_study, outside):
    study = make_study('[calibration]\ndata = "calibration.csv"\n[recovery]\ndata = "recovery.csv"\n'
                       '[[exclusions]]\nfile = "recovery.csv"\nrow = 4\nreason = "vial cracked, see logbook"\n'
                       '[[exclusions]]\nfile = "calibration.csv"\nrow = 3\nreason = "injection error"\n',
                       files={"calibration.csv": CALIBRATION, "recovery.csv": RECOVERY})
    results, soup = _run(study, outside / "out")
    assert len(results["exclusions"]) == 2
    item = soup.select_one("#deviations + ul #excluded-rows").get_text(" ")
    assert "2 data row(s) excluded" in item
    assert "recovery.csv" in item and "row 4" in item and "vial cracked, see logbook" in item
    assert "calibration.csv" in item and "row 3" in item and "injection error" in item


def test_no_exclusion_is_said_among_the_deviations(make_study, outside):
    _, soup = _run(make_study(), outside / "out")
    assert "No data row excluded" in soup.select_one("#excluded-rows").get_text(" ")
