"""[sample_preparation]: sample results in the reporting unit, x0, s(x0) and interval times the preparation factor.

Expected values: hand computation (factor = dilution x final volume / aliquot, applied to the
numbers results.json gives for the measured solution). Messages are this project's own wording.
"""

from __future__ import annotations

import json

import pytest

from conftest import CALIBRATION
from validator.cli import main

SAMPLES = "sample,response\nS1,5.1\nS1,5.3\nS2,9.9\n"
BODY = ('[calibration]\ndata = "calibration.csv"\n[samples]\ndata = "samples.csv"\n'
        '[sample_preparation]\nunit = "mg/kg"\ndilution_factor = 2\naliquot = 0.5\nfinal_volume = 25\n'
        'samples = { "S2" = { dilution_factor = 10 } }\n')


def test_results_scale_by_each_samples_factor(make_study, outside):
    study = make_study(BODY, {"calibration.csv": CALIBRATION, "samples.csv": SAMPLES})
    assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json,html"]) == 0
    results = json.loads((outside / "o" / "results.json").read_text(encoding="utf-8"))
    a = results["analytes"][0]
    measured = {s["id"]: s for s in a["samples"]}
    reported = {s["id"]: s for s in a["sample_preparation"]["samples"]}
    for sid, factor in (("S1", 2 * 25 / 0.5), ("S2", 10 * 25 / 0.5)):       # hand computation
        m, r = measured[sid], reported[sid]
        assert r["factor"] == pytest.approx(factor, rel=1e-15)
        assert r["value"] == pytest.approx(m["concentration"] * factor, rel=1e-15)
        assert r["std_error"] == pytest.approx(m["std_error"] * factor, rel=1e-15)
        assert r["ci"] == pytest.approx([m["ci"][0] * factor, m["ci"][1] * factor], rel=1e-15)
        assert r["ci_level"] == m["ci_level"]
        assert r["chain"].endswith(" mg/kg") and "final volume 25 / aliquot 0.5" in r["chain"]
    assert a["sample_preparation"]["unit"] == "mg/kg"
    assert 'data-reported="S2"' in (outside / "o" / "dossier.html").read_text(encoding="utf-8")


@pytest.mark.parametrize("extra, expected", [
    ('samples = { "S9" = { dilution_factor = 3 } }\n',
     'key sample_preparation.samples.S9: no sample has the id "S9", so this preparation would apply to nothing'),
    ("aliquot = 0.5\n",
     "aliquot and final_volume go together: give both (the factor is final_volume / aliquot) or neither"),
])
def test_preparation_mistakes_are_named(make_study, capsys, extra, expected):
    body = '[calibration]\ndata = "calibration.csv"\n[samples]\ndata = "samples.csv"\n[sample_preparation]\nunit = "mg/kg"\n'
    study = make_study(body + extra, {"calibration.csv": CALIBRATION, "samples.csv": SAMPLES})
    assert main(["check", str(study)]) == 2
    assert expected in capsys.readouterr().err
