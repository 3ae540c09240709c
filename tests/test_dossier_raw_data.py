"""Appendix B of the dossier: every data row the statistics read, traced to its file and row.

The rows come from results.json (``analytes[].data_rows``), and results.json's rows come from the
input files: rows picked at random (seeded) from each input file are found, cell for cell, in both.
"""

import csv
import json
import random

import pytest
from bs4 import BeautifulSoup

from conftest import REPO
from validator.cli import main

DEMO = REPO / "example_studies" / "anions-drinking-water"


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("raw") / "out"
    assert main(["run", str(DEMO / "study.toml"), "--out", str(out), "--format", "html,json"]) == 0
    return json.loads((out / "results.json").read_text()), BeautifulSoup((out / "dossier.html").read_text(), "html.parser")


def _file_rows(path):
    """{file row (line, header = 1): {column: cell}} of a CSV file, as written."""
    with path.open(newline="", encoding="utf-8") as f:
        reader = csv.reader(f)
        header = [h.strip().lower() for h in next(reader)]
        return {line: dict(zip(header, cells)) for line, cells in enumerate(reader, start=2)}


def _appendix_row(soup, analyte_index, group_index, row):
    group = soup.select_one(f'#raw-data-{analyte_index} [data-src="analytes.{analyte_index}.data_rows.{group_index}"]')
    assert group is not None
    rows = group.select(f'tr[data-row="{row}"]')
    assert len(rows) == 1
    return [td.get_text() for td in rows[0].find_all("td")]


def test_every_input_row_is_in_results_json_and_the_appendix(demo):
    results, soup = demo
    rng = random.Random(20260714)       # seeded: the same rows on every run
    groups = {(g["file"], a["name"]): (i, j, g) for i, a in enumerate(results["analytes"])
              for j, g in enumerate(a["data_rows"])}
    files = {g["file"] for a in results["analytes"] for g in a["data_rows"]}
    # every data file of the study but the study file itself is listed
    assert files == {f["path"] for f in results["inputs"] if f["role"] != "study"}
    for name in sorted(files):
        rows = _file_rows(DEMO / name)
        for line in rng.sample(sorted(rows), min(5, len(rows))):
            record = rows[line]
            analyte = record.get("analyte", "nitrate")    # crm.csv: [reference_material] analyte = "nitrate"
            i, j, group = groups[(name, analyte)]
            written = {r["row"]: r for r in group["rows"]}
            assert [written[line]["values"][group["columns"].index(c)] for c in group["columns"]] == \
                [record[c] for c in group["columns"]]
            if group["role"] == "calibration":
                # calibrators: appendix A lists each with its file row
                table = soup.select_one(f"#calibration-data-{i} table.calibration-data")
                assert str(line) in [tr.find_all("td")[1].get_text() for tr in table.select("tbody tr")]
                continue
            shown = _appendix_row(soup, i, j, line)
            assert shown[0] == str(line)
            assert shown[1:-1] == [record[c] for c in group["columns"] if c != "analyte"]
            assert shown[-1] == ""          # not excluded


def test_row_counts_match_the_statistics(demo):
    results, _ = demo
    for a in results["analytes"]:
        by_role = {g["role"]: g for g in a["data_rows"]}
        assert len(by_role["calibration"]["rows"]) == a["calibration"]["n"]
        assert len(by_role["recovery"]["rows"]) == sum(lv["n"] for lv in a["recovery"]["levels"])
        assert len(by_role["precision"]["rows"]) == sum(lv["n"] for lv in a["precision"]["levels"])
        if a["reference_material"]:
            assert len(by_role["reference_material"]["rows"]) == a["reference_material"]["n"]


RECOVERY = ("added,found,series\n" + "".join(f"{lv},{lv * f},s{k}\n" for lv in (2, 8) for k, f in
                                              enumerate((0.98, 1.01, 0.99, 1.03, 0.97))))


def test_excluded_rows_are_listed_with_their_reason(make_study, outside):
    study = make_study('[calibration]\ndata = "calibration.csv"\n[recovery]\ndata = "recovery.csv"\n'
                       '[[exclusions]]\nfile = "recovery.csv"\nrow = 4\nreason = "vial cracked, see logbook"\n',
                       files={"calibration.csv": __import__("conftest").CALIBRATION, "recovery.csv": RECOVERY})
    out = outside / "out"
    assert main(["run", str(study), "--out", str(out), "--format", "html,json"]) == 0
    results = json.loads((out / "results.json").read_text())
    (analyte,) = results["analytes"]
    group = next(g for g in analyte["data_rows"] if g["role"] == "recovery")
    rows = {r["row"]: r for r in group["rows"]}
    assert sorted(rows) == list(range(2, 12))           # 10 results, header = row 1
    line_4 = _file_rows(study.parent / "recovery.csv")[4]       # the record as written in the file
    assert rows[4] == {"row": 4, "values": [line_4[c] for c in group["columns"]], "excluded": "vial cracked, see logbook"}
    assert not any("excluded" in r for line, r in rows.items() if line != 4)
    assert analyte["recovery"]["levels"][0]["n"] == 4    # the excluded row is in no statistic
    soup = BeautifulSoup((out / "dossier.html").read_text(), "html.parser")
    j = analyte["data_rows"].index(group)
    tr = soup.select_one(f'#raw-data-0 [data-src="analytes.0.data_rows.{j}"] tr[data-row="4"]')
    assert "excluded" in tr["class"]
    assert tr.find_all("td")[-1].get_text() == "vial cracked, see logbook"


def test_excluded_run_injection_is_listed(tmp_path_factory):
    out = tmp_path_factory.mktemp("runs") / "out"
    study = REPO / "example_studies" / "marbofloxacin-milk-runs" / "study.toml"
    assert main(["run", str(study), "--out", str(out), "--format", "html,json"]) == 0
    soup = BeautifulSoup((out / "dossier.html").read_text(), "html.parser")
    excluded = soup.select("#raw-data-0 tr.excluded")
    assert [tr.find_all("td")[1].get_text() for tr in excluded] == ["11"]     # run-2.csv row 11 (study file)
    assert "autosampler needle blockage" in excluded[0].get_text()
    # every injection the statistics used is listed with its file and row
    results = json.loads((out / "results.json").read_text())
    shown = soup.select("#raw-data-0 tr[data-injection]")
    assert len(shown) == len(results["analytes"][0]["runs"]["injections"])


def test_a_calibrator_outside_its_tolerance_is_named_by_its_file_row(make_study, outside):
    # two calibrators at the same level (duplicates), the second of them 40 % high: it is named by its
    # point and file row, not by its level alone
    lines = ["concentration,response"] + [f"{x},{2.0 * x * f:.6g}" for x, f in
                                          [(1, 1.0), (1, 1.4), (2, 1.0), (2, 1.01), (4, 0.99), (4, 1.0),
                                           (8, 1.0), (8, 1.01), (16, 1.0), (16, 0.99)]]
    study = make_study(files={"calibration.csv": "\n".join(lines) + "\n"})
    out = outside / "out"
    assert main(["run", str(study), "--out", str(out), "--format", "html,json"]) == 0
    results = json.loads((out / "results.json").read_text())
    back = results["analytes"][0]["calibration"]["back_calculated"]
    failing = [k for k, b in enumerate(back) if b["pass"] is False]
    assert 1 in failing                      # the 40 % high one (file row 3) fails whatever the fit
    soup = BeautifulSoup((out / "dossier.html").read_text(), "html.parser")
    text = soup.select_one("#back-calculation-failures-0").get_text(" ", strip=True)
    assert "point 2 (calibration.csv row 3" in text
    assert text.count("point ") == len(failing)
