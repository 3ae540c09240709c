"""The bioanalytical example study (invented data, example_studies/make_bioanalytical.py) runs end to end
and shows the ICH M10 set with the preset's criteria; its CSVs are what the committed script makes."""

from __future__ import annotations

import json
import runpy
from pathlib import Path

import jsonschema

from validator.cli import main
from validator.results import load_schema

REPO = Path(__file__).resolve().parents[1]
EXAMPLE = REPO / "example_studies" / "plasma-lcms-bioanalytical"


def test_the_committed_csvs_are_what_the_script_makes(tmp_path, monkeypatch):
    module = runpy.run_path(str(REPO / "example_studies" / "make_bioanalytical.py"))
    monkeypatch.setitem(module["main"].__globals__, "HERE", tmp_path)
    module["main"]()
    made = sorted(p.name for p in tmp_path.glob("*.csv"))
    assert made == sorted(p.name for p in EXAMPLE.glob("*.csv"))
    for name in made:
        assert (tmp_path / name).read_bytes() == (EXAMPLE / name).read_bytes(), name


def test_the_bioanalytical_example_shows_the_set(outside):
    out = outside / "out"
    assert main(["run", str(EXAMPLE / "study.toml"), "--out", str(out), "--format", "json,html"]) in (0, 1)
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    analyte = results["analytes"][0]
    for name in ("matrix_effect", "carry_over", "selectivity", "stability", "dilution_integrity", "reanalysis"):
        assert name in analyte["characteristics_assessed"]
    assert results["guideline"]["name"] == "ich-m10" and all(v["used"] for v in results["guideline"]["values"])
    # the sector characteristics read the injections of the three run exports (issue #15)
    for name in ("matrix_effect", "carry_over", "selectivity", "stability", "dilution_integrity"):
        assert analyte[name]["data_from"] == "runs" and name in analyte["runs"]["feeds"]
    types = {b["run"]: b["type"] for b in analyte["carry_over"]["run_blanks"]}
    assert types == {"run-1": "blank", "run-2": "blank", "run-3": "zero"}     # a zero sample: analyte part only
    ids = {c["id"].split("-")[0] for c in analyte["criteria"]}
    assert {"matrix", "carry", "selectivity", "stability", "dilution", "incurred"} <= ids
    html = (out / "dossier.html").read_text(encoding="utf-8")
    assert "Guideline preset" in html and "Incurred-sample reanalysis" in html
    # log-axis tick labels are plain numbers: matplotlib's mathtext would show as raw "$\mathdefault{10^{1}}$"
    # in the SVG, whose text is kept as text (seen in the reanalysis figure's log axis)
    assert "mathdefault" not in html and "$10^" not in html


# issue #14: compact analyte sections. The bioanalytical example's analyte took 6 pages (figures full
# width, 40 incurred-sample rows); with the sector figures in the row of figures and the per-row
# tables in appendix C it takes the calibration's page and 3 more, the last figure line sharing the
# samples' page
BIO_PAGES_PER_ANALYTE_REACHED = 4


def test_bioanalytical_section_is_compact(outside):
    from bs4 import BeautifulSoup
    from pypdf import PdfReader

    out = outside / "out"
    assert main(["run", str(EXAMPLE / "study.toml"), "--out", str(out)]) in (0, 1)
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    samples = results["analytes"][0]["reanalysis"]["samples"]
    soup = BeautifulSoup((out / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    section, appendix = soup.select_one("#characteristics-0"), soup.select_one("#details-0")
    shown = {td["data-src"] for td in section.select('[data-src^="analytes.0.reanalysis.samples."]')}
    # the section: only the samples not within the limit (exact count from results.json)
    outside_rows = {i for i, s in enumerate(samples) if s["within"] is not True}
    assert {int(src.split(".")[4]) for src in shown} == outside_rows and 0 < len(outside_rows) < len(samples)
    # appendix C: every sample
    listed = {int(e["data-src"].split(".")[4]) for e in appendix.select('[data-src^="analytes.0.reanalysis.samples."]')}
    assert listed == set(range(len(samples)))
    assert section.select_one('a[href="#details-0"]') is not None
    # the sector figures stand in the section's row of figures
    row = section.select_one("div.figure-row")
    assert len(row.select("div.figure")) == 4
    reader = PdfReader(str(out / "dossier.pdf"))
    entries = {o.title: reader.get_destination_page_number(o) + 1 for o in reader.outline[1] if not isinstance(o, list)}
    start = next(p for t, p in entries.items() if ": calibration" in t)
    after = next(p for t, p in entries.items() if t.startswith("Quantified samples"))
    assert after - start <= BIO_PAGES_PER_ANALYTE_REACHED, (start, after)
