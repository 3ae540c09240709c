"""The summary (pages 1-2) says what a QA reviewer signs for: excluded rows among the deviations,
the precision the criteria judge, the range actually demonstrated, ranges resting on failed
calibration criteria not called validated, characteristics a guideline preset requires but the
study does not show, and the remarks the criteria table only hints at."""

import json

from bs4 import BeautifulSoup

from conftest import CALIBRATION
from validator.cli import main

RECOVERY = ("added,found,series\n" + "".join(f"{lv},{lv * f},s{k}\n" for lv in (2, 8) for k, f in
                                              enumerate((0.98, 1.01, 0.99, 1.03, 0.97))))


def _run(study, out, expect=None):
    code = main(["run", str(study), "--out", str(out), "--format", "html,json"])
    if expect is not None:
        assert code == expect
    return (json.loads((out / "results.json").read_text()),
            BeautifulSoup((out / "dossier.html").read_text(), "html.parser"))


def test_excluded_rows_are_listed_among_the_deviations(make_study, outside):
    study = make_study('[calibration]\ndata = "calibration.csv"\n[recovery]\ndata = "recovery.csv"\n'
                       '[[exclusions]]\nfile = "recovery.csv"\nrow = 4\nreason = "vial cracked, see logbook"\n'
                       '[[exclusions]]\nfile = "calibration.csv"\nrow = 3\nreason = "injection error"\n',
                       files={"calibration.csv": CALIBRATION, "recovery.csv": RECOVERY})
    results, soup = _run(study, outside / "out")
    assert len(results["exclusions"]) == 2
    item = soup.select_one("#deviations + ul #excluded-rows").get_text(" ")
    assert "2 data row(s) excluded" in item
    assert "recovery.csv" in item and "row 4" in item and "vial cracked, see logbook" in item
    assert "calibration.csv" in item and "row 3" in item and "injection error" in item


def test_no_exclusion_no_item(make_study, outside):
    _, soup = _run(make_study(), outside / "out")
    assert soup.select_one("#excluded-rows") is None       # the cover says "none"


# a calibration with slight curvature and tight replicates, fitted by a straight line: every calibrator
# back-calculates within 15 % but the lack-of-fit test rejects the line (invented data, for the rule only)
CURVED = "concentration,response\n" + "".join(
    f"{x},{2.0 * x + 0.004 * x * x + d}\n" for x in (1, 2, 4, 8, 16) for d in (0.001, -0.001))


def test_a_range_on_a_failed_calibration_is_not_validated(make_study, outside):
    study = make_study('[calibration]\ndata = "calibration.csv"\nmodel = "linear"\nweighting = "none"\n',
                       files={"calibration.csv": CURVED})
    results, soup = _run(study, outside / "out", expect=1)
    (a,) = results["analytes"]
    verdicts = {c["id"]: c for c in a["criteria"]}
    assert verdicts["lack-of-fit"]["pass"] is False
    assert verdicts["back-calculation"]["pass"] is True
    wr = verdicts["working-range"]
    assert wr["pass"] is None and "lack-of-fit not met" in wr["note"]
    assert a["working_range"]["low"] is not None      # the passing calibrators still span a range
    cell = soup.select_one('#matrix tr[data-analyte="0"] td.range').get_text(" ")
    assert "none" in cell and "lack-of-fit not met" in cell
    conclusion = soup.select_one("#conclusion").get_text(" ")
    assert "Validated ranges" not in conclusion and "No validated range for" in conclusion
    assert "NOT validated" in soup.select_one("#characteristics-0").get_text(" ")


def test_every_preset_requires_registered_characteristics():
    from validator.registry import REGISTRY
    from validator.sector.presets import PRESETS, missing_requirements
    names = {e.name for e in REGISTRY}
    for preset in PRESETS.values():
        assert preset.requires, preset.name          # every preset says what a validation under it must show
        assert {r.characteristic for r in preset.requires} <= names
        assert missing_requirements(preset.name, names) == ()
    assert missing_requirements(None, ()) == ()
    # ICH M10 sec. 3.2.5 (from memory): accuracy and precision are part of a chromatographic validation
    assert "precision" in {r.characteristic for r in missing_requirements("ich-m10", ("calibration",))}


def test_a_preset_requirement_not_shown_is_not_passed(outside):
    from conftest import REPO
    results, soup = _run(REPO / "example_studies" / "plasma-lcms-bioanalytical" / "study.toml", outside / "out")
    (a,) = results["analytes"]
    assert "precision" not in a["characteristics_assessed"]       # every QC has a lot, condition or dilution
    c = next(c for c in a["criteria"] if c["id"] == "guideline-requires-precision")
    assert c["pass"] is None and "ich-m10" in c["note"] and "not shown is not passed" in c["note"]
    assert results["verdict"] == "incomplete" and a["verdict"] == "incomplete"
    note = soup.select_one("#guideline-note").get_text(" ")
    assert "recalled from memory" in note and "confirmed against the current text of the guideline" in note
    assert "within-run and between-run accuracy and precision" in note
    others = soup.select_one('#matrix tr[data-analyte="0"] td.others').get_text(" ")
    assert "precision (required, not shown)" in others and "stability" in others and "carry-over" in others
    remarks = soup.select_one("#remarks + ul").get_text(" ")
    assert "pooling the calibrators of all 3 runs" in remarks
    assert "fit for the intended use" not in soup.select_one("#conclusion").get_text(" ")
