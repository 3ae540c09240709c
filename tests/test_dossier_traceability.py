"""Appendices A and B of the dossier: every calibrator and injection traced to the file and row it was
read from, with its recorded values as recorded (QA review of the example dossiers).

Expected values are the example studies' own CSV text, read here with the csv module.
"""

import csv
import json

import pytest
from bs4 import BeautifulSoup

from conftest import REPO
from validator.cli import main

PLASMA = REPO / "example_studies" / "plasma-lcms-bioanalytical"
ANIONS = REPO / "example_studies" / "anions-drinking-water"


def _run(study, out):
    assert main(["run", str(study), "--out", str(out), "--format", "html,json"]) == 0
    return (json.loads((out / "results.json").read_text()),
            BeautifulSoup((out / "dossier.html").read_text(encoding="utf-8"), "html.parser"))


def _csv_rows(path):
    """{file row (CSV line, header = 1): {column: cell as written}}."""
    with path.open(newline="", encoding="utf-8") as f:
        reader = csv.reader(f)
        header = next(reader)
        return {line: dict(zip(header, cells)) for line, cells in enumerate(reader, start=2)}


@pytest.fixture(scope="module")
def plasma(tmp_path_factory):
    return _run(PLASMA / "study.toml", tmp_path_factory.mktemp("plasma") / "out")


@pytest.fixture(scope="module")
def anions(tmp_path_factory):
    return _run(ANIONS / "study.toml", tmp_path_factory.mktemp("anions") / "out")


def _appendix_a_rows(soup, index):
    table = soup.select_one(f"#calibration-data-{index} table.calibration-data")
    header = [th.get_text(" ", strip=True) for th in table.select("thead th")]
    return header, [[td.get_text(" ", strip=True) for td in tr.find_all("td")] for tr in table.select("tbody tr")]


def test_calibrators_of_several_run_exports_name_their_run_file_and_row(plasma):
    results, soup = plasma
    appendix = soup.select_one("#calibration-data-0")
    text = appendix.get_text(" ")
    assert "None" not in text          # the file is named, never a missing value
    for name in ("run-1.csv", "run-2.csv", "run-3.csv"):
        assert name in appendix.select_one("p.calibrator-sources").get_text()
    header, rows = _appendix_a_rows(soup, 0)
    assert header[:4] == ["Point", "Run", "File", "Row"]
    back = results["analytes"][0]["calibration"]["back_calculated"]
    assert len(rows) == len(back) == 24
    places = [(r[1], r[2], int(r[3])) for r in rows]
    assert len(set(places)) == 24         # the 24 calibrators of 3 runs told apart
    exports = {f"run-{k}.csv": _csv_rows(PLASMA / f"run-{k}.csv") for k in (1, 2, 3)}
    for (run, file, row), b in zip(places, back):
        assert file == f"{run}.csv"       # the study file: [[runs]] data = "run-k.csv", run = "run-k"
        record = exports[file][row]       # that line of the export is this calibrator
        assert record["Type"] == "Cal"
        assert float(record["Level"]) == b["nominal"]
        # the response is the area ratio computed from the two areas of that line
        assert float(record["Area"]) / float(record["IS Area"]) == pytest.approx(b["response"], rel=1e-12)


def test_single_calibration_file_is_named_and_values_are_printed_as_recorded(anions):
    results, soup = anions
    calibration = _csv_rows(ANIONS / "calibration.csv")
    checked = 0
    for i, a in enumerate(results["analytes"]):
        sentence = soup.select_one(f"#calibration-data-{i} p.calibrator-sources").get_text(" ")
        assert "calibration.csv" in sentence and "None" not in sentence
        header, rows = _appendix_a_rows(soup, i)
        assert header[1] == "File row"
        for cells in rows:
            record = calibration[int(cells[1])]
            assert record["analyte"] == a["name"]
            # as recorded: the same number as the file's text, not rounded to 4 significant figures
            assert float(cells[2]) == float(record["concentration"])
            assert float(cells[3]) == float(record["response"])
            checked += 1
    assert checked == sum(len(a["calibration"]["back_calculated"]) for a in results["analytes"])
    # the QA finding: 0.18097 (calibration.csv row 6) was printed 0.181
    _, rows = _appendix_a_rows(soup, 0)
    assert [r[3] for r in rows if r[1] == "6"] == ["0.18097"]
