"""Findings of the second hostile black-box round (notes hostile-r2, findings 1, 5, 6, 7, 9, 10), each kept as a
test.

Data are invented for the tests; each expected value says where it comes from (hand computations beside them;
the rules are the README's and 40 CFR 136 Appendix B Rev. 2's).
"""

from __future__ import annotations

import json

import pytest

from _builders import RUN_COLUMNS, runs_tables
from conftest import STUDY_HEAD
from validator.engine import analyse_study
from validator.errors import DataError
from validator.inputs.loading import load_study
from validator.results import build_results
from validator.sector.mdl import method_detection_limit

LEVELS = (1, 2, 5, 10, 20)
LOW = (0.50, 0.53, 0.47, 0.52, 0.48, 0.51, 0.49)
BLANKS = (0.02, 0.05, 0.01, 0.04, 0.03)

RUNS = ('\n[calibration]\nmodel = "linear"\n' + runs_tables(f"run-{k}.csv" for k in (1, 2, 3)) + "\n" + RUN_COLUMNS
        + '\n[types]\ncalibrator = ["Cal"]\nblank = ["Blank"]\nlow_level = ["Low"]\n')


def _run_file(k: int, blanks=BLANKS, low=LOW, low_level="0.5") -> str:
    """Run ``k``'s export (the run's number in a comment row name keeps the three exports apart)."""
    rows = ["Sample,Type,Level,Area", f"Cal 0 run {k},Cal,0,0"]
    rows += [f"Cal {x},Cal,{x},{2 * x}" for x in LEVELS]           # response = 2 x exactly: found = area / 2
    rows += [f"Blank {i},Blank,,{2 * b}" for i, b in enumerate(blanks)]
    rows += [f"Low {i},Low,{low_level},{2 * v}" for i, v in enumerate(low)]
    return "\n".join(rows) + "\n"


def _results(study) -> dict:
    return json.loads(json.dumps(build_results(analyse_study(load_study(study)), generated_at="2026-01-01T00:00:00Z")))


def _criterion(entry: dict, cid: str) -> dict:
    return next(c for c in entry["criteria"] if c["id"] == cid)


# ---------------------------------------------------------------- finding 10: a declared [limit_of_blank] never vanishes

def test_a_declared_limit_of_blank_whose_runs_have_no_blank_is_not_applicable(make_study):
    study = make_study(RUNS + '[limit_of_blank]\nmethod = "nonparametric"\nlob_max = 0.2\n',
                       files={f"run-{i}.csv": _run_file(i, blanks=()) for i in (1, 2, 3)})
    entry = _results(study)["analytes"][0]
    gap = _criterion(entry, "limit_of_blank-data")
    # README: a declared table without data for the analyte -> not applicable, the analyte INCOMPLETE
    assert gap["pass"] is None and gap["note"].startswith("not applicable")
    assert "blank or zero injection" in gap["note"]
    assert entry["verdict"] != "PASS"


def test_the_mdl_without_any_method_blank_is_not_known(make_study):
    study = make_study(RUNS + "[method_detection_limit]\nmdl_max = 5\n",
                       files={f"run-{i}.csv": _run_file(i, blanks=()) for i in (1, 2, 3)})
    entry = _results(study)["analytes"][0]
    mdl = entry["method_detection_limit"]
    # 40 CFR 136 Appendix B Rev. 2, II(2): MDL = the higher of MDL_s and MDL_b; no blank -> MDL_b unknown
    assert mdl["n_blanks"] == 0 and mdl["spiked"] is not None
    assert mdl["value"] is None and "no method blank" in mdl["reason"]
    crit = _criterion(entry, "method-detection-limit")
    assert crit["pass"] is None and crit["note"].startswith("not applicable")
    assert entry["verdict"] != "PASS"


def test_the_mdl_function_without_blanks_gives_no_value():
    spiked = [0.50, 0.53, 0.47, 0.52, 0.48, 0.51, 0.49]
    r = method_detection_limit(spiked, [])
    assert r.value is None and r.spiked is not None and r.blank is None
    assert "unknown" in r.blank_reason
    # with one blank (fewer than 7) the MDL is still given, with the note (kept as before)
    r1 = method_detection_limit(spiked, [0.01, 0.02])
    assert r1.value is not None and any("fewer than the 7" in n for n in r1.notes)


# ---------------------------------------------------------------- finding 9: extreme areas refused at load

@pytest.mark.parametrize("row, bad", [(8, "1e101"), (2, "1e-101")])   # a blank's area; the lowest calibrator's
def test_an_area_beyond_the_magnitude_limit_is_an_input_error_naming_its_cell(make_study, row, bad):
    files = {f"run-{i}.csv": _run_file(i) for i in (1, 2, 3)}
    lines = files["run-1.csv"].splitlines()
    cells = lines[row - 1].split(",")
    cells[3] = bad
    lines[row - 1] = ",".join(cells)
    files["run-1.csv"] = "\n".join(lines) + "\n"
    study = make_study(RUNS + "[method_detection_limit]\n", files=files)
    with pytest.raises(DataError) as err:
        load_study(study)
    # the limit of validator.maths.regression.MAGNITUDE_LIMIT (1e50), as for the other tables
    assert err.value.row == row and err.value.column.lower() == "area" and "outside the magnitudes" in str(err.value)


# ---------------------------------------------------------------- finding 7: one empty low_level level is refused

def test_an_empty_level_among_given_low_level_levels_is_an_input_error(make_study):
    files = {f"run-{i}.csv": _run_file(i) for i in (1, 2, 3)}
    files["run-2.csv"] = files["run-2.csv"].replace("Low 0,Low,0.5,", "Low 0,Low,,")
    study = make_study(RUNS + "[method_detection_limit]\nmdl_max = 5\n", files=files)
    with pytest.raises(DataError) as err:
        load_study(study)
    # the header row is row 1, the run's comment calibrator row 2, 5 calibrators, 5 blanks: "Low 0" is row 13
    assert "run-2.csv" in str(err.value.file) and err.value.row == 13 and err.value.column == "Level"
    assert "no level" in str(err.value)


def test_low_level_injections_without_any_level_stay_allowed(make_study):
    files = {f"run-{i}.csv": _run_file(i, low_level="") for i in (1, 2, 3)}
    entry = _results(make_study(RUNS + "[method_detection_limit]\n", files=files))["analytes"][0]
    assert entry["method_detection_limit"]["spike_level"] is None        # optional, README


# ---------------------------------------------------------------- finding 6: the carry-over note names runs not judged

def _carry_run(k: int, blank_after_top: bool) -> str:
    rows = ["Sample,Type,Level,Area", f"Blank first {k},Blank,,1"]
    rows += [f"Cal {x},Cal,{x},{100 * x}" for x in LEVELS]
    rows += ["Blank after,Blank,,5" if blank_after_top else f"Low {k},Low,0.5,50"]
    return "\n".join(rows) + "\n"


def test_a_met_carry_over_names_the_runs_it_could_not_judge(make_study):
    files = {"run-1.csv": _carry_run(1, False), "run-2.csv": _carry_run(2, True), "run-3.csv": _carry_run(3, True)}
    body = RUNS + "[carry_over]\n[limit_of_blank]\n"
    entry = _results(make_study(body, files=files))["analytes"][0]
    crit = _criterion(entry, "carry-over")
    # hand computation: blank 5 / LLOQ (level 1) area 100 = 5 % <= 20 % (ICH M10), in runs 2 and 3
    assert crit["pass"] is True and crit["value"] == pytest.approx(5.0)
    assert "run(s) not judged: run-1" in crit["note"] and "no blank was injected right after" in crit["note"]
