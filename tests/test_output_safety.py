"""Output safety: where --out may be, what --force replaces, the lock, partial folders, kills.

Every expectation here is a rule of validator's own design (README, "The output"; module
docstring of validator/output.py): # common practice, no published source.
"""

from __future__ import annotations

import errno
import fcntl
import json
import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest

import validator.inputs.integrity as integrity
import validator.output as output
from conftest import CALIBRATION, REPO, STUDY_HEAD
from validator.cli import main
from validator.errors import OutputError

REAL_REMOVE = output.remove_own_folder
STUDY = STUDY_HEAD + '[calibration]\ndata = "calibration.csv"\n'


@pytest.fixture
def lab(tmp_path):
    """tmp_path/study/{study.toml, calibration.csv, notes.txt}, tmp_path/outputs/ (empty)."""
    (tmp_path / "study").mkdir()
    (tmp_path / "study" / "study.toml").write_text(STUDY)
    (tmp_path / "study" / "calibration.csv").write_text(CALIBRATION)
    (tmp_path / "study" / "notes.txt").write_text("unrelated file of the user")
    (tmp_path / "outputs").mkdir()
    return tmp_path


def _tree(folder: Path) -> dict:
    return {str(p.relative_to(folder)): (p.read_bytes() if p.is_file() and not p.is_symlink() else None)
            for p in sorted(folder.rglob("*"))}


def _run(capsys, *args):
    code = main(["run", *map(str, args)])
    out, err = capsys.readouterr()
    return code, out, err


def _never_delete(monkeypatch):
    """Make every deletion path fail loudly; returns the list of attempted targets."""
    attempts = []

    def refuse(path, *a, **k):
        attempts.append(str(path))
        raise AssertionError(f"deletion reached for {path}")
    monkeypatch.setattr(output, "remove_own_folder", refuse)
    monkeypatch.setattr(output.shutil, "rmtree", refuse)
    return attempts


# --- where --out may be ------------------------------------------------------------------------

def test_out_dot_in_the_study_folder_is_refused(lab, monkeypatch, capsys):
    monkeypatch.chdir(lab / "study")
    before = _tree(lab)
    code, _, err = _run(capsys, "study.toml", "--out", ".", "--force", "--format", "json")
    assert code == 2
    assert err == (f"validator: error: .: {lab / 'study'} is or contains the current folder; "
                   "choose another --out\n")
    assert _tree(lab) == before


@pytest.mark.parametrize("where, relation", [
    ("study", "is"), (".", "contains"), ("study/out", "lies inside")])
def test_out_near_an_input_folder_is_refused(lab, capsys, where, relation):
    before = _tree(lab)
    out = lab / where
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--force", "--format", "json")
    assert code == 2
    assert err == (f"validator: error: {out}: {out.resolve()} {relation} the folder of the input "
                   f"{lab / 'study' / 'study.toml'}; outputs and inputs are kept apart, choose another --out\n")
    assert _tree(lab) == before


def test_out_is_the_folder_of_a_data_file(lab, capsys):
    (lab / "data").mkdir()
    (lab / "data" / "cal.csv").write_text(CALIBRATION)
    (lab / "study" / "study.toml").write_text(STUDY.replace('"calibration.csv"', '"../data/cal.csv"'))
    before = _tree(lab)
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", lab / "data", "--force")
    assert code == 2 and "is the folder of the input" in err and "cal.csv" in err
    assert _tree(lab) == before


def test_out_parent_of_the_current_folder_is_refused(lab, monkeypatch, capsys):
    (lab / "outputs" / "deep").mkdir()
    monkeypatch.chdir(lab / "outputs" / "deep")
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", lab / "outputs", "--force")
    assert code == 2 and "is or contains the current folder" in err


@pytest.mark.parametrize("where", ["/", "/etc", "/usr", "/usr/local/validator-out", "/bin", "/home",
                                   "/tmp", "HOME"])
def test_system_folders_are_refused_and_nothing_is_deleted(lab, monkeypatch, capsys, where):
    attempts = _never_delete(monkeypatch)
    home = lab / "home"
    home.mkdir()
    monkeypatch.setenv("HOME", str(home))
    out = str(home) if where == "HOME" else where
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--force", "--format", "json")
    assert code == 2, err
    assert "system folder" in err or "home folder" in err or "symbolic link" in err     # /bin -> usr/bin
    assert attempts == []


def test_root_is_never_handed_to_the_deletion_function(lab, monkeypatch, capsys):
    # even past the path rules: if --out / slipped through, the deletion function would refuse
    attempts = _never_delete(monkeypatch)
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", "/", "--force")
    assert code == 2 and err == "validator: error: /: / is or contains the system folder /; choose another --out\n"
    assert attempts == []
    with pytest.raises(RuntimeError, match="refusing to delete /"):
        REAL_REMOVE(Path("/"))          # refused by name before anything is touched (rmtree is patched)


@pytest.mark.parametrize("name", ["plain", ".out.partial-abc", ".out.old-abc"])
def test_deletion_function_refuses_what_it_did_not_make(tmp_path, name):
    folder = tmp_path / name
    folder.mkdir()
    (folder / "precious.txt").write_text("x")
    with pytest.raises(RuntimeError, match="refusing to delete"):
        output.remove_own_folder(folder)
    assert (folder / "precious.txt").exists()


@pytest.mark.parametrize("dangling", [True, False])
def test_symlink_as_out_is_refused(lab, capsys, dangling):
    link = lab / "outputs" / "link"
    link.symlink_to(lab / "outputs" / ("nowhere" if dangling else "."))
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", link, "--force")
    assert (code, err) == (2, f"validator: error: {link}: is a symbolic link; give the real folder as --out\n")
    assert link.is_symlink()


def test_missing_parent_is_refused_and_not_created(lab, capsys):
    out = lab / "outputs" / "a" / "b"
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out)
    assert (code, err) == (2, f"validator: error: {out}: the folder {out.parent} does not exist; "
                              "create it first\n")
    assert not (lab / "outputs" / "a").exists()


# --- what --force replaces ---------------------------------------------------------------------

def _previous_output(lab, capsys, name="out") -> Path:
    out = lab / "outputs" / name
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--format", "json")
    assert code == 0, err
    return out


def _users_folder_with_a_look_alike_manifest(o: Path) -> None:
    for name in ("results.json", "manifest.json"):
        (o / name).unlink()
    (o / "data.csv").write_text("x,y\n1,2\n")
    (o / "manifest.json").write_text(json.dumps({"files": [{"file": "data.csv", "sha256": "0" * 64, "bytes": 9}]}))


@pytest.mark.parametrize("spoil, why", [
    (lambda o: (o / "signed.txt").write_text("mine"), 'holds "signed.txt", which validator did not write'),
    (lambda o: (o / "sub").mkdir(), 'holds "sub", which validator did not write'),
    (lambda o: (o / "manifest.json").write_text('{"written_by": "someone", "files": []}'),
     "its manifest.json was not written by validator"),
    (lambda o: (o / "manifest.json").unlink(), "holds no readable manifest.json written by validator"),
    # hostile-test finding: a user's folder with a look-alike manifest (no validator mark, wrong hash)
    (lambda o: _users_folder_with_a_look_alike_manifest(o), 'holds "data.csv", which validator did not write'),
    (lambda o: (o / "results.json").write_text("edited by hand"),
     'its file "results.json" has changed since validator wrote it'),
])
def test_force_replaces_only_a_previous_validator_output(lab, capsys, spoil, why):
    out = _previous_output(lab, capsys)
    spoil(out)
    before = _tree(out)
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--force", "--format", "json")
    assert (code, err) == (2, f"validator: error: {out}: {why}; --force replaces only a previous "
                              "validator output\n")
    assert _tree(out) == before


def test_a_file_as_out_is_refused_even_with_force(lab, capsys):
    out = lab / "outputs" / "file"
    out.write_text("mine")
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--force")
    assert (code, err) == (2, f"validator: error: {out}: exists and is not a folder\n")
    assert out.read_text() == "mine"


def test_force_swaps_and_leaves_nothing_beside(lab, capsys, monkeypatch):
    out = _previous_output(lab, capsys)
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "2000000000")
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--force", "--format", "json")
    assert code == 0, err
    assert json.loads((out / "results.json").read_text())["generated_at"] == "2033-05-18T03:33:20Z"
    assert [p.name for p in (lab / "outputs").iterdir()] == ["out"]     # no partial, aside or lock
    assert integrity.verify(out) == []


def test_force_replaces_an_output_with_an_older_manifest(lab, capsys):
    out = _previous_output(lab, capsys)
    manifest = json.loads((out / "manifest.json").read_text())
    (out / "manifest.json").write_text(json.dumps({"files": manifest["files"]}))     # older layout
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--force", "--format", "json")
    assert code == 0, err
    assert json.loads((out / "manifest.json").read_text())["written_by"] == "validator"


def test_swap_without_renameat2(lab, capsys, monkeypatch):
    out = _previous_output(lab, capsys)
    monkeypatch.setattr(output, "_renameat2", lambda *a: False)
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--force", "--format", "json")
    assert code == 0, err
    assert [p.name for p in (lab / "outputs").iterdir()] == ["out"] and integrity.verify(out) == []


# --- concurrency, partial and aside folders ------------------------------------------------------

def test_folder_appearing_during_the_run_is_not_replaced(lab, capsys, monkeypatch):
    out = lab / "outputs" / "out"
    real_start = output.start_manifest

    def start_and_race(folder):
        real_start(folder)
        out.mkdir()                                   # another program creates the folder meanwhile
        (out / "theirs.txt").write_text("keep")
    monkeypatch.setattr(output, "start_manifest", start_and_race)
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--format", "json")
    assert (code, err) == (2, f"validator: error: {out}: output folder exists; choose another --out "
                              "or add --force\n")
    assert (out / "theirs.txt").read_text() == "keep"
    assert sorted(p.name for p in (lab / "outputs").iterdir()) == ["out"]


def test_a_held_lock_refuses_the_run(lab, capsys):
    out = lab / "outputs" / "out"
    with open(lab / "outputs" / ".out.lock", "w") as fh:
        fcntl.flock(fh, fcntl.LOCK_EX)
        code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--format", "json")
    assert (code, err) == (2, f"validator: error: {out}: another validator run is writing this output "
                              "folder; try again when it has finished\n")
    assert not out.exists()


def test_stale_partial_folders_are_removed_only_if_ours(lab, capsys):
    outputs = lab / "outputs"
    ours = outputs / ".out.partial-k1ll3d"
    ours.mkdir()
    integrity.start_manifest(ours)
    (ours / "results.json").write_text("{")
    foreign = [outputs / ".out.partial-notours", outputs / ".other.partial-abc", outputs / "out.partial-x"]
    for f in foreign:
        f.mkdir()
        (f / "keep.txt").write_text("keep")
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", outputs / "out", "--format", "json")
    assert code == 0, err
    assert not ours.exists()
    assert all((f / "keep.txt").read_text() == "keep" for f in foreign)


def test_a_stale_partial_folder_holding_a_users_file_is_left_alone(lab, capsys):
    # hostile-test finding: a partial folder with our manifest but also a file validator never writes
    outputs = lab / "outputs"
    partial = outputs / ".out.partial-abcdefgh"
    partial.mkdir()
    integrity.start_manifest(partial)
    (partial / "thesis.docx").write_text("months of work")
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", outputs / "out", "--format", "json")
    assert code == 0, err
    assert (partial / "thesis.docx").read_text() == "months of work"


def test_killed_between_renames_the_old_output_is_restored(lab, capsys, monkeypatch):
    out = _previous_output(lab, capsys)
    old = (out / "results.json").read_bytes()

    class Killed(BaseException):
        pass

    def pause(step):
        if step == "aside":
            raise Killed
    monkeypatch.setattr(output, "_renameat2", lambda *a: False)         # the rename-aside fallback
    monkeypatch.setattr(output, "_pause", pause)
    with pytest.raises(Killed):
        main(["run", str(lab / "study" / "study.toml"), "--out", str(out), "--force", "--format", "json"])
    assert not out.exists() and [p.name[:9] for p in (lab / "outputs").iterdir()] == [".out.old-"]
    # the next run into the same place puts the old output back before anything else
    monkeypatch.undo()
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--format", "json")
    assert code == 2 and "output folder exists" in err
    assert (out / "results.json").read_bytes() == old and integrity.verify(out) == []
    assert [p.name for p in (lab / "outputs").iterdir()] == ["out"]


# --- operating-system errors while writing -------------------------------------------------------

@pytest.mark.parametrize("code_, reason", [(errno.ENOSPC, "No space left on device"),
                                           (errno.EACCES, "Permission denied"),
                                           (errno.EROFS, "Read-only file system")])
def test_os_errors_while_writing(lab, capsys, monkeypatch, code_, reason):
    def fail(folder):
        raise OSError(code_, os.strerror(code_), str(folder / "manifest.json"))
    monkeypatch.setattr(integrity, "write_manifest", fail)
    out = lab / "outputs" / "out"
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--format", "json")
    assert code == 2
    assert err.startswith("validator: error: ") and err.endswith(f"manifest.json: cannot write the output ({reason})\n")
    assert ".out.partial-" in err                      # the path named is the file being written
    assert list((lab / "outputs").iterdir()) == []     # partial folder and lock removed


def test_output_error_carries_the_path(tmp_path):
    (tmp_path / "x").write_text("")
    with pytest.raises(OutputError) as info:
        output.check_existing(tmp_path / "x", "given/x", force=True)
    assert info.value.path == "given/x" and isinstance(info.value, OSError)


# --- SOURCE_DATE_EPOCH --------------------------------------------------------------------------

@pytest.mark.parametrize("value", ["", "abc", "-1", "1.5", " 12", "253402300800", "9" * 30])
def test_bad_source_date_epoch(lab, capsys, monkeypatch, value):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", value)
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", lab / "outputs" / "o")
    assert (code, err) == (2, f'validator: error: SOURCE_DATE_EPOCH = "{value[:40]}" is not a whole number '
                              "of seconds from 0 to 253402300799 (end of year 9999)\n")
    assert main(["check", str(lab / "study" / "study.toml")]) == 2


def test_last_second_of_year_9999(lab, capsys, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "253402300799")
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", lab / "outputs" / "o", "--format", "json")
    assert code == 0, err
    assert json.loads((lab / "outputs" / "o" / "results.json").read_text())["generated_at"] == "9999-12-31T23:59:59Z"


# --- subprocesses: kill -9 during the swap, two runs at once ------------------------------------

def _popen(args, **extra):
    env = dict(os.environ, PYTHONPATH=str(REPO), **extra)
    return subprocess.Popen([sys.executable, "-m", "validator", *map(str, args)], env=env, text=True,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)


def _generated_at(out: Path) -> str:
    assert integrity.verify(out) == []                    # complete: every manifest hash matches
    return json.loads((out / "results.json").read_text())["generated_at"]


def test_kill_during_the_swap_leaves_old_or_new(lab, capsys, monkeypatch):
    study = lab / "study" / "study.toml"
    out = lab / "outputs" / "out"
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1000000000")
    assert main(["run", str(study), "--out", str(out), "--format", "json"]) == 0
    old = _generated_at(out)
    for step, expected in [("before-swap", old), ("after-swap", "2033-05-18T03:33:20Z")]:
        proc = _popen(["run", study, "--out", out, "--force", "--format", "json"],
                      VALIDATOR_TEST_PAUSE_IN_SWAP=f"{step}:30", SOURCE_DATE_EPOCH="2000000000")
        for line in proc.stderr:
            if line.strip() == f"validator-test-hook: pause {step}":
                break
        else:
            pytest.fail(f"the run ended before step {step}: exit {proc.wait()}")
        assert _generated_at(out) == expected
        proc.send_signal(signal.SIGKILL)
        proc.wait(timeout=10)
        proc.stderr.close()
        proc.stdout.close()
        assert _generated_at(out) == expected
        old = expected
    # the next run removes what the killed ones left (partial folders, lock file)
    capsys.readouterr()
    assert main(["run", str(study), "--out", str(out), "--force", "--format", "json"]) == 0
    assert [p.name for p in (lab / "outputs").iterdir()] == ["out"]


def test_two_runs_into_one_folder(lab):
    study = lab / "study" / "study.toml"
    out = lab / "outputs" / "out"
    procs = [_popen(["run", study, "--out", out, "--format", "json"], VALIDATOR_TEST_PAUSE_IN_SWAP="1")
             for _ in range(2)]
    results = [(p.communicate(timeout=120)[1], p.returncode)[::-1] for p in procs]
    codes = sorted(code for code, _ in results)
    assert codes[0] in (0, 1) and codes[1] == 2, results
    loser = next(err for code, err in results if code == 2)
    assert loser.splitlines()[-1] in (
        f"validator: error: {out}: output folder exists; choose another --out or add --force",
        f"validator: error: {out}: another validator run is writing this output folder; "
        "try again when it has finished")
    assert integrity.verify(out) == []
    assert [p.name for p in (lab / "outputs").iterdir()] == ["out"]


def test_a_link_loop_in_out_is_exit_2(lab, capsys):
    (lab / "outputs" / "a").symlink_to(lab / "outputs" / "b")
    (lab / "outputs" / "b").symlink_to(lab / "outputs" / "a")
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", lab / "outputs" / "a" / "x")
    assert code == 2 and "cannot be used as the output folder" in err


def test_folders_of_a_linked_study_and_of_its_target_are_both_protected(lab, capsys):
    (lab / "linked").mkdir()
    for name in ("study.toml", "calibration.csv"):
        (lab / "linked" / name).symlink_to(lab / "study" / name)
    for where in ("linked/o", "study/o"):
        code, _, err = _run(capsys, lab / "linked" / "study.toml", "--out", lab / where)
        assert code == 2 and "lies inside the folder of the input" in err


def test_figure_workers_end_with_a_killed_run_and_free_the_folder(lab, capsys):
    # hostile-test finding: forked figure workers outlived a killed run, kept the output folder's
    # lock and refused every later run into it. They now end with the run.
    import time
    from conftest import REPO as repo
    demo = repo / "example_studies" / "anions-drinking-water" / "study.toml"      # two analytes: two workers
    out = lab / "outputs" / "killed"
    proc = _popen(["run", str(demo), "--out", str(out), "--format", "html"])
    kids = []
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and len(kids) < 2 and proc.poll() is None:
        ps = subprocess.run(["ps", "--ppid", str(proc.pid), "-o", "pid="], capture_output=True, text=True)
        kids = [int(p) for p in ps.stdout.split()]
        time.sleep(0.05)
    assert len(kids) >= 2, "the run never started its figure workers"
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    time.sleep(2)
    alive = [k for k in kids if os.path.exists(f"/proc/{k}") and
             "Z" not in open(f"/proc/{k}/stat").read().split()[2]]
    assert alive == []
    code, _, err = _run(capsys, lab / "study" / "study.toml", "--out", out, "--format", "json")
    assert code == 0, err
