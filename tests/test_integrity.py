"""Output safety, `validator verify`, and degenerate-but-legal data."""

import hashlib
import json
import warnings

import numpy as np
import pytest

from conftest import REPO
from validator.characteristics.calibration import analyse_calibration, quantify
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


@pytest.mark.parametrize("name", ["study.toml", "calibration.csv", "samples.csv", "precision-runs.csv"])
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
        # lack of fit cannot be tested on an exact fit: not applicable, so the run is INCOMPLETE (exit 1)
        assert main(["run", str(study), "--out", str(outside / "o"), "--format", "json,html"]) == 1
    a = json.loads((outside / "o" / "results.json").read_text())["analytes"][0]
    assert a["verdict"] == "incomplete"
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


# --- verify stays inside its folder (rules: validator/inputs/integrity.py docstring) --------------------
# Every expectation below is a rule of validator's own design: # common practice, no published source.

import os  # noqa: E402
import shutil  # noqa: E402
from pathlib import Path  # noqa: E402

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

import validator.inputs.integrity as integrity  # noqa: E402


@pytest.fixture
def copy_of(run_once, tmp_path):
    """A private copy of the demo output, and the demo inputs."""
    inputs, out = run_once
    copy = tmp_path / "copy"
    shutil.copytree(out, copy)
    return inputs, copy


def _manifest(folder):
    return json.loads((folder / "manifest.json").read_text())


def _set_manifest(folder, doc):
    (folder / "manifest.json").write_text(json.dumps(doc))


def test_manifest_is_marked_as_ours(run_once):
    assert _manifest(run_once[1])["written_by"] == "validator"


def test_verify_reads_an_older_manifest(copy_of, capsys):
    _, copy = copy_of
    _set_manifest(copy, {"files": _manifest(copy)["files"]})
    assert main(["verify", str(copy)]) == 0


@pytest.mark.parametrize("name", ["../../../../etc/hostname", "/etc/hostname", "..", ".", "a/../results.json",
                                  "sub/x", "", "a\\b", "manifest.json"])
def test_manifest_names_outside_the_folder_are_refused(copy_of, capsys, name):
    _, copy = copy_of
    target = Path("/etc/hostname")
    digest = hashlib.sha256(target.read_bytes()).hexdigest() if target.is_file() else "0" * 64
    size = target.stat().st_size if target.is_file() else 0
    doc = _manifest(copy)
    doc["files"].append({"file": name, "sha256": digest, "bytes": size})
    _set_manifest(copy, doc)
    assert main(["verify", str(copy)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"validator: error: {copy / 'manifest.json'}, files[2]: \"file\" must be the plain name")


def test_a_listed_symlink_is_not_followed(copy_of, tmp_path, capsys):
    _, copy = copy_of
    outside = tmp_path / "elsewhere.json"
    outside.write_bytes((copy / "results.json").read_bytes())
    (copy / "results.json").unlink()
    (copy / "results.json").symlink_to(outside)
    assert main(["verify", str(copy)]) == 1
    assert capsys.readouterr().out == "validator: CHANGED: output results.json is a symbolic link (not followed)\n"


def test_a_huge_listed_file_is_not_read(copy_of, capsys, monkeypatch):
    _, copy = copy_of
    with open(copy / "dossier.html", "r+b") as fh:
        fh.truncate(50 << 30)                     # sparse 50 GiB: reading it would hang the test
    opened = []
    real_open = os.fdopen

    def spy(fd, *a, **k):
        fh = real_open(fd, *a, **k)
        opened.append(fh)
        return fh
    monkeypatch.setattr(integrity.os, "fdopen", spy)
    assert main(["verify", str(copy)]) == 1
    out = capsys.readouterr().out
    assert f"output dossier.html has {50 << 30} bytes" in out and "recorded" in out


def test_sub_folders_and_added_files_are_reported(copy_of, capsys):
    _, copy = copy_of
    (copy / "extra.txt").write_text("x")
    (copy / "sub").mkdir()
    (copy / "link").symlink_to("/etc")
    assert main(["verify", str(copy)]) == 1
    assert capsys.readouterr().out == ("validator: CHANGED: output extra.txt is not in the manifest\n"
                                       "validator: CHANGED: output link is a symbolic link not in the manifest\n"
                                       "validator: CHANGED: output folder sub/ is not in the manifest\n")


MALFORMED = [
    ("not json", b"{files: ", "is not valid JSON"),
    ("not utf-8", b'{"files": ["\xff"]}', "is not UTF-8 text"),
    ("a list", b"[]", 'expected an object with a "files" list'),
    ("files not a list", b'{"files": {}}', 'expected an object with a "files" list'),
    ("entry not an object", b'{"files": [1]}', "files[0]: expected an object"),
    ("file not text", b'{"files": [{"file": 1, "sha256": "' + b"0" * 64 + b'", "bytes": 1}]}', '"file" must be'),
    ("sha256 short", b'{"files": [{"file": "a", "sha256": "abc", "bytes": 1}]}', '"sha256" must be'),
    ("bytes negative", b'{"files": [{"file": "a", "sha256": "' + b"0" * 64 + b'", "bytes": -1}]}', '"bytes" must'),
    ("bytes bool", b'{"files": [{"file": "a", "sha256": "' + b"0" * 64 + b'", "bytes": true}]}', '"bytes" must'),
    ("missing key", b'{"files": [{"file": "a", "bytes": 1}]}', '"sha256" must be'),
    ("written_by number", b'{"written_by": 7, "files": []}', '"written_by" must be text'),
    ("listed twice", b'{"files": [' + b",".join([b'{"file": "a", "sha256": "' + b"0" * 64 + b'", "bytes": 1}'] * 2)
     + b"]}", "is listed twice"),
    ("deeply nested", b"[" * 200_000 + b"]" * 200_000, "nested too deeply"),
]


@pytest.mark.parametrize("case, content, message", MALFORMED, ids=[m[0] for m in MALFORMED])
def test_malformed_manifest_exits_2_naming_the_file(copy_of, capsys, case, content, message):
    _, copy = copy_of
    (copy / "manifest.json").write_bytes(content)
    assert main(["verify", str(copy)]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"validator: error: {copy / 'manifest.json'}") and message in err
    assert err.count("\n") == 1


def test_huge_manifest_is_not_read(copy_of, capsys):
    _, copy = copy_of
    with open(copy / "manifest.json", "r+b") as fh:
        fh.truncate(integrity.MAX_JSON_BYTES + 1)
    assert main(["verify", str(copy)]) == 2
    assert "is larger than" in capsys.readouterr().err


@pytest.mark.parametrize("kind", ["symlink", "folder"])
def test_manifest_that_is_not_a_regular_file(copy_of, capsys, kind):
    _, copy = copy_of
    real = (copy / "manifest.json").read_bytes()
    (copy / "manifest.json").unlink()
    if kind == "symlink":
        (copy.parent / "m.json").write_bytes(real)
        (copy / "manifest.json").symlink_to(copy.parent / "m.json")
    else:
        (copy / "manifest.json").mkdir()
    assert main(["verify", str(copy)]) == 2
    assert capsys.readouterr().err.startswith(f"validator: error: {copy / 'manifest.json'}: is ")


@pytest.mark.parametrize("content, message", [
    (b"{", "is not valid JSON"),
    (b"{}", 'expected an object with a non-empty "inputs" list'),
    (b'{"inputs": [{"role": "study"}]}', "inputs[0]: expected an object with role, path, sha256 and bytes"),
    (b'{"inputs": [{"role": "study", "path": 3, "sha256": "x", "bytes": 1}]}', '"role" and "path" must be text'),
    (b'{"inputs": [{"role": "data", "path": "a", "sha256": "' + b"0" * 64 + b'", "bytes": 1}]}',
     "the first input must be the study file"),
])
def test_corrupt_results_json_with_study_exits_2(copy_of, capsys, content, message):
    inputs, copy = copy_of
    (copy / "results.json").write_bytes(content)
    assert main(["verify", str(copy), "--study", str(inputs / "study.toml")]) == 2
    err = capsys.readouterr().err
    assert err.startswith(f"validator: error: {copy / 'results.json'}") and message in err


@pytest.mark.parametrize("path", ["../../../../etc/hostname", "/etc/hostname", "../inputs/study.toml"])
def test_recorded_inputs_not_named_by_the_study_are_not_read(copy_of, capsys, monkeypatch, path):
    inputs, copy = copy_of
    results = json.loads((copy / "results.json").read_text())
    target = (inputs / path) if not path.startswith("/") else Path(path)
    data = target.read_bytes() if target.is_file() else b""
    results["inputs"][1].update(path=path, sha256=hashlib.sha256(data).hexdigest(), bytes=len(data))
    (copy / "results.json").write_text(json.dumps(results))
    opened = []
    real = os.open
    monkeypatch.setattr(integrity.os, "open", lambda p, *a, **k: opened.append(str(p)) or real(p, *a, **k))
    assert main(["verify", str(copy), "--study", str(inputs / "study.toml")]) == 1
    out = capsys.readouterr().out
    assert f"validator: CHANGED: input {path} is not named by {inputs / 'study.toml'}; not read\n" in out
    assert "intact" not in out and not any(o.endswith("hostname") for o in opened)


# Hypothesis: a fuzzed manifest never gives exit 3 and never makes verify open a file outside the folder.
NAMES = st.one_of(st.sampled_from(["results.json", "dossier.html", "../secret", "/etc/hostname", "..", ".",
                                   "sub/x", "", "manifest.json", "a\x00b", "secret"]),
                  st.text(max_size=12))
JSON_LEAF = st.one_of(st.none(), st.booleans(), st.integers(-2, 2**40), st.floats(allow_nan=False),
                      st.text(max_size=8))
ANY_JSON = st.recursive(JSON_LEAF, lambda inner: st.one_of(st.lists(inner, max_size=4),
                                                           st.dictionaries(st.text(max_size=6), inner, max_size=4)),
                        max_leaves=12)
ENTRY = st.fixed_dictionaries({"file": st.one_of(NAMES, ANY_JSON),
                               "sha256": st.one_of(st.just("0" * 64), st.sampled_from(["x", 5, None]), ANY_JSON),
                               "bytes": st.one_of(st.integers(-5, 2**62), st.booleans(), ANY_JSON)})
MANIFEST_DOC = st.one_of(ANY_JSON, st.fixed_dictionaries(
    {"files": st.one_of(st.lists(st.one_of(ENTRY, ANY_JSON), max_size=4), ANY_JSON)},
    optional={"written_by": st.one_of(st.just("validator"), ANY_JSON)}))


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(doc=MANIFEST_DOC, raw=st.one_of(st.none(), st.binary(max_size=40)))
def test_fuzzed_manifest_never_crashes_or_reads_outside(run_once, tmp_path_factory, doc, raw):
    _, out = run_once
    base = tmp_path_factory.mktemp("fuzzv")
    (base / "secret").write_text("secret")
    folder = base / "out"
    folder.mkdir()
    for name in ("results.json", "dossier.html"):
        (folder / name).write_bytes((out / name).read_bytes())
    (folder / "manifest.json").write_bytes(raw if raw is not None else json.dumps(doc).encode())
    opened = []
    real = os.open

    def spy(p, *a, **k):
        opened.append(os.path.realpath(p))
        return real(p, *a, **k)
    os_open, integrity.os.open = integrity.os.open, spy
    try:
        code = main(["verify", str(folder)])
    finally:
        integrity.os.open = os_open
    assert code in (0, 1, 2)
    assert all(Path(p).parent == folder.resolve() for p in opened), opened
