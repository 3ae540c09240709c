"""Output safety, `validator verify`, and degenerate-but-legal data."""

import hashlib
import json
import warnings

import numpy as np
import pytest

from conftest import REPO
from validator.calibration import analyse_calibration, quantify
from validator.cli import main

DEMO = REPO / "example_studies" / "anions-drinking-water" / "study.toml"


@pytest.fixture(scope="module")
def run_once(tmp_path_factory):
    folder = tmp_path_factory.mktemp("verify")
    # a private copy of the demo inputs, so that the tests can change bytes in them
    inputs = folder / "inputs"
    inputs.mkdir()
    for f in DEMO.parent.iterdir():
        (inputs / f.name).write_bytes(f.read_bytes())
    out = folder / "out"
    assert main(["run", str(inputs / "study.toml"), "--out", str(out), "--format", "json,html"]) == 0
    return inputs, out


def test_manifest_lists_every_output(run_once):
    _, out = run_once
    manifest = json.loads((out / "manifest.json").read_text())
    names = {e["file"] for e in manifest["files"]}
    assert names == {"results.json", "dossier.html"}
    for e in manifest["files"]:
        assert e["sha256"] == hashlib.sha256((out / e["file"]).read_bytes()).hexdigest()


def test_verify_intact(run_once, capsys):
    inputs, out = run_once
    assert main(["verify", str(out), "--study", str(inputs / "study.toml")]) == 0
    assert "is intact" in capsys.readouterr().out


def _flip_one_byte(path):
    data = bytearray(path.read_bytes())
    i = len(data) // 2
    data[i] = (data[i] + 1) % 256 if data[i] not in (10, 13) else data[i]
    if bytes(data) == path.read_bytes():
        data[i - 1] ^= 1
    path.write_bytes(bytes(data))


@pytest.mark.parametrize("name", ["results.json", "dossier.html"])
def test_verify_detects_one_byte_change_in_output(run_once, tmp_path, capsys, name):
    import shutil
    _, out = run_once
    copy = tmp_path / "copy"
    shutil.copytree(out, copy)
    _flip_one_byte(copy / name)
    assert main(["verify", str(copy)]) == 1
    assert capsys.readouterr().out == f"validator: CHANGED: output {name} differs from the manifest\n"


@pytest.mark.parametrize("name", ["study.toml", "calibration.csv", "samples.csv", "precision.csv"])
def test_verify_detects_one_byte_change_in_input(run_once, capsys, name):
    inputs, out = run_once
    original = (inputs / name).read_bytes()
    try:
        _flip_one_byte(inputs / name)
        assert main(["verify", str(out), "--study", str(inputs / "study.toml")]) == 1
        shown = "study.toml" if name == "study.toml" else name
        text = capsys.readouterr().out
        assert f"input {inputs / 'study.toml' if name == 'study.toml' else shown}" in text
    finally:
        (inputs / name).write_bytes(original)


def test_verify_refuses_a_folder_without_manifest(tmp_path, capsys):
    assert main(["verify", str(tmp_path)]) == 2
    assert capsys.readouterr().err == (f"validator: error: {tmp_path}: no manifest.json; "
                                       "is this a validator output folder?\n")


def test_inputs_are_never_modified(run_once):
    inputs, _ = run_once
    before = {p.name: p.read_bytes() for p in inputs.iterdir()}
    main(["run", str(inputs / "study.toml"), "--out", str(inputs.parent / "o2"), "--format", "json"])
    assert {p.name: p.read_bytes() for p in inputs.iterdir()} == before


def test_crash_mid_render_leaves_no_partial_output(make_study, outside, monkeypatch, capsys):
    import validator.report as report

    def boom(*a, **k):
        raise RuntimeError("renderer exploded")
    monkeypatch.setattr(report, "write_pdf", boom)
    study = make_study()
    out = outside / "out"
    assert main(["run", str(study), "--out", str(out)]) == 3
    assert not out.exists()
    assert list(outside.iterdir()) == []          # no partial folder, no lock file
    assert capsys.readouterr().err.startswith("validator: internal error: RuntimeError: renderer exploded")


def test_force_replaces_only_after_success(make_study, outside, monkeypatch):
    import validator.report as report
    study = make_study()
    out = outside / "out"
    assert main(["run", str(study), "--out", str(out), "--format", "json"]) == 0
    before = (out / "results.json").read_bytes()
    monkeypatch.setattr(report, "render_dossier", lambda *a, **k: (_ for _ in ()).throw(RuntimeError("x")))
    assert main(["run", str(study), "--out", str(out), "--force"]) == 3
    assert (out / "results.json").read_bytes() == before       # the old output is intact


# --- degenerate but legal data ----------------------------------------------------------------

def test_no_numpy_warning_reaches_the_user(make_study, outside):
    # an exact fit and a single-replicate design: every degenerate case becomes a stated diagnostic
    study = make_study(files={"calibration.csv": "concentration,response\n1,2\n2,4\n3,6\n4,8\n1,2\n"})
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json,html"]) == 0
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    assert any("exact" in d for d in a["diagnostics"])
    assert a["calibration"]["normality"] is None


def test_two_levels_through_origin(make_study, outside):
    study = make_study('[calibration]\ndata = "calibration.csv"\nthrough_origin = true\n',
                       {"calibration.csv": "concentration,response\n1,2.01\n1,1.99\n5,10.02\n5,9.97\n"})
    assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json"]) == 0
    cal = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]["calibration"]
    assert set(cal["coefficients"]) == {"slope"} and cal["through_origin"]


@pytest.mark.parametrize("scale", [1e-12, 1.0, 1e12])
def test_extreme_magnitudes_give_the_same_relative_results(scale):
    # same data in units 1e-12 and 1e12 times larger: relative results must agree to 1e-9
    x = np.repeat([1.0, 2, 5, 10, 20], 3)
    y = 0.1 + 3.0 * x + np.random.default_rng(2).normal(0, 0.05, x.size)
    ref = analyse_calibration(x, y, weighting="1/x")
    res = analyse_calibration(x * scale, y * scale, weighting="1/x")
    assert res.fit.coefficients["slope"].estimate == pytest.approx(ref.fit.coefficients["slope"].estimate, rel=1e-9)
    assert res.fit.residual_sd == pytest.approx(ref.fit.residual_sd * scale, rel=1e-9)
    assert res.lack_of_fit.statistic == pytest.approx(ref.lack_of_fit.statistic, rel=1e-7)
    assert res.normality.statistic == pytest.approx(ref.normality.statistic, rel=1e-7)
    q_ref, q = quantify(ref.fit, "s", [30.0]), quantify(res.fit, "s", [30.0 * scale])
    assert q.concentration == pytest.approx(q_ref.concentration * scale, rel=1e-9)
    assert q.std_error == pytest.approx(q_ref.std_error * scale, rel=1e-8)
    assert [b.deviation_pct for b in res.back_calculated] == pytest.approx(
        [b.deviation_pct for b in ref.back_calculated], rel=1e-7, abs=1e-9)


def test_very_unbalanced_precision(make_study, outside):
    rows = ["level,series,found"]
    sizes = {"d1": 12, "d2": 2, "d3": 3}
    rng = np.random.default_rng(4)
    for s, n in sizes.items():
        rows += [f"5,{s},{5 + rng.normal(0, 0.05):.4f}" for _ in range(n)]
    study = make_study(CALIB_PREC, {"calibration.csv": CAL_OK, "p.csv": "\n".join(rows) + "\n"})
    assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json"]) == 0
    lv = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]["precision"]["levels"][0]
    n0 = (17 - (144 + 4 + 9) / 17) / 2          # ISO 5725-2 n0, hand arithmetic
    assert lv["n0"] == pytest.approx(n0)
    assert lv["n"] == 17 and lv["series"] == 3


CAL_OK = "concentration,response\n1,2.01\n1,1.98\n2,4.02\n2,3.99\n4,8.02\n4,7.99\n8,15.99\n8,16.02\n"
CALIB_PREC = '[calibration]\ndata = "calibration.csv"\n[precision]\ndata = "p.csv"\n'
