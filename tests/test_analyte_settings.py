"""Per-analyte settings ([analyte_settings.<analyte>.<table>], issue #12 item 9).

Data here are invented for the tests; expected verdicts are hand computations beside them.
"""

from __future__ import annotations

import json
from fractions import Fraction

import jsonschema
import pytest

from conftest import CALIBRATION
from validator.engine import analyse_study
from validator.errors import StudyError
from validator.inputs.loading import load_study
from validator.inputs.study import read_study_file
from validator.protocol import digest, normalised
from validator.results import build_results, load_schema

# the same calibration for two analytes, "lead" and "zinc"
TWO = "analyte," + CALIBRATION.splitlines()[0] + "\n" + "".join(
    f"{name},{line}\n" for name in ("lead", "zinc") for line in CALIBRATION.splitlines()[1:])
LEAD_FOUND = ("9.2", "9.4", "9.0")      # added 10: mean recovery 92 %
ZINC_FOUND = ("8.5", "8.7", "8.6")      # added 10: mean recovery 86 %
RECOVERY = "analyte,added,found\n" + "".join(
    f"{name},10,{f}\n" for name, found in (("lead", LEAD_FOUND), ("zinc", ZINC_FOUND)) for f in found)

BODY = """
[calibration]
data = "calibration.csv"

[recovery]
data = "recovery.csv"
range_pct = [90, 110]
"""
ZINC_WIDER = """
[analyte_settings.zinc.recovery]
range_pct = [80, 120]

[analyte_settings.zinc.criteria]
back_calculation_tolerance_pct = 20
"""


def _mean_recovery(found) -> Fraction:
    """Hand computation: 100 * mean(found - native) / added, native 0, added 10."""
    return 100 * sum(Fraction(f) for f in found) / len(found) / 10


def _results(study) -> dict:
    return json.loads(json.dumps(build_results(analyse_study(load_study(study)), generated_at="2026-01-01T00:00:00Z")))


def _criterion(entry: dict, cid: str) -> dict:
    return next(c for c in entry["criteria"] if c["id"] == cid)


def test_each_analyte_is_judged_with_its_own_limits(make_study):
    study = make_study(BODY + ZINC_WIDER, files={"calibration.csv": TWO, "recovery.csv": RECOVERY})
    results = _results(study)
    jsonschema.validate(results, load_schema())
    lead, zinc = results["analytes"]
    assert _mean_recovery(LEAD_FOUND) == 92 and _mean_recovery(ZINC_FOUND) == 86    # hand computation
    # lead: 92 % within the study-wide [90, 110] -> met; zinc: 86 % within its own [80, 120] -> met
    # (86 % would fail the study-wide range)
    assert _criterion(lead, "recovery-10")["limit"] == [90.0, 110.0]
    assert _criterion(lead, "recovery-10")["value"] == pytest.approx(92, rel=1e-12)
    assert _criterion(lead, "recovery-10")["pass"] is True
    assert _criterion(zinc, "recovery-10")["limit"] == [80.0, 120.0]
    assert _criterion(zinc, "recovery-10")["value"] == pytest.approx(86, rel=1e-12)
    assert _criterion(zinc, "recovery-10")["pass"] is True
    assert "+/-15 %" in _criterion(lead, "back-calculation")["description"]
    assert "+/-20 %" in _criterion(zinc, "back-calculation")["description"]
    assert "settings" not in lead
    assert zinc["settings"] == [
        {"key": "recovery.range_pct", "value": [80.0, 120.0], "study_value": [90.0, 110.0]},
        {"key": "criteria.back_calculation_tolerance_pct", "value": 20.0, "study_value": 15.0}]


def test_without_the_setting_zinc_fails(make_study):
    study = make_study(BODY, files={"calibration.csv": TWO, "recovery.csv": RECOVERY})
    zinc = _results(study)["analytes"][1]
    assert _criterion(zinc, "recovery-10")["pass"] is False        # 86 % outside [90, 110], hand computation


def _close(a, b, path=""):
    if isinstance(a, dict):
        assert set(a) == set(b), path
        for k in a:
            _close(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b)):
            _close(x, y, f"{path}.{i}")
    elif isinstance(a, float) and isinstance(b, float):
        assert a == pytest.approx(b, rel=1e-12, abs=1e-12), path
    else:
        assert a == b, path


def test_an_override_equals_a_one_analyte_study_with_those_settings(make_study, tmp_path_factory):
    two = make_study(BODY + ZINC_WIDER, files={"calibration.csv": TWO, "recovery.csv": RECOVERY})
    zinc_in_two = _results(two)["analytes"][1]
    folder = tmp_path_factory.mktemp("alone")
    (folder / "calibration.csv").write_text("".join(line + "\n" for line in TWO.splitlines()
                                                    if not line.startswith("lead")), encoding="utf-8")
    (folder / "recovery.csv").write_text("".join(line + "\n" for line in RECOVERY.splitlines()
                                                 if not line.startswith("lead")), encoding="utf-8")
    (folder / "study.toml").write_text((two.read_text(encoding="utf-8").split("[calibration]")[0] + BODY
                                        .replace("[90, 110]", "[80, 120]")
                                        + "\n[criteria]\nback_calculation_tolerance_pct = 20\n"), encoding="utf-8")
    alone = _results(folder / "study.toml")["analytes"][0]
    del zinc_in_two["settings"]
    # the same records, read from other lines of other files: equal but for their file rows
    rows_two, rows_alone = zinc_in_two.pop("data_rows"), alone.pop("data_rows")
    assert [(g["role"], [r["values"] for r in g["rows"]]) for g in rows_two] == \
        [(g["role"], [r["values"] for r in g["rows"]]) for g in rows_alone]
    _close(zinc_in_two, alone)


@pytest.mark.parametrize("extra, key, words", [
    ("[analyte_settings.zinc.recovry]\nrange_pct = [80, 120]\n", "analyte_settings.zinc.recovry",
     'unknown table; did you mean "recovery"?'),
    ("[analyte_settings.zinc.recovery]\nrange_pc = [80, 120]\n", "analyte_settings.zinc.recovery.range_pc",
     'unknown key; did you mean "range_pct"?'),
    ("[analyte_settings.zinc.criteria]\nalpha = 0.01\n", "analyte_settings.zinc.criteria.alpha",
     "is set for the whole study only: alpha is one value for the whole study"),
    ("[analyte_settings.zinc.precision]\nrepeatability_rsd_max_pct = 5\n", "analyte_settings.zinc.precision",
     "the study has no [precision] table"),
    ("[analyte_settings.zinc.calibration]\nmodel = \"quadratic\"\n", "analyte_settings.zinc.calibration",
     "[calibration] cannot be set per analyte"),
    ("[analyte_settings.zinc.recovery]\nrange_pct = [120, 80]\n", "analyte_settings.zinc.recovery",
     "range_pct must be [low, high] with low < high"),
    ("[analyte_settings.zinc.recovery]\nrange_pct = [80, 2000]\n", "analyte_settings.zinc.recovery.range_pct[1]",
     "less than or equal to 1000"),      # as the study-wide table says it
])
def test_a_bad_setting_names_its_key_and_line(make_study, extra, key, words):
    study = make_study(BODY + extra, files={"calibration.csv": TWO, "recovery.csv": RECOVERY})
    with pytest.raises(StudyError) as caught:
        read_study_file(study)
    error = caught.value
    assert error.key == key and words in error.problem, str(error)
    line = study.read_text(encoding="utf-8").splitlines()[error.line - 1]
    assert line.startswith(("[analyte_settings", "range_p", "alpha", "model")), line


def test_an_analyte_not_in_the_data_is_an_error(make_study):
    study = make_study(BODY + "[analyte_settings.copper.recovery]\nrange_pct = [80, 120]\n",
                       files={"calibration.csv": TWO, "recovery.csv": RECOVERY})
    with pytest.raises(StudyError) as caught:
        load_study(study)
    assert caught.value.key == "analyte_settings.copper"
    assert 'analyte "copper" is not in the calibration data' in caught.value.problem
    assert study.read_text(encoding="utf-8").splitlines()[caught.value.line - 1].startswith(
        "[analyte_settings.copper.recovery]")


MATERIAL = """
[reference_material]
data = "crm.csv"
analyte = "lead"
certified_value = 9.5
standard_uncertainty = 0.1
"""
CRM = "analyte,found\nlead,9.4\nlead,9.6\nlead,9.5\nzinc,20.1\nzinc,19.7\nzinc,20.3\n"


def test_one_reference_material_per_analyte_from_the_shared_file(make_study):
    zinc_material = "[analyte_settings.zinc.reference_material]\ncertified_value = 20\nstandard_uncertainty = 0.2\n"
    study = make_study(BODY + MATERIAL + zinc_material,
                       files={"calibration.csv": TWO, "recovery.csv": RECOVERY, "crm.csv": CRM})
    lead, zinc = _results(study)["analytes"]
    assert lead["reference_material"]["certified_value"] == 9.5
    assert lead["reference_material"]["mean"] == pytest.approx(9.5, rel=1e-12)      # hand computation
    assert zinc["reference_material"]["certified_value"] == 20.0
    assert zinc["reference_material"]["mean"] == pytest.approx(float(Fraction("60.1") / 3), rel=1e-12)
    assert zinc["reference_material"]["certified_standard_uncertainty"] == 0.2


def test_a_reference_material_of_its_own_file(make_study):
    own = ('[analyte_settings.zinc.reference_material]\ndata = "crm-zinc.csv"\ncertified_value = 20\n'
           "standard_uncertainty = 0.2\n")
    files = {"calibration.csv": TWO, "recovery.csv": RECOVERY, "crm.csv": "found\n9.4\n9.6\n9.5\n",
             "crm-zinc.csv": "found\n20.1\n19.7\n20.3\n"}
    lead, zinc = _results(make_study(BODY + MATERIAL + own, files=files))["analytes"]
    assert lead["reference_material"]["n"] == 3 and zinc["reference_material"]["n"] == 3
    assert zinc["reference_material"]["mean"] == pytest.approx(float(Fraction("60.1") / 3), rel=1e-12)


def test_the_single_material_keeps_working_and_rows_without_a_material_are_refused(make_study):
    files = {"calibration.csv": TWO, "recovery.csv": RECOVERY, "crm.csv": "found\n9.4\n9.6\n9.5\n"}
    lead, zinc = _results(make_study(BODY + MATERIAL, files=files))["analytes"]
    assert lead["reference_material"]["n"] == 3 and zinc["reference_material"] is None
    study = make_study(BODY + MATERIAL, files={**files, "crm.csv": CRM})
    with pytest.raises(StudyError) as caught:
        load_study(study)
    assert caught.value.row == 5 and "no certified reference material" in caught.value.problem


def test_another_analytes_material_needs_its_own_certified_value(make_study):
    study = make_study(BODY + MATERIAL + "[analyte_settings.zinc.reference_material]\ncertified_value = 20\n",
                       files={"calibration.csv": TWO, "recovery.csv": RECOVERY, "crm.csv": CRM})
    with pytest.raises(StudyError) as caught:
        read_study_file(study)
    assert caught.value.key == "analyte_settings.zinc.reference_material.standard_uncertainty"


def test_the_protocol_digest_counts_per_analyte_criteria(make_study):
    files = {"calibration.csv": TWO, "recovery.csv": RECOVERY}
    base = normalised(read_study_file(make_study(BODY, files=files)).config)
    assert "analyte_settings" not in base                 # a study without them digests as before
    wider = read_study_file(make_study(BODY + ZINC_WIDER, files=files)).config
    assert normalised(wider)["analyte_settings"] == {
        "zinc": {"recovery": {"range_pct": [80, 120]}, "criteria": {"back_calculation_tolerance_pct": 20}}}
    assert digest(normalised(wider)) != digest(base)
    # a reference material's own data file is where data are, not a criterion
    own = ('[analyte_settings.zinc.reference_material]\ndata = "crm-zinc.csv"\ncertified_value = 20\n'
           "standard_uncertainty = 0.2\n")
    config = read_study_file(make_study(BODY + MATERIAL + own, files=files)).config
    assert "data" not in normalised(config)["analyte_settings"]["zinc"]["reference_material"]


def test_the_dossier_shows_an_analytes_own_settings(make_study, outside):
    from bs4 import BeautifulSoup
    from test_dossier import assert_correctly_rounded, lookup
    from validator.cli import main

    study = make_study(BODY + ZINC_WIDER, files={"calibration.csv": TWO, "recovery.csv": RECOVERY})
    assert main(["run", str(study), "--out", str(outside / "out"), "--format", "html"]) == 0
    assert main(["run", str(study), "--out", str(outside / "json"), "--format", "json"]) == 0
    results = json.loads((outside / "json" / "results.json").read_text(encoding="utf-8"))
    soup = BeautifulSoup((outside / "out" / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    zinc = soup.select_one("#analyte-1")
    table = zinc.select_one("table.analyte-settings")
    assert [code.get_text() for code in table.select("code")] == ["recovery.range_pct",
                                                                  "criteria.back_calculation_tolerance_pct"]
    spans = table.select("span.n[data-src]")
    assert [s["data-src"] for s in spans] == [
        "analytes.1.settings.0.value.0", "analytes.1.settings.0.value.1", "analytes.1.settings.0.study_value.0",
        "analytes.1.settings.0.study_value.1", "analytes.1.settings.1.value", "analytes.1.settings.1.study_value"]
    for span in spans:
        assert_correctly_rounded(span, lookup(results, span["data-src"]))
    assert soup.select_one("#analyte-0").select_one("table.analyte-settings") is None


@pytest.mark.parametrize("table", ["samples", "design"])
def test_tables_of_the_whole_study_are_refused(make_study, table):
    study = make_study(BODY + f"[analyte_settings.zinc.{table}]\nid = \"x\"\n",
                       files={"calibration.csv": TWO, "recovery.csv": RECOVERY})
    with pytest.raises(StudyError) as caught:
        read_study_file(study)
    assert caught.value.key == f"analyte_settings.zinc.{table}"
    assert f"[{table}] cannot be set per analyte" in caught.value.problem
