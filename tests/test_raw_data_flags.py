"""Flagged precision results and run-export exclusions in the dossier and results.json (issue #14 item 6).

A flagged precision result is named by the file, sheet and row it was read from, in results.json
(``precision.levels[].flagged_results[]``), in the precision section and among the raw data
(appendix B). A run export's excluded row is listed once, under the analyte it concerns. The input
data are invented; the expected rows are known by construction (where the outlier was planted,
which row was excluded), not computed.
"""

from __future__ import annotations

import json

import openpyxl
from bs4 import BeautifulSoup

from validator.cli import main

HEAD = '[study]\nid = "T-1"\ntitle = "Test"\nconcentration_unit = "mg/L"\nresponse_unit = "area"\n'
CALIBRATION = "concentration,response\n" + "".join(
    f"{x},{2 * x + d}\n" for x, d in [(1, 0.01), (1, -0.01), (2, 0.0), (2, 0.01), (4, -0.01), (4, 0.0),
                                      (8, 0.01), (8, -0.01), (16, 0.0), (16, 0.01)])
# level 5: four series of four results; the third result of series d3 (file row 12: header row 1, then
# d1 rows 2-5, d2 rows 6-9, d3 rows 10-13) is planted 12 % high
SERIES = {"d1": [5.01, 4.98, 5.02, 5.00], "d2": [5.03, 4.99, 5.01, 5.02], "d3": [4.97, 5.00, 5.60, 4.99],
          "d4": [5.00, 5.02, 4.98, 5.01]}
PLANTED_ROW = 12


def _run(study, out):
    assert main(["run", str(study), "--out", str(out), "--format", "html,json"]) == 0
    return (json.loads((out / "results.json").read_text(encoding="utf-8")),
            BeautifulSoup((out / "dossier.html").read_text(encoding="utf-8"), "html.parser"))


def _precision_study(folder, workbook: bool = False):
    (folder / "calibration.csv").write_text(CALIBRATION, encoding="utf-8")
    records = [(5, s, v) for s, values in SERIES.items() for v in values]
    if workbook:
        wb = openpyxl.Workbook()
        ws = wb.active
        ws.title = "Repeats"
        ws.append(["level", "series", "found"])
        for r in records:
            ws.append(list(r))
        wb.save(folder / "precision.xlsx")
        source = 'data = "precision.xlsx"\nsheet = "Repeats"\n'
    else:
        (folder / "precision.csv").write_text("level,series,found\n" + "".join(f"{a},{b},{c}\n" for a, b, c in records),
                                              encoding="utf-8")
        source = 'data = "precision.csv"\n'
    study = folder / "study.toml"
    study.write_text(HEAD + '[calibration]\ndata = "calibration.csv"\n[precision]\n' + source
                     + "repeatability_rsd_max_pct = 20\n", encoding="utf-8")
    return study


def test_a_planted_precision_outlier_is_named_by_its_file_row(tmp_path, outside):
    results, soup = _run(_precision_study(tmp_path), outside / "o")
    level = results["analytes"][0]["precision"]["levels"][0]
    within = [f for f in level["flagged_results"] if "grubbs_within_series" in f["tests"]]
    # by construction: the planted result, and only it, is flagged within its series
    assert within == [{"value": 5.6, "series": "d3", "tests": within[0]["tests"],
                       "source": {"file": "precision.csv", "row": PLANTED_ROW}}]
    # every flagging test has p below alpha, and a series test flags every row of its series
    tests = {"cochran": level["cochran"], "grubbs": level["grubbs"], "grubbs_double": level["grubbs_double"]}
    for f in level["flagged_results"]:
        for t in f["tests"]:
            if t != "grubbs_within_series":
                assert tests[t]["p_value"] < 0.05 and f["series"] in tests[t]["suspect"]
    first_rows = {"d1": 2, "d2": 6, "d3": 10, "d4": 14}       # file rows of each series, by construction
    for f in level["flagged_results"]:
        assert first_rows[f["series"]] <= f["source"]["row"] < first_rows[f["series"]] + 4
    # the precision section names it by file and row
    table = soup.select_one("table.precision-flagged")
    row = table.select_one(f'tr[data-row="{PLANTED_ROW}"]')
    assert row is not None and "precision.csv, row 12" in row.get_text("", strip=True)
    assert "Grubbs' test within a series" in row.get_text()
    assert "result 5.6 (precision.csv row 12) in series d3" in soup.get_text(" ")
    # appendix B marks the row, and only the flagged rows
    group = soup.select_one('#raw-data-0 [data-src="analytes.0.data_rows.1"]')
    assert group.select_one(f'tr[data-row="{PLANTED_ROW}"]')["class"] == ["flagged"]
    marked = {int(m["data-flagged"]) for m in group.select("[data-flagged]")}
    assert marked == {f["source"]["row"] for f in level["flagged_results"]}
    assert "Grubbs' test within a series" in group.select_one(f'[data-flagged="{PLANTED_ROW}"]').get_text()


def test_a_flagged_result_in_a_workbook_names_its_sheet_and_row(tmp_path, outside):
    results, soup = _run(_precision_study(tmp_path, workbook=True), outside / "o")
    level = results["analytes"][0]["precision"]["levels"][0]
    planted = next(f for f in level["flagged_results"] if "grubbs_within_series" in f["tests"])
    # sheet rows: header on row 1, so the same row numbers as the CSV file
    assert planted["source"] == {"file": "precision.xlsx", "sheet": "Repeats", "row": PLANTED_ROW}
    row = soup.select_one(f'table.precision-flagged tr[data-row="{PLANTED_ROW}"]')
    assert "precision.xlsx, sheet Repeats, row 12" in row.get_text("", strip=True)


def _two_analyte_runs(folder):
    """Two run exports, each with analytes A and B (one row per analyte and injection); the QCs of A in
    run-2 hold a planted outlier (file row 8); two rows excluded: run-1.csv row 8 (a QC of A) and
    run-2.csv row 17 (a QC of B)."""
    rows = {"run-1": [], "run-2": []}
    for run, k in (("run-1", 1.0), ("run-2", 1.02)):
        for analyte, slope in (("A", 2.0), ("B", 3.0)):
            for x in (1, 2, 5, 10, 20):
                rows[run].append((f"C{x}", "calibrator", x, round(slope * k * x * (1 + 0.003 * ((x % 3) - 1)), 6),
                                  analyte))
            factors = [1.01, 0.99, 1.0, 1.005]
            if run == "run-2" and analyte == "A":
                factors[1] = 1.4
            for j, f in enumerate(factors):
                rows[run].append((f"Q{j}", "qc", 5, round(slope * k * 5 * f, 6), analyte))
    for run, records in rows.items():
        (folder / f"{run}.csv").write_text("sample,type,level,response,compound\n" + "".join(
            ",".join(map(str, r)) + "\n" for r in records), encoding="utf-8")
    study = folder / "study.toml"
    study.write_text(HEAD + '[calibration]\nmodel = "linear"\n[[runs]]\ndata = "run-1.csv"\nrun = "run-1"\n'
                     '[[runs]]\ndata = "run-2.csv"\nrun = "run-2"\n[columns]\nanalyte = "compound"\n'
                     "[precision]\nrepeatability_rsd_max_pct = 50\n"
                     '[[exclusions]]\nfile = "run-1.csv"\nrow = 8\nreason = "QC of A: vial cracked"\n'
                     '[[exclusions]]\nfile = "run-2.csv"\nrow = 17\nreason = "QC of B: injection failed"\n',
                     encoding="utf-8")
    return study


def test_each_run_export_exclusion_is_listed_once_under_its_analyte(tmp_path, outside):
    results, soup = _run(_two_analyte_runs(tmp_path), outside / "o")
    # by construction: run-1.csv row 8 is a QC of A, run-2.csv row 17 a QC of B
    assert [(e["file"], e["row"], e["analyte"]) for e in results["exclusions"]] == [("run-1.csv", 8, "A"),
                                                                                     ("run-2.csv", 17, "B")]
    names = [a["name"] for a in results["analytes"]]
    appendix = soup.select_one("#appendix-raw")
    for e in results["exclusions"]:
        shown = appendix.select(f'tr.excluded[data-row="{e["row"]}"]')
        assert len(shown) == 1 and e["reason"] in shown[0].get_text()       # once in appendix B
        own = soup.select_one(f'#raw-data-{names.index(e["analyte"])}')
        assert own.select_one(f'tr.excluded[data-row="{e["row"]}"]') is shown[0]   # under its analyte
    assert soup.select_one("#raw-data-run-exclusions") is None


def test_a_flagged_qc_of_a_run_is_marked_at_its_injection(tmp_path, outside):
    results, soup = _run(_two_analyte_runs(tmp_path), outside / "o")
    a = results["analytes"][[x["name"] for x in results["analytes"]].index("A")]
    flagged = [f for lv in a["precision"]["levels"] for f in lv["flagged_results"]]
    assert flagged, "the planted QC should be flagged"
    # the planted QC of A in run-2: header on row 1, A's calibrators on rows 2-6, its QCs Q0-Q3 on rows 7-10,
    # so Q1 is row 8
    sources = {(f["source"]["file"], f["source"]["row"]) for f in flagged}
    assert ("run-2.csv", 8) in sources
    index = [x["name"] for x in results["analytes"]].index("A")
    marks = soup.select(f"#raw-data-{index} [data-flagged]")
    assert {int(m["data-flagged"]) for m in marks} == {row for _, row in sources}
    other = 1 - index                  # B: its marks are its own flagged results only (none planted)
    own = {f["source"]["row"] for lv in results["analytes"][other]["precision"]["levels"] for f in lv["flagged_results"]}
    assert {int(m["data-flagged"]) for m in soup.select(f"#raw-data-{other} [data-flagged]")} == own
