"""The dossier's first pages: cover keys, conclusion, matrix and criteria order agree with results.json."""

import json
import re
import shutil

import pytest
from bs4 import BeautifulSoup

from conftest import REPO
from test_dossier import assert_correctly_rounded, demo_out, lookup, parse_shown  # noqa: F401 (fixture)
from validator.cli import main

DEMO = REPO / "example_studies" / "anions-drinking-water"
COVER = {"scope": "Nitrate and fluoride in treated drinking water, 0.05 to 40 mg/L",
         "intended_use": "Release testing of drinking water",
         "method_summary": "Suppressed-conductivity ion chromatography, external calibration",
         "protocol_reference": "VP-IC-2026-07 rev. 1", "document_number": "VR-0042", "document_version": "2"}


@pytest.fixture(scope="module")
def failing_out(tmp_path_factory):
    """The demo with a repeatability limit some levels miss and the cover keys set."""
    folder = tmp_path_factory.mktemp("summary") / "study"
    shutil.copytree(DEMO, folder)
    study = folder / "study.toml"
    text = study.read_text(encoding="utf-8")
    text = text.replace("repeatability_rsd_max_pct = 5", "repeatability_rsd_max_pct = 1.3")
    text = "".join(line for line in text.splitlines(keepends=True) if line.split(" = ")[0] not in COVER)
    keys = "".join(f'{k} = "{v}"\n' for k, v in COVER.items())
    text = text.replace('notes = "Calibration', keys + 'notes = "Calibration')
    study.write_text(text, encoding="utf-8")
    out = tmp_path_factory.mktemp("summary-out") / "out"
    assert main(["run", str(study), "--out", str(out), "--format", "json,html"]) == 1
    results = json.loads((out / "results.json").read_text())
    soup = BeautifulSoup((out / "dossier.html").read_text(), "html.parser")
    return results, soup


def test_cover_shows_document_control_and_scope(failing_out):
    _, soup = failing_out
    cover = soup.select_one("#cover").get_text(" ")
    for value in COVER.values():
        assert value in cover
    assert "one or more acceptance criteria NOT MET" in cover


def test_matrix_agrees_with_results(failing_out):
    results, soup = failing_out
    rows = soup.select("#matrix tbody tr")
    assert len(rows) == len(results["analytes"])
    for row, a in zip(rows, results["analytes"]):
        cells = row.find_all("td")
        assert cells[0].get_text() == a["name"]
        assert cells[0].a["href"] == f"#analyte-{row['data-analyte']}"
        for span in row.select("span.n[data-src]"):
            assert_correctly_rounded(span, lookup(results, span["data-src"]))

        def shown(i):
            return [parse_shown(s.get_text())[0] for s in cells[i].select("span.n")]

        def close(got, want):
            return got == pytest.approx(want, rel=0.06)      # the rounding of the shown figure
        # the validated range: the working range within the accuracy profile's acceptance limits (both in the demo)
        wr, (ap_range,) = a["working_range"], a["accuracy_profile"]["validated_ranges"]
        assert close(shown(1), [max(wr["low"], ap_range["low"]), min(wr["high"], ap_range["high"])])
        det = a["detection"]
        rep = next(e for e in det["estimates"] if e["method"] == det["reported_basis"])
        assert close(shown(2), [rep["lod"]]) and close(shown(3), [rep["loq"]])
        means = [lv["mean_pct"] for lv in a["recovery"]["levels"]]
        assert close(shown(4), [min(means), max(means)])
        # the RSDs the criteria judge: the demo declares a day/run design, so the nested estimates
        judged = {c["id"]: c["value"] for c in a["criteria"] if c["value"] is not None}
        assert close(shown(5), [max(v for k, v in judged.items() if k.startswith("repeatability-rsd-"))])
        assert close(shown(6), [max(v for k, v in judged.items() if k.startswith("intermediate-rsd-"))])
        assert close(shown(6), [max(lv["nested"]["conditions"][-1]["rsd_pct"] for lv in a["precision"]["levels"])])
        if a.get("uncertainty"):       # the demo has an uncertainty budget: U is the 8th column
            assert close(shown(7), [max(lv["expanded_pct"] for lv in a["uncertainty"]["levels"]
                                        if lv["expanded_pct"] is not None)])
            cells = cells[:7] + cells[8:]
        # the other characteristics' verdicts: calibration, accuracy profile and (nitrate) the CRM in the demo
        others = cells[7].get_text(" ")
        assert "calibration" in others and "accuracy profile" in others
        cells = cells[:7] + cells[8:]
        not_met = sum(c["pass"] is False for c in a["criteria"])
        not_applicable = sum(c["pass"] is None for c in a["criteria"])
        assert cells[7].get_text() == f"{not_met}; {not_applicable}"
        word = cells[8].get_text()
        assert ("NOT MET" in word) == (a["verdict"] == "fail")


def test_conclusion_agrees_with_results(failing_out):
    results, soup = failing_out
    text = soup.select_one("#conclusion").get_text(" ")
    failed = [a["name"] for a in results["analytes"] if any(c["pass"] is False for c in a["criteria"])]
    assert failed, "the fixture must fail a criterion"
    n_failed = sum(c["pass"] is False for a in results["analytes"] for c in a["criteria"])
    passed = len(results["analytes"]) - len(failed)
    assert f"{passed} of {len(results['analytes'])} analyte(s) met every acceptance criterion" in text
    assert re.search(rf"\b{n_failed} criterion/criteria were NOT MET, for {', '.join(failed)}", text)
    for a in results["analytes"]:
        wr, (ap_range,) = a["working_range"], a["accuracy_profile"]["validated_ranges"]
        low, high = max(wr["low"], ap_range["low"]), min(wr["high"], ap_range["high"])
        assert (f"{a['name']} {low:g} to {high:g} mg/L (working range within the accuracy profile's "
                "acceptance limits)") in text


def test_failing_criteria_first(failing_out):
    results, soup = failing_out
    rows = soup.select("#summary tr[data-criterion], #criteria-met tr[data-criterion]")
    verdicts = [r.select_one(".verdict").get_text() for r in rows]
    order = {"✗ NOT MET": 0, "– not applicable": 1, "✓ met": 2}
    assert [order[v] for v in verdicts] == sorted(order[v] for v in verdicts)
    assert verdicts[0] == "✗ NOT MET"
    expected = sorted(((a["name"], c["id"]) for a in results["analytes"] for c in a["criteria"]),
                      key=lambda pair: 0)
    assert sorted((r.find("td").get_text(), r["data-criterion"]) for r in rows) == sorted(expected)
    # every value and limit has its unit where it has one: RSD criteria in %
    for r in rows:
        if r["data-criterion"].startswith("repeatability-rsd-"):
            cells = r.find_all("td")
            assert cells[2].get_text().endswith(" %") and cells[3].get_text().endswith(" %")
            assert "mg/L" in cells[1].get_text()


def test_no_internal_ids_as_labels(failing_out):
    _, soup = failing_out
    body = soup.select_one("body")
    for tag in body.select("#audit"):
        tag.decompose()          # the study file as given is quoted there verbatim
    text = body.get_text(" ")
    for internal in ("ich-residual-sd", "ich-intercept-sd", "working_range", "10^", "x^2"):
        assert internal not in text, internal


def test_pdf_outline_has_an_entry_per_analyte(demo_out):
    from pypdf import PdfReader

    results = json.loads((demo_out / "results.json").read_text())
    reader = PdfReader(str(demo_out / "dossier.pdf"))

    def titles(items):
        for item in items:
            if isinstance(item, list):
                yield from titles(item)
            else:
                yield item.title
    outline = list(titles(reader.outline))
    for a in results["analytes"]:
        assert f"{a['name']}: calibration" in " ".join(outline)
    assert any(t.startswith("Summary") for t in outline)


def test_appendix_names_each_calibrator_by_its_file_row(demo_out):
    results = json.loads((demo_out / "results.json").read_text())
    soup = BeautifulSoup((demo_out / "dossier.html").read_text(), "html.parser")
    lines = (DEMO / "calibration.csv").read_text(encoding="utf-8").splitlines()
    for i, a in enumerate(results["analytes"]):
        rows = soup.select(f"#calibration-data-{i} table.calibration-data tbody tr")
        back = a["calibration"]["back_calculated"]
        assert len(rows) == len(back)
        flagged = {(o["concentration"], o["response"]) for o in a["calibration"]["outliers"]["flagged"]}
        for row, b in zip(rows, back):
            file_row = int(row.find_all("td")[1].get_text())
            # the file's own line (1 = header) holds this calibrator: hand check against the CSV text
            name, conc, resp = lines[file_row - 1].split(",")[:3]
            assert (name, float(conc), float(resp)) == (a["name"], b["nominal"], b["response"])
            assert ("⚑" in row.get_text()) == ((b["nominal"], b["response"]) in flagged)
    assert any((o["concentration"], o["response"]) for a in results["analytes"]
               for o in a["calibration"]["outliers"]["flagged"])      # the demo has a flagged calibrator


def test_the_accuracy_profile_range_is_not_called_validated(failing_out):
    # only the summary's range (working range within the profile's limits) is "validated": the sign-off attests it
    _, soup = failing_out
    section = soup.select_one("#characteristics-0").get_text(" ")
    assert "Range within the acceptance limits:" in section
    assert "Validated range:" not in section


def test_the_precision_table_labels_the_one_way_and_the_judged_rsd(failing_out):
    results, soup = failing_out
    table = soup.select_one("#precision-0").find_next("table")
    heads = [th.get_text() for th in table.select("thead th")]
    assert "RSDI % (one-way)" in heads and "RSDI % judged (day/run)" in heads    # RSD<sub>I</sub>
    judged = [s["data-src"] for s in table.select("td.judged span.n[data-src]")]
    assert judged == [f"analytes.0.precision.levels.{i}.nested.conditions.2.rsd_pct"
                      for i in range(len(results["analytes"][0]["precision"]["levels"]))]


def test_a_precision_bound_above_its_limit_is_a_remark(failing_out):
    # nitrate 0.5 mg/L: intermediate RSD 2.3 % within 8 %, its upper bound 8.5 % above it (the criterion's note)
    results, soup = failing_out
    c = next(c for c in results["analytes"][0]["criteria"] if c["id"] == "intermediate-rsd-0.5")
    bound = results["analytes"][0]["precision"]["levels"][0]["nested"]["conditions"][-1]["rsd_upper_pct"]
    assert c["pass"] is True and bound > c["limit"]
    remarks = soup.select_one("#remarks + ul").get_text(" ")
    assert "intermediate precision RSD at 0.5 mg/L (2.3 %) meets its 8 % limit on the point estimate only" in remarks
    assert "(intermediate-rsd-0.5, not met on that basis)" in remarks
