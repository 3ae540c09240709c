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
