"""The protocol stage: `validator protocol` before the data, `run --protocol` and its deviations."""

from __future__ import annotations

import hashlib
import json
import re

import jsonschema
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
import pytest

from conftest import CALIBRATION
from validator.cli import main
from validator.protocol import (ALL, LATER_KEYS, PROTOCOL_1_0_TABLES, canonical_text, counting_keys,
                                criteria_and_design, digest, later_additions, normalised, not_criteria)
from validator.results import load_schema
from validator.inputs.study import StudyConfig, read_study_file

DESIGN = """
[design.calibration]
levels = [1, 2, 4, 8, 16]
replicates = 2
"""
BODY = '[calibration]\ndata = "calibration.csv"\n' + DESIGN


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _protocol(make_study, outside, capsys, body=BODY, name="p"):
    study = make_study(body, files={})                  # no data file exists yet
    code, out, err = run(capsys, "protocol", study, "--out", outside / name,
                         "--approved-on", "2026-12-01", "--approved-by", "A. Approver")
    assert (code, err) == (0, "")
    return study, outside / name / "protocol.json"


def _write_study(study, body):
    text = study.read_text(encoding="utf-8")
    head = text[:text.index("[calibration]")]
    study.write_text(head + body, encoding="utf-8")


def test_protocol_works_without_data_and_verifies(make_study, outside, capsys):
    study, pj = _protocol(make_study, outside, capsys)
    assert not (study.parent / "calibration.csv").exists()
    folder = pj.parent
    assert sorted(p.name for p in folder.iterdir()) == ["manifest.json", "protocol.html", "protocol.json",
                                                        "protocol.pdf"]
    doc = json.loads(pj.read_text())
    assert doc["approved_on"] == "2026-12-01" and doc["approved_by"] == "A. Approver"
    assert doc["digest"] == hashlib.sha256(canonical_text(doc["design_and_criteria"]).encode()).hexdigest()
    assert doc["design_and_criteria"]["design"]["calibration"] == {"levels": [1.0, 2.0, 4.0, 8.0, 16.0],
                                                                   "replicates": 2, "runs": 1}
    html = (folder / "protocol.html").read_text()
    assert "approved on 2026-12-01 by A. Approver" in html and doc["digest"] in html
    assert "criteria.alpha" in html and "validator default" in html
    code, out, err = run(capsys, "verify", folder)
    assert code == 0 and "is intact" in out


def test_protocol_without_approval_says_so(make_study, outside, capsys):
    study = make_study(BODY, files={})
    code, out, _ = run(capsys, "protocol", study, "--out", outside / "p")
    assert code == 0 and "not yet approved" in out
    assert json.loads((outside / "p" / "protocol.json").read_text())["approved_on"] is None
    code, _, err = run(capsys, "protocol", study, "--out", outside / "q", "--approved-on", "2026-13-01",
                       "--approved-by", "X")
    assert code == 2 and err == 'validator: error: --approved-on: "2026-13-01" is not a date YYYY-MM-DD\n'


def test_canonical_text_by_hand():
    # hand computation: sorted keys, no spaces, floats in shortest round-trip form
    assert canonical_text({"b": [1.0, 0.1], "a": {"y": None, "x": True}}) == \
        '{"a":{"x":true,"y":null},"b":[1.0,0.1]}'


def _digest_of(make_study, body):
    return digest(normalised(read_study_file(make_study(body, files={})).config))


def test_digest_stable_under_reordering_and_explicit_defaults(make_study):
    base = _digest_of(make_study, BODY + "[criteria]\nalpha = 0.05\nback_calculation_tolerance_pct = 15\n")
    reordered = _digest_of(make_study, DESIGN + "[criteria]\nback_calculation_tolerance_pct = 15.0\n"
                           "alpha = 0.05\n" + '[calibration]\nmodel = "linear"\ndata = "calibration.csv"\n')
    implicit = _digest_of(make_study, BODY)                          # every value here is the default
    assert base == reordered == implicit
    changed = _digest_of(make_study, BODY + "[criteria]\nalpha = 0.01\n")
    assert changed != base
    free_text = _digest_of(make_study, BODY.replace("calibration.csv", "other.csv"))
    assert free_text == base                                         # a data path is not a criterion


def test_criteria_and_design_list_covers_the_whole_schema():
    """Every key of the study schema is either design/criteria or listed as not, never both."""
    for section, field in StudyConfig.model_fields.items():
        model = next(a for a in getattr(field.annotation, "__args__", (field.annotation,)) if a is not type(None))
        keys = set(model.model_fields)
        inc, exc = criteria_and_design().get(section), not_criteria().get(section)
        assert inc is not None or exc is not None, f"section {section} is in neither list"
        inc = keys if inc == ALL else set(inc or ())
        exc = keys if exc == ALL else set(exc or ())
        assert inc | exc == keys, f"{section}: {keys - inc - exc} in neither list"
        assert not inc & exc, f"{section}: {inc & exc} in both lists"


# The keys of the tables of protocol 1.0 that count, as they were when the lists were kept by hand
# (before they were derived from the settings models): a key that counts in one of these tables
# changes the digest of every study written before it, unless it is a later key left out while null.
PROTOCOL_1_0_KEYS = {
    "calibration": {"model", "weighting", "through_origin"},
    "samples": set(), "blanks": set(),
    "detection": {"lod_factor", "loq_factor", "readings_per_sample", "beta", "reporting_basis", "loq_rsd_max_pct"},
    "recovery": {"range_pct", "levels"},
    "precision": {"repeatability_rsd_max_pct", "intermediate_rsd_max_pct", "levels"},
    "reference_material": {"analyte", "certified_value", "standard_uncertainty", "coverage_factor",
                           "measurement_standard_uncertainty"},
    "revalidation": {"slope_change_max_pct", "residual_sd_ratio_max"},
    "comparison": {"error_ratio", "slope_limits", "intercept_limits", "percentage_differences"},
}


def test_protocol_1_0_tables_keep_their_keys():
    """A key added to a table of protocol 1.0 is either not counted or a later key that defaults to None."""
    counted = criteria_and_design()
    assert set(PROTOCOL_1_0_KEYS) == set(PROTOCOL_1_0_TABLES)
    for table, keys in PROTOCOL_1_0_KEYS.items():
        later = set(LATER_KEYS.get(table, ()))
        assert set(counted[table]) == keys | later, table
        settings = StudyConfig.model_fields[table].annotation
        settings = next(a for a in getattr(settings, "__args__", (settings,)) if a is not type(None))
        for key in later:
            assert settings.model_fields[key].default is None, f"{table}.{key}"
    for table in later_additions():
        assert table in LATER_KEYS or table not in PROTOCOL_1_0_TABLES


# The digests of the example studies, written down before the lists were derived from the registry's
# settings models (they were equal after). A change here changes the digest of every approved protocol
# of such a study: it is right only when the example study itself was edited.
EXAMPLE_DIGESTS = {
    "anions-drinking-water": "b2d38821baf041b4ca4a5ea5a7fc2eca01f3392116131f733b588138f41eea61",
    "anions-after-maintenance": "056d8811614692b8d8d663882ba501fd42c39cba848e8dd6a2d2e8b6dca47f5d",
    # the plasma example declares [reanalysis] study_samples = 400 since the ICH M10 size rule (its preset
    # sets size_rule = "ich-m10"): both keys count, so its digest changed then (was ea5296ab...)
    # its data became three run exports read through [[runs]] (issue #15): the files removed were data paths
    # and [[runs]], [columns], [types] do not count, so the digest was checked and stays the same
    "plasma-lcms-bioanalytical": "990dd90f010ced17710dfff5b8f359376e88c5b822147d22dddb96171a902604",
    "marbofloxacin-milk-runs": "b1e9048218fb79b513a0c33508d92bd1ad2e0a7a8ffb1d60f7dd88fc775cf25a",
}


@pytest.mark.parametrize("example", sorted(EXAMPLE_DIGESTS))
def test_digest_of_the_examples_is_unchanged(example):
    from pathlib import Path

    study = Path(__file__).parent.parent / "example_studies" / example / "study.toml"
    assert digest(normalised(read_study_file(study).config)) == EXAMPLE_DIGESTS[example]


def test_a_new_characteristic_table_is_derived_from_its_settings_model():
    """Data paths, sheet, header_row and keys marked {"protocol": False} are left out; the rest counts."""
    from typing import Optional

    from pydantic import ConfigDict, Field

    from validator.inputs.study import DataPath, DataSource, _Section

    class Toy(DataSource):
        other_file: Optional[DataPath] = None
        ids: list[str] = Field([], json_schema_extra={"protocol": False})
        limit_pct: float = Field(10.0, gt=0, le=100)

    class PathsOnly(_Section):
        where: DataPath

    class NotCounted(_Section):
        model_config = ConfigDict(json_schema_extra={"protocol": False})
        factor: float = 1.0

    assert counting_keys(Toy) == ("limit_pct",)
    assert counting_keys(PathsOnly) == ()                 # normalised to "assessed" when present
    assert counting_keys(NotCounted) is None              # the whole table is left out


def test_run_identical_to_protocol(make_study, outside, capsys):
    study, pj = _protocol(make_study, outside, capsys)
    (study.parent / "calibration.csv").write_text(CALIBRATION)      # 5 levels x 2 replicates, as declared
    code, out, err = run(capsys, "run", study, "--out", outside / "r", "--protocol", pj)
    assert (code, err) == (0, "")
    results = json.loads((outside / "r" / "results.json").read_text())
    jsonschema.validate(results, load_schema())
    p = results["protocol"]
    assert p["identical"] is True and p["deviations"] == []
    assert p["digest"] == json.loads(pj.read_text())["digest"]
    assert p["sha256"] == hashlib.sha256(pj.read_bytes()).hexdigest()
    assert not [c for a in results["analytes"] for c in a["criteria"] if c["id"] == "protocol-deviation"]
    html = (outside / "r" / "dossier.html").read_text()
    assert ("Design and acceptance criteria are identical to the approved protocol (digest "
            f'<span class="hash">{p["digest"]}</span>, approved on 2026-12-01 by A. Approver; the protocol folder is '
            "not signed, so its approval is not protected against editing)") in html
    assert p["signed_by_key"] is None


def test_run_with_one_criterion_changed_lists_exactly_that_deviation(make_study, outside, capsys):
    study, pj = _protocol(make_study, outside, capsys)
    (study.parent / "calibration.csv").write_text(CALIBRATION)
    _write_study(study, BODY + "[criteria]\nback_calculation_tolerance_pct = 10\n")
    code, out, err = run(capsys, "run", study, "--out", outside / "r", "--protocol", pj)
    assert code == 1 and out.startswith("validator: FAIL")
    results = json.loads((outside / "r" / "results.json").read_text())
    jsonschema.validate(results, load_schema())
    text = "deviation: criteria.back_calculation_tolerance_pct: protocol 15.0, run 10.0"
    assert results["protocol"]["identical"] is False
    assert results["protocol"]["deviations"] == [{"key": "criteria.back_calculation_tolerance_pct",
                                                 "protocol": 15.0, "run": 10.0, "analyte": None, "text": text}]
    assert results["verdict"] == "fail"
    deviations = [c for a in results["analytes"] for c in a["criteria"] if c["id"] == "protocol-deviation"]
    assert [(c["description"], c["pass"]) for c in deviations] == [(text, False)]
    html = (outside / "r" / "dossier.html").read_text()
    assert re.findall(r'<li data-deviation="[^"]*">([^<]*)</li>', html) == [text]
    assert "1 deviation(s) from the protocol" in html


def test_run_with_the_protocol_named_in_the_study_file(make_study, outside, capsys):
    study, pj = _protocol(make_study, outside, capsys)
    (study.parent / "calibration.csv").write_text(CALIBRATION)
    _write_study(study, BODY + f'[protocol]\nfile = "{pj}"\n')          # [protocol] is not a criterion
    code, _, err = run(capsys, "run", study, "--out", outside / "r")
    assert (code, err) == (0, "")
    assert json.loads((outside / "r" / "results.json").read_text())["protocol"]["identical"] is True


def test_design_differing_from_the_data_is_a_deviation(make_study, outside, capsys):
    study, pj = _protocol(make_study, outside, capsys, body=BODY.replace("replicates = 2", "replicates = 3"))
    (study.parent / "calibration.csv").write_text(CALIBRATION)      # 2 results per level, 3 declared
    code, _, _ = run(capsys, "run", study, "--out", outside / "r", "--protocol", pj)
    assert code == 1
    devs = json.loads((outside / "r" / "results.json").read_text())["protocol"]["deviations"]
    assert [(d["key"], d["protocol"], d["run"], d["analyte"]) for d in devs] == [
        ("design.calibration.replicates", 3, 2, "T-1")]           # one analyte: named after the study id


def test_a_design_deviation_counts_only_for_its_analyte(make_study, outside, capsys):
    study, pj = _protocol(make_study, outside, capsys)
    rows = CALIBRATION.strip().split("\n")[1:]
    data = "analyte,concentration,response\n" + "".join(f"a,{r}\n" for r in rows) + \
        "".join(f"b,{r}\n" for r in rows[::2])                   # b: one result per level, 2 declared
    (study.parent / "calibration.csv").write_text(data)
    code, _, _ = run(capsys, "run", study, "--out", outside / "r", "--protocol", pj)
    assert code == 1
    results = json.loads((outside / "r" / "results.json").read_text())
    per_analyte = {a["name"]: [c["description"] for c in a["criteria"] if c["id"] == "protocol-deviation"]
                   for a in results["analytes"]}
    assert per_analyte == {"a": [], "b": ["deviation: design.calibration.replicates: protocol 2, run 1 "
                                          "(analyte b)"]}


def test_a_protocol_edited_after_writing_is_refused(make_study, outside, capsys):
    study, pj = _protocol(make_study, outside, capsys)
    (study.parent / "calibration.csv").write_text(CALIBRATION)
    pj.write_text(pj.read_text().replace('"alpha": 0.05', '"alpha": 0.01'))
    code, _, err = run(capsys, "run", study, "--out", outside / "r", "--protocol", pj)
    assert code == 2 and err.startswith(f"validator: error: {pj}, key digest: its design_and_criteria do not "
                                        "match its digest")


def test_check_without_data_names_the_stage(make_study, capsys):
    study = make_study(BODY, files={})
    code, _, err = run(capsys, "check", study)
    assert code == 2
    assert err == (f"validator: error: calibration.csv: data file not found (looked for {study.parent}/"
                   "calibration.csv); `validator protocol` works without data, `check` and `run` need it\n")


def test_protocol_refuses_a_limit_at_an_unplanned_level(make_study, outside, capsys):
    body = BODY + ('[recovery]\ndata = "r.csv"\nlevels = [{ added = 3, range_pct = [80, 120] }]\n'
                   "[design.recovery]\nlevels = [1, 5]\nreplicates = 3\n")
    study = make_study(body, files={})
    code, _, err = run(capsys, "protocol", study, "--out", outside / "p")
    assert code == 2
    assert err == (f"validator: error: {study}, key recovery.levels[0].added: a limit at added = 3, a level "
                   "the design does not plan, would judge nothing\n")
    assert not (outside / "p").exists()


def test_a_protocol_folder_can_be_signed_and_verified(make_study, outside, capsys, tmp_path_factory):
    _study, pj = _protocol(make_study, outside, capsys)
    keys = tmp_path_factory.mktemp("keys")
    assert main(["keygen", str(keys / "qa.key")]) == 0
    code, out, err = run(capsys, "sign", pj.parent, "--key", keys / "qa.key")
    assert (code, err) == (0, "")
    code, out, _ = run(capsys, "verify", pj.parent, "--public-key", keys / "qa.key.pub")
    assert code == 0 and ": valid;" in out
    pj.write_text(pj.read_text().replace("A. Approver", "B. Other"))
    code, out, _ = run(capsys, "verify", pj.parent)
    assert code == 1 and "CHANGED" in out


def test_compare_lists_changed_added_and_removed_keys_and_the_study_id(make_study):
    from validator.protocol import compare

    study = read_study_file(make_study(BODY, files={}))
    protocol = {"study_id": "T-0", "design_and_criteria": normalised(study.config)}
    protocol["design_and_criteria"]["criteria"] = dict(protocol["design_and_criteria"]["criteria"],
                                                       alpha=0.01, old_key=1.0)
    del protocol["design_and_criteria"]["criteria"]["r_squared_min"]
    protocol["design_and_criteria"]["recovery"] = {"range_pct": [90.0, 110.0], "levels": []}
    texts = [d.text for d in compare(protocol, study)]
    assert texts == [
        "deviation: study.id: protocol T-0, run T-1",
        "deviation: criteria.alpha: protocol 0.01, run 0.05",
        "deviation: criteria.old_key: protocol 1.0, run not declared",
        "deviation: criteria.r_squared_min: protocol not declared, run none",
        'deviation: recovery: protocol {"levels": [], "range_pct": [90.0, 110.0]}, run none']


def test_a_file_that_is_not_a_protocol_is_refused(make_study, outside, capsys):
    study = make_study(BODY)
    bad = outside / "bad.json"
    bad.write_text("{}")
    code, _, err = run(capsys, "run", study, "--out", outside / "r", "--protocol", bad)
    assert code == 2 and err == (f'validator: error: {bad}, key protocol_version: is not a protocol.json written '
                                 'by validator ("protocol_version" is missing or not text)\n')
    code, _, err = run(capsys, "run", study, "--out", outside / "r", "--protocol", outside / "none.json")
    assert code == 2 and "protocol file not found" in err
    assert not (outside / "r").exists()


CRITERIA_LINES = ["alpha = 0.05", "back_calculation_tolerance_pct = 15", "lowest_level_tolerance_pct = 20.0",
                  "min_fraction_within_tolerance = 0.75", "r_squared_min = 0.99"]


@given(order=st.permutations(range(len(CRITERIA_LINES))), explicit=st.lists(st.booleans(), min_size=4, max_size=4))
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
def test_digest_invariant_under_key_order_and_explicit_defaults(make_study, order, explicit):
    """Property: any order of the [criteria] keys, any default written or left out: one digest."""
    # the first four lines are validator's defaults; r_squared_min is always written
    lines = [CRITERIA_LINES[i] for i in order if i == 4 or explicit[i]]
    body = BODY + "[criteria]\n" + "\n".join(lines) + "\n"
    assert _digest_of(make_study, body) == _digest_of(make_study, BODY + "[criteria]\nr_squared_min = 0.99\n")


def test_a_forged_approval_is_refused_and_a_signed_protocol_is_named(make_study, outside, tmp_path, capsys):
    # hostile-test finding: approved_on/approved_by edited in protocol.json (digest untouched, as it covers
    # only design and criteria) was shown as the approval; the protocol folder must verify as a record
    study, pj = _protocol(make_study, outside, capsys)
    (study.parent / "calibration.csv").write_text(CALIBRATION)
    original = pj.read_text()
    doc = json.loads(original)
    doc["approved_by"] = "Head of QA"
    pj.write_text(json.dumps(doc))
    code, _, err = run(capsys, "run", study, "--out", outside / "r1", "--protocol", pj)
    assert code == 2 and "its folder changed since validator wrote it" in err and err.count("\n") == 1
    pj.write_text(original)
    # signed: the run names the key (the same fingerprint verify prints)
    key = tmp_path / "keys" / "qa.key"
    key.parent.mkdir()
    assert main(["keygen", str(key)]) == 0
    assert main(["sign", str(pj.parent), "--key", str(key)]) == 0
    capsys.readouterr()
    code, _, err = run(capsys, "run", study, "--out", outside / "r2", "--protocol", pj)
    assert (code, err) == (0, "")
    p = json.loads((outside / "r2" / "results.json").read_text())["protocol"]
    signed = json.loads((pj.parent / "signature.json").read_text())["signed"]
    assert p["signed_by_key"] == signed["key_fingerprint"]
    assert p["signed_by_key"] and f"protocol folder signed by key {p['signed_by_key']}" in \
        (outside / "r2" / "dossier.html").read_text()


def test_an_approval_dated_after_the_protocol_is_refused(make_study, outside, capsys):
    study, pj = _protocol(make_study, outside, capsys)
    doc = json.loads(pj.read_text())
    doc["approved_on"] = "2099-01-01"
    from validator.protocol import read_protocol
    pj.write_text(json.dumps(doc))
    with pytest.raises(Exception, match="later than the day the protocol was written"):
        read_protocol(str(pj))


def test_an_approval_in_the_future_is_refused_when_writing(make_study, outside, capsys):
    study = make_study(BODY, files={})
    code, _, err = run(capsys, "protocol", study, "--out", outside / "p", "--approved-on", "2999-01-01",
                       "--approved-by", "A. Approver")
    assert code == 2 and "is later than today" in err and err.count("\n") == 1


def test_verify_with_the_study_hashes_the_protocol_again(make_study, outside, capsys):
    """verify --study re-reads every recorded input, the approved protocol.json included.
    # expected values: the documented behaviour of verify (README, "Verifying an output folder")
    """
    study, pj = _protocol(make_study, outside, capsys)
    (study.parent / "calibration.csv").write_text(CALIBRATION)
    code, _, err = run(capsys, "run", study, "--out", outside / "r", "--protocol", pj)
    assert (code, err) == (0, "")
    code, out, _ = run(capsys, "verify", outside / "r", "--study", study)
    assert code == 0, out
    pj.write_bytes(pj.read_bytes() + b"\n")                     # the approved record changed afterwards
    code, out, _ = run(capsys, "verify", outside / "r", "--study", study)
    assert code == 1 and f"protocol {pj} differs from the SHA-256 recorded in results.json" in out
    pj.unlink()
    code, out, _ = run(capsys, "verify", outside / "r", "--study", study)
    assert code == 1 and f"protocol {pj} is missing" in out
