"""The LC-MS/MS example given as run exports (example_studies/marbofloxacin-milk-runs, invented data).

Checks: every number the dossier shows is the one in results.json (the same rule as for the
anions demo); each QC's found value follows from its response and its run's coefficients
(hand computation: x0 = (y0 - a) / b, ISO 8466-1 sec. 6); run-level study errors are plain.
"""

from __future__ import annotations

import json

import jsonschema
import pytest
from bs4 import BeautifulSoup

from conftest import REPO
from test_dossier import lookup
from validator.cli import main
from test_dossier import assert_correctly_rounded

EXAMPLE = REPO / "example_studies" / "marbofloxacin-milk-runs"


@pytest.fixture(scope="module")
def example_out(tmp_path_factory):
    out = tmp_path_factory.mktemp("lcms") / "out"
    assert main(["run", str(EXAMPLE / "study.toml"), "--out", str(out), "--format", "json,html"]) == 0
    return out


def test_the_chain_from_response_to_found(example_out):
    results = json.loads((example_out / "results.json").read_text(encoding="utf-8"))
    schema = json.loads((REPO / "validator" / "schema" / "results.schema.json").read_text(encoding="utf-8"))
    jsonschema.validate(results, schema, cls=jsonschema.Draft202012Validator)
    runs = results["analytes"][0]["runs"]
    cal = {c["run"]: c for c in runs["calibrations"]}
    assert runs["quantified_with"] == "run" and sorted(cal) == ["run-1", "run-2", "run-3"]
    qcs = [i for i in runs["injections"] if i["type"] == "qc"]
    assert len(qcs) == 17           # 3 runs x 6 QC injections, one excluded
    for i in qcs:
        c = cal[i["calibration"]]
        assert i["calibration"] == i["run"]
        assert i["response"] == pytest.approx(i["analyte_response"] / i["internal_standard_response"], rel=1e-15)
        assert i["found"] == pytest.approx((i["response"] - c["intercept"]) / c["slope"], rel=1e-9)  # hand computation
    assert [e["row"] for e in results["exclusions"]] == [11]
    assert {f["path"]: f.get("dialect", f.get("sheet")) for f in results["inputs"][1:]} == {
        "run-1.xlsx": "Results", "run-2.csv": "detected", "run-3.csv": "detected"}


def test_every_number_shown_matches_results_json(example_out):
    results = json.loads((example_out / "results.json").read_text(encoding="utf-8"))
    soup = BeautifulSoup((example_out / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    spans = soup.select('span.n[data-src*=".runs."]')
    assert len(spans) > 100
    for span in spans:          # each shown number is its results.json value, correctly rounded as shown
        assert_correctly_rounded(span, lookup(results, span["data-src"]))
    assert "computed by validator from the raw responses" in soup.select_one("#cover").get_text()


@pytest.mark.parametrize("extra, expected", [
    ('[[runs]]\ndata = "run-2.csv"\n[calibration]\ndata = "cal.csv"\n',
     'key calibration.data: the study gives its data as [[runs]], whose injections feed [calibration]; remove '
     "data = ... here (or give every table its own file and no [[runs]])"),
    ('[calibration]\ndata = "cal.csv"\n[types]\nqc = ["QC"]\n',
     "key types: [types] maps the exports of [[runs]], but the study has no [[runs]]"),
    ('[calibration]\nmodel = "linear"\n',
     "key calibration.data: required key is missing"),
])
def test_run_keys_out_of_place_are_named(make_study, capsys, extra, expected):
    study = make_study("", files={}, head="""[study]\nid = "x"\ntitle = "x"\nconcentration_unit = "u"\n"""
                       """response_unit = "r"\n""" + extra)
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err.rstrip("\n").endswith(expected)
