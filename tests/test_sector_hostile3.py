"""Findings of the third hostile run against the sector characteristics (A to L), each fixed with a
test. Expected values: hand computations (named), scipy, or the stated rule with its source."""

from __future__ import annotations

import json
import math

import jsonschema
import numpy as np
import pytest
from scipy import stats

from validator.cli import main
from validator.errors import DataError, StudyError
from validator.inputs.loading import load_study
from validator.results import load_schema


def _run(study, outside, name="out"):
    out = outside / name
    code = main(["run", str(study), "--out", str(out), "--format", "json"])
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(results, load_schema(), cls=jsonschema.Draft202012Validator)
    return code, results


def _by_id(results, analyte=0):
    return {c["id"]: c for c in results["analytes"][analyte]["criteria"]}


def _na(results, analyte=0):
    return {e["item"]: e["reason"] for e in results["analytes"][analyte]["not_applicable"]}


def _cal():
    from conftest import CALIBRATION
    return CALIBRATION


# ------------------------------------------------------------------ A: MDL from spiked results around zero
MDL_BODY = """\
[calibration]
data = "calibration.csv"
[method_detection_limit]
spiked = "s.csv"
blanks = "b.csv"
mdl_max = 0.05
"""


def test_a_mdl_with_spiked_results_not_above_zero_is_not_passed(make_study, outside):
    spiked = [-0.002, -0.001, 0, 0.001, -0.003, 0.002, -0.001]
    files = {"calibration.csv": _cal(), "s.csv": "found\n" + "".join(f"{v}\n" for v in spiked),
             "b.csv": "found\n" + "ND\n" * 7}
    _, results = _run(make_study(MDL_BODY, files), outside)
    e = results["analytes"][0]["method_detection_limit"]
    # MDL_s is still computed and shown: t(0.99; 6) x SD (scipy's t quantile, hand computation)
    assert e["spiked"] == pytest.approx(stats.t.ppf(0.99, 6) * np.std(spiked, ddof=1), rel=1e-12)
    # from memory: 40 CFR 136 App. B Rev. 2, II(2): a spiked result that is not a numerical result above
    # zero means the spiked samples are repeated at a higher concentration: no MDL, no verdict
    assert e["value"] is None and "5 of 7 spiked results are not above zero" in e["reason"]
    crit = _by_id(results)["method-detection-limit"]
    assert crit["pass"] is None and "not above zero" in crit["note"]
    assert results["analytes"][0]["verdict"] != "pass"


def test_a_mdl_above_the_spike_level_is_not_passed(make_study, outside):
    spiked = [0.9, 1.3, 0.7, 1.5, 1.1, 0.6, 1.4]      # SD 0.34..., MDL_s = 3.143 x SD > 1 (hand computation)
    files = {"calibration.csv": _cal(),
             "s.csv": "found,spike_level\n" + "".join(f"{v},1\n" for v in spiked), "b.csv": "found\n" + "ND\n" * 7}
    _, results = _run(make_study(MDL_BODY.replace("0.05", "5"), files), outside)
    e = results["analytes"][0]["method_detection_limit"]
    mdl_s = stats.t.ppf(0.99, 6) * np.std(spiked, ddof=1)       # scipy t quantile
    assert mdl_s > 1 and e["spiked"] == pytest.approx(mdl_s, rel=1e-12) and e["spike_level"] == 1
    # from memory: 40 CFR 136 App. B: an MDL above the spike level is not determined by those spikes
    assert e["value"] is None and "above the spike level" in e["reason"]
    assert _by_id(results)["method-detection-limit"]["pass"] is None
    # below the spike level the MDL stands and is judged; without the column the null has its reason
    files["s.csv"] = "found,spike_level\n" + "".join(f"{v},5\n" for v in spiked)
    _, results = _run(make_study(MDL_BODY.replace("0.05", "5"), files), outside, "b")
    assert results["analytes"][0]["method_detection_limit"]["value"] == pytest.approx(mdl_s, rel=1e-12)
    assert _by_id(results)["method-detection-limit"]["pass"] is True
    files["s.csv"] = "found\n" + "".join(f"{v}\n" for v in spiked)
    _, results = _run(make_study(MDL_BODY, files), outside, "c")
    assert "no spike level" in _na(results)["method_detection_limit.spike_level"]


def test_a_spike_level_must_be_one_per_analyte(make_study):
    files = {"calibration.csv": _cal(), "s.csv": "found,spike_level\n1,1\n1.2,2\n", "b.csv": "found\nND\n"}
    with pytest.raises(DataError, match=r's.csv, row 3, column "spike_level"'):
        load_study(make_study(MDL_BODY, files))
