"""Re-validation against a previous results.json and method comparison, end to end."""

import json

import jsonschema
import pytest
from bs4 import BeautifulSoup

from conftest import REPO
from test_dossier import lookup, parse_shown
from validator.cli import main
from validator.report.text import SIG, SIG_P
from validator.results import load_schema

EXAMPLE = REPO / "example_studies" / "anions-after-maintenance" / "study.toml"


@pytest.fixture(scope="module")
def revalidation_out(tmp_path_factory):
    out = tmp_path_factory.mktemp("reval") / "out"
    assert main(["run", str(EXAMPLE), "--out", str(out), "--format", "json,html"]) == 1   # fluoride changed
    return out


def test_example_verdicts(revalidation_out):
    results = json.loads((revalidation_out / "results.json").read_text())
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    verdicts = {a["name"]: a["revalidation"]["verdict"] for a in results["analytes"]}
    assert verdicts == {"nitrate": "equivalent", "fluoride": "different"}
    prev = results["revalidation"]["previous"]
    assert prev["study_id"] == "WU-IC-2026-07" and len(prev["sha256"]) == 64
    assert any(f["role"] == "previous-results" and f["sha256"] == prev["sha256"] for f in results["inputs"])
    comparison = {a["name"]: a["comparison"]["verdict"] for a in results["analytes"]}
    assert comparison == {"nitrate": "pass", "fluoride": "fail"}
    for a in results["analytes"]:
        s = a["revalidation"]["slope"]
        assert s["change_ci_pct"][0] <= s["change_pct"] <= s["change_ci_pct"][1]
        p = 1 if a["revalidation"]["refit_through_origin"] else {"linear": 2, "quadratic": 3}[
            a["revalidation"]["refit_model"]]
        assert s["df"] == a["calibration"]["n"] + 21 - 2 * p    # previous runs had n = 21; joint fit, p per run


def test_dossier_opens_with_what_changed(revalidation_out):
    html = (revalidation_out / "dossier.html").read_text()
    assert html.index('id="changes"') < html.index('id="summary"')
    soup = BeautifulSoup(html, "html.parser")
    results = json.loads((revalidation_out / "results.json").read_text())
    for span in soup.select("#changes span.n[data-src]"):
        value = lookup(results, span["data-src"])
        shown = parse_shown(span.get_text())
        digits = SIG_P if span["data-src"].endswith("p_value") else SIG
        assert (shown is None) == (value is None)
        if value is not None:
            assert abs(shown - value) <= 0.5 * 10 ** (1 - digits) * abs(value) * 1.0000001
    assert len(soup.select("#changes svg")) == 4      # two overlays, two comparison figures


def test_initial_validation_has_no_change_section(tmp_path):
    out = tmp_path / "o"
    main(["run", str(REPO / "example_studies" / "anions-drinking-water" / "study.toml"), "--out", str(out),
          "--format", "html"])
    assert 'id="changes"' not in (out / "dossier.html").read_text()


CAL = "concentration,response\n1,2.01\n1,1.98\n2,4.02\n2,3.99\n4,8.02\n4,7.99\n8,15.99\n8,16.02\n"


def _previous(tmp_path, **changes):
    results = json.loads((REPO / "example_studies" / "anions-after-maintenance" / "previous-results.json").read_text())
    results["study"]["response_unit"] = "area"      # the test studies' response unit (conftest.STUDY_HEAD)
    for key, value in changes.items():      # one level deep, so a changed unit keeps the rest of "study"
        results[key] = {**results[key], **value} if isinstance(value, dict) else value
    (tmp_path / "prev.json").write_text(json.dumps(results))


@pytest.mark.parametrize("changes, message", [
    ({"schema_version": "2.0"}, 'prev.json: has schema version "2.0"; this validator reads version 1.x'),
    ({"study": {"concentration_unit": "µg/L"}},
     'prev.json: uses concentration unit "µg/L" but this study uses "mg/L"; results in different units '
     "cannot be compared"),
    ({"analytes": None}, "prev.json: is not a valid results.json: at JSON path $.analytes: None is not of type "
                         "'array'"),
])
def test_incompatible_previous_results(make_study, tmp_path, capsys, changes, message):
    _previous(tmp_path, **changes)
    study = make_study('[calibration]\ndata = "calibration.csv"\n[revalidation]\nprevious = "prev.json"\n',
                       {"calibration.csv": CAL})
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err == f"validator: error: {message}\n"


def test_a_revalidation_that_matches_nothing_is_an_input_error(make_study, tmp_path, outside, capsys):
    # formerly exit 0 "PASS" with revalidation null; now exit 2 naming both lists of analytes
    _previous(tmp_path)
    study = make_study('[calibration]\ndata = "calibration.csv"\n[revalidation]\nprevious = "prev.json"\n',
                       {"calibration.csv": CAL})
    assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json"]) == 2
    assert capsys.readouterr().err == (
        'validator: error: prev.json: shares no analyte with this study, so nothing was compared: this study has '
        '"T-1"; the previous results have "nitrate", "fluoride"; map renamed analytes with [revalidation] '
        'analytes = {new = "old"}\n')


def test_a_run_compared_with_itself_is_equivalent():
    # identity check: every change is zero, every two-sample p-value is 1
    from validator.characteristics.revalidation import RunSummary, assess_revalidation
    prev = json.loads((REPO / "example_studies" / "anions-after-maintenance" / "previous-results.json").read_text())
    for a in prev["analytes"]:
        run = RunSummary.from_results(a)
        r = assess_revalidation(run, run, slope_change_max_pct=5, residual_sd_ratio_max=2)
        assert r.slope.change_pct == 0 and r.slope.verdict == "equivalent"
        assert r.residual_sd.ratio == 1 and r.residual_sd.pvalue == pytest.approx(1)
        assert r.recovery.welch_pvalue == pytest.approx(1) and r.recovery.variance_f_pvalue == pytest.approx(1)
        assert all(c.f_pvalue == pytest.approx(1) for c in r.repeatability) and r.repeatability
