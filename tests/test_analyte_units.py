"""Units per analyte ([analyte_settings.<analyte>.study] concentration_unit / response_unit, issue #12 item 9).

A two-analyte study where lead has the study's units and zinc its own: every place that shows a unit
(results.json, the analyte's sections, the summary matrix, the criteria, the figures' axis labels, the
samples in the reporting unit, the protocol) carries the analyte's own unit and never the other's.
Data here are invented for the tests; no value is checked, only which unit labels it.
"""

from __future__ import annotations

import json

import jsonschema
import pytest
from bs4 import BeautifulSoup

from conftest import CALIBRATION
from validator.cli import main
from validator.errors import DataError, StudyError
from validator.inputs.loading import load_study
from validator.inputs.study import read_study_file
from validator.protocol import digest, document_data, normalised
from validator.results import load_schema

HEAD = """\
[study]
id = "U-1"
title = "Units per analyte"
concentration_unit = "ng/mL"
response_unit = "cps"
"""
# (concentration unit, response unit, reporting unit) of each analyte
UNITS = {"lead": ("ng/mL", "cps", "ng/g"), "zinc": ("µg/mL", "mV·s", "µg/g")}

TWO = "analyte," + CALIBRATION.splitlines()[0] + "\n" + "".join(
    f"{name},{line}\n" for name in ("lead", "zinc") for line in CALIBRATION.splitlines()[1:])
RECOVERY = "analyte,added,found\n" + "".join(
    f"{name},10,{f}\n" for name in ("lead", "zinc") for f in ("9.8", "10.1", "10.0"))
PRECISION = "analyte,level,series,found\n" + "".join(
    f"{name},4,{s},{f}\n" for name in ("lead", "zinc") for s, values in (("s1", ("4.01", "3.98", "4.03")),
                                                                          ("s2", ("3.97", "4.02", "4.00")))
    for f in values)
SAMPLES = "sample,analyte,response\n" + "".join(f"S-1,{name},{r}\n" for name in ("lead", "zinc") for r in ("10.2", "10.3"))
CRM = "analyte,found\nlead,9.4\nlead,9.6\nlead,9.5\nzinc,20.1\nzinc,19.7\nzinc,20.3\n"
FILES = {"calibration.csv": TWO, "recovery.csv": RECOVERY, "precision.csv": PRECISION, "samples.csv": SAMPLES,
         "crm.csv": CRM}

BODY = """
[calibration]
data = "calibration.csv"

[samples]
data = "samples.csv"

[recovery]
data = "recovery.csv"
range_pct = [90, 110]

[precision]
data = "precision.csv"
repeatability_rsd_max_pct = 5

[reference_material]
data = "crm.csv"
analyte = "lead"
certified_value = 9.5
standard_uncertainty = 0.1

[analyte_settings.zinc.reference_material]
certified_value = 20
standard_uncertainty = 0.2

[sample_preparation]
unit = "ng/g"
aliquot = 2.0
final_volume = 10.0
"""
ZINC_UNITS = """
[analyte_settings.zinc.study]
concentration_unit = "µg/mL"
response_unit = "mV·s"

[analyte_settings.zinc.sample_preparation]
unit = "µg/g"
"""


@pytest.fixture
def two_units(make_study, outside):
    """(results.json, the dossier's soup, the study path) of the two-analyte study."""
    study = make_study(BODY + ZINC_UNITS, files=FILES, head=HEAD)
    assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json,html"]) in (0, 1)
    results = json.loads((outside / "o" / "results.json").read_text(encoding="utf-8"))
    soup = BeautifulSoup((outside / "o" / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    return results, soup, study


def _other(name: str) -> str:
    return "zinc" if name == "lead" else "lead"


def _has_own_units_only(text: str, name: str, where: str) -> None:
    """``text`` shows ``name``'s concentration and response units and none of the other analyte's."""
    conc, resp, _ = UNITS[name]
    other_conc, other_resp, other_reporting = UNITS[_other(name)]
    assert conc in text and resp in text, f"{where}: {name}'s units missing"
    for unit in (other_conc, other_resp, other_reporting):
        assert unit not in text, f"{where}: {name} shows {_other(name)}'s unit {unit}"


def test_results_json_carries_each_analytes_units(two_units):
    results, _, _ = two_units
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    lead, zinc = results["analytes"]
    assert results["study"]["concentration_unit"] == "ng/mL" and results["study"]["response_unit"] == "cps"
    # lead has the study's units: its entry does not repeat them (the demo's results.json is unchanged)
    assert "concentration_unit" not in lead and "response_unit" not in lead
    assert (zinc["concentration_unit"], zinc["response_unit"]) == ("µg/mL", "mV·s")
    assert {"key": "study.concentration_unit", "value": "µg/mL", "study_value": "ng/mL"} in zinc["settings"]
    assert {"key": "study.response_unit", "value": "mV·s", "study_value": "cps"} in zinc["settings"]
    assert {"key": "sample_preparation.unit", "value": "µg/g", "study_value": "ng/g"} in zinc["settings"]
    # the reporting unit and the chain of each sample in its analyte's units
    assert lead["sample_preparation"]["unit"] == "ng/g" and zinc["sample_preparation"]["unit"] == "µg/g"
    lead_chain, zinc_chain = (a["sample_preparation"]["samples"][0]["chain"] for a in (lead, zinc))
    assert "ng/mL" in lead_chain and "ng/g" in lead_chain and "µg" not in lead_chain
    assert "µg/mL" in zinc_chain and "µg/g" in zinc_chain and "ng/" not in zinc_chain
    # the same numbers in both analytes: a unit changes no value
    assert lead["calibration"]["coefficients"] == zinc["calibration"]["coefficients"]
    assert lead["recovery"]["levels"] == zinc["recovery"]["levels"]


def test_each_analytes_sections_and_figures_carry_its_own_units(two_units):
    results, soup, _ = two_units
    for index, name in enumerate(("lead", "zinc")):
        calibration = soup.select_one(f"#analyte-{index}")
        characteristics = soup.select_one(f"#characteristics-{index}")
        appendix = soup.select_one(f"#calibration-data-{index}")
        # the analyte's settings table lists the study-wide unit beside the analyte's own: leave it out
        for table in calibration.select("table.analyte-settings"):
            table.decompose()
        for where, part in (("calibration section", calibration), ("appendix A", appendix)):
            _has_own_units_only(part.get_text(" "), name, where)
        conc, resp, reporting = UNITS[name]
        other_conc = UNITS[_other(name)][0]
        text = characteristics.get_text(" ")
        assert conc in text and reporting in text and other_conc not in text, name
        # axis labels: the SVG text of every figure of the analyte
        svg_text = [t.get_text() for part in (calibration, characteristics) for t in part.select("svg text")]
        assert f"concentration ({conc})" in svg_text and f"response ({resp})" in svg_text, name
        assert f"added ({conc})" in svg_text and f"level ({conc})" in svg_text, name
        assert not [t for t in svg_text if other_conc in t or UNITS[_other(name)][1] in t], name
    # the quantified samples (a study-level section): each analyte's table in its units
    samples = soup.select_one("#samples")
    for heading in samples.select("h3"):
        _has_own_units_only(heading.find_next("table").get_text(" "), heading.get_text(), "samples")


def test_the_summary_matrix_and_criteria_give_each_row_its_unit(two_units):
    results, soup, _ = two_units
    matrix = soup.select_one("#matrix")
    header = [th.get_text() for th in matrix.select("thead th")]
    assert header[:5] == ["Analyte", "Unit", "Range", "LOD", "LOQ"]      # the analytes' units differ
    for index, name in enumerate(("lead", "zinc")):
        row = matrix.select_one(f'tr[data-analyte="{index}"]')
        assert row.select_one("td.unit").get_text() == UNITS[name][0]
    rows = soup.select("table.criteria tr[data-criterion]")
    seen = set()
    for row in rows:
        name = row.select_one("td a").get_text()
        text = row.get_text(" ")
        other = UNITS[_other(name)][0]
        assert other not in text, (name, text)
        cid = row["data-criterion"]
        if cid.startswith(("recovery-", "repeatability-rsd-", "reference-material-bias")):
            assert UNITS[name][0] in text, (name, text)
            seen.add((name, cid.split("-")[0]))
    assert seen == {(n, k) for n in ("lead", "zinc") for k in ("recovery", "repeatability", "reference")}
    # the cover lists zinc's own units beside the study's
    cover = soup.find("dt", string="Units").find_next("dd").get_text(" ")
    assert "ng/mL" in cover and "zinc" in cover and "µg/mL" in cover and "mV·s" in cover
    # the conclusion's working ranges, each in its analyte's unit
    conclusion = soup.select_one("#conclusion").get_text(" ")
    if "Validated working ranges" in conclusion:
        assert "lead" in conclusion.split("ng/mL")[0] and "zinc" in conclusion.split("µg/mL")[0]


def test_a_common_unit_keeps_the_matrix_header(make_study, outside):
    # only the response unit differs: the matrix header keeps the one concentration unit
    study = make_study(BODY + '[analyte_settings.zinc.study]\nresponse_unit = "mV·s"\n', files=FILES, head=HEAD)
    assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json,html"]) in (0, 1)
    soup = BeautifulSoup((outside / "o" / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    header = [th.get_text() for th in soup.select("#matrix thead th")]
    assert header[:4] == ["Analyte", "Range (ng/mL)", "LOD (ng/mL)", "LOQ (ng/mL)"]
    results = json.loads((outside / "o" / "results.json").read_text(encoding="utf-8"))
    assert (results["analytes"][1]["concentration_unit"], results["analytes"][1]["response_unit"]) == (
        "ng/mL", "mV·s")


def test_the_protocol_counts_the_concentration_unit_per_analyte(make_study):
    material = {"reference_material": {"certified_value": 20, "standard_uncertainty": 0.2}}
    plain = read_study_file(make_study(BODY, files=FILES, head=HEAD))
    assert normalised(plain.config)["analyte_settings"] == {"zinc": material}
    own = read_study_file(make_study(BODY + ZINC_UNITS, files=FILES, head=HEAD))
    # the concentration unit gives every level and limit its meaning (as [study] concentration_unit);
    # the response unit and the reporting are not design or criteria
    assert normalised(own.config)["analyte_settings"] == {
        "zinc": {**material, "study": {"concentration_unit": "µg/mL"}}}
    # units alone, without another per-analyte setting: the digest of the study without them
    body = BODY.split("[analyte_settings")[0] + "[sample_preparation]" + BODY.split("[sample_preparation]")[1]
    files = {**FILES, "crm.csv": "\n".join(CRM.splitlines()[:4]) + "\n"}
    alone = read_study_file(make_study(body, files=files, head=HEAD))
    assert "analyte_settings" not in normalised(alone.config)
    response_only = read_study_file(make_study(body + '[analyte_settings.zinc.study]\nresponse_unit = "mV·s"\n'
                                                '[analyte_settings.zinc.sample_preparation]\nunit = "µg/g"\n',
                                                files=files, head=HEAD))
    assert digest(normalised(response_only.config)) == digest(normalised(alone.config))
    data = document_data({"design_and_criteria": normalised(own.config)}, own, ())
    assert data["study"]["own_units"] == [{"name": "zinc", "concentration": "µg/mL", "response": "mV·s"}]


LONG = "x" * 101      # [study] concentration_unit holds at most 100 characters (README, "Limits")


@pytest.mark.parametrize("extra, key, words", [
    ('[analyte_settings.zinc.study]\nconcentration_units = "µg/mL"\n',
     "analyte_settings.zinc.study.concentration_units", 'unknown key; did you mean "concentration_unit"?'),
    ('[analyte_settings.zinc.study]\ntitle = "zinc"\n', "analyte_settings.zinc.study.title",
     "is set for the whole study only: of [study], only concentration_unit and response_unit can differ"),
    ('[analyte_settings.zinc.study]\nconcentration_unit = "  "\n',
     "analyte_settings.zinc.study.concentration_unit", "must not be blank"),
    (f'[analyte_settings.zinc.study]\nresponse_unit = "{LONG}"\n', "analyte_settings.zinc.study.response_unit",
     "is too long"),
    ("[analyte_settings.zinc.study]\nconcentration_unit = 5\n", "analyte_settings.zinc.study.concentration_unit",
     "must be text in quotes"),
    ('[analyte_settings.zinc.units]\nconcentration = "µg/mL"\n', "analyte_settings.zinc.units", "unknown table"),
    ('[analyte_settings.zinc.sample_preparation]\nunit = ""\n', "analyte_settings.zinc.sample_preparation.unit",
     "must not be empty"),
])
def test_a_bad_unit_setting_names_its_key_and_line(make_study, extra, key, words):
    study = make_study(BODY + extra, files=FILES, head=HEAD)
    with pytest.raises(StudyError) as caught:
        read_study_file(study)
    error = caught.value
    assert error.key == key and words in error.problem, str(error)
    line = study.read_text(encoding="utf-8").splitlines()[error.line - 1]
    assert line.startswith(key.split(".")[-1] if key.count(".") == 3 else "[analyte_settings"), line


def test_a_reporting_unit_per_analyte_needs_the_study_wide_table(make_study):
    body = BODY.split("[sample_preparation]")[0] + '[analyte_settings.zinc.sample_preparation]\nunit = "µg/g"\n'
    with pytest.raises(StudyError) as caught:
        read_study_file(make_study(body, files=FILES, head=HEAD))
    assert caught.value.key == "analyte_settings.zinc.sample_preparation"
    assert "the study has no [sample_preparation] table" in caught.value.problem


def test_a_revalidation_compares_each_analyte_in_its_own_units(two_units, make_study, tmp_path):
    results, _, _ = two_units
    (tmp_path / "prev.json").write_text(json.dumps(results), encoding="utf-8")
    body = BODY + '[revalidation]\nprevious = "prev.json"\n'
    # same units as before, zinc's its own: compared
    load_study(make_study(body + ZINC_UNITS, files=FILES, head=HEAD))
    # zinc now in the study's unit: its previous results (µg/mL) cannot be compared
    with pytest.raises(DataError) as caught:
        load_study(make_study(body, files=FILES, head=HEAD))
    assert str(caught.value).endswith('prev.json: uses concentration unit "µg/mL" for analyte "zinc" but this '
                                      'study uses "ng/mL"; results in different units cannot be compared')


def test_no_fragment_shows_the_study_unit_for_an_analyte():
    # an analyte's numbers are in its own unit (a.unit, a.response_unit); only the cover and the protocol
    # show the study's, beside the analytes with their own
    from validator.report import templates_dir

    for path in sorted(templates_dir().rglob("*.j2")):
        text = path.read_text(encoding="utf-8")
        if path.name in ("dossier.html.j2", "protocol.html.j2"):
            text = "\n".join(line for line in text.splitlines() if "<dt>Units</dt>" not in line
                             and not line.startswith('<p class="muted">Levels in'))
        assert "study.concentration_unit" not in text and "study.response_unit" not in text, path.name
