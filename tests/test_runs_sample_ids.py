"""Sample ids: the expected list, and near-duplicate ids (one edit apart) never passing in silence.

Edit distances are checked against a plain dynamic-programming Levenshtein distance written in
the test (hand computation, Levenshtein 1966); messages are this project's own wording
(common practice, no published source).
"""

from __future__ import annotations

import json

from bs4 import BeautifulSoup
from hypothesis import given
from hypothesis import strategies as st

from validator.cli import main
from validator.inputs.sample_ids import one_edit_apart

TYPO = "sample,response\nRB-01,5.1\nRB-O1,5.3\nRB-02,9.9\nRB-02,10.1\n"
BODY = '[calibration]\ndata = "calibration.csv"\n[samples]\ndata = "samples.csv"\n'


def levenshtein(a: str, b: str) -> int:
    previous = list(range(len(b) + 1))
    for i, ca in enumerate(a, start=1):
        current = [i]
        for j, cb in enumerate(b, start=1):
            current.append(min(previous[j] + 1, current[j - 1] + 1, previous[j - 1] + (ca != cb)))
        previous = current
    return previous[-1]


@given(st.text("AB0O-", max_size=6), st.text("AB0O-", max_size=6))
def test_one_edit_apart_is_levenshtein_distance_one(a, b):
    assert one_edit_apart(a, b) == (levenshtein(a, b) == 1)


def test_a_typo_without_an_expected_list_is_flagged(make_study, outside):
    from conftest import CALIBRATION
    study = make_study(BODY, {"calibration.csv": CALIBRATION, "samples.csv": TYPO})
    assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json,html"]) == 0
    results = json.loads((outside / "o" / "results.json").read_text(encoding="utf-8"))
    [warning] = results["sample_id_warnings"]
    assert (warning["ids"], warning["rows"]) == (["RB-01", "RB-O1"], [2, 3])
    soup = BeautifulSoup((outside / "o" / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    assert '"RB-O1" (row 3)' in soup.select_one('[data-sample-id-warning="0"]').get_text()


def test_a_typo_against_the_expected_list_is_an_error(make_study, capsys):
    from conftest import CALIBRATION
    study = make_study(BODY + 'expected = ["RB-01", "RB-02"]\n', {"calibration.csv": CALIBRATION, "samples.csv": TYPO})
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err == (
        'validator: error: samples.csv, row 3, column "sample": sample id "RB-O1" is not in [samples] expected; '
        'did you mean "RB-01"?\n')


def test_a_missing_expected_sample_and_a_wrong_count_are_errors(make_study, capsys):
    from conftest import CALIBRATION
    files = {"calibration.csv": CALIBRATION, "samples.csv": "sample,response\nRB-01,5.1\nRB-02,9.9\nRB-02,10.1\n"}
    study = make_study(BODY + 'expected = ["RB-01", "RB-02", "RB-03"]\n', files)
    assert main(["check", str(study)]) == 2
    assert 'key samples.expected[2]: expected sample "RB-03" has no reading' in capsys.readouterr().err
    study = make_study(BODY + 'expected = ["RB-01", "RB-02"]\nexpected_readings = 2\n', files)
    assert main(["check", str(study)]) == 2
    assert capsys.readouterr().err == (
        'validator: error: samples.csv, row 2, column "sample": sample "RB-01" has 1 reading(s) for analyte '
        '"T-1"; [samples] expected_readings = 2\n')
