"""SIGTERM unwinds like Ctrl-C: the partial output folder is removed and nothing is left behind.

# common practice, no published source: 128 + 15 = 143 is the shell's exit status for SIGTERM
"""

import importlib.util
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "example_studies" / "anions-drinking-water" / "study.toml"


def test_sigterm_removes_the_partial_output(outside):
    out = outside / "dossier"
    env = dict(os.environ, PYTHONPATH=str(Path(__file__).resolve().parents[1]))
    proc = subprocess.Popen([sys.executable, "-m", "validator", "run", str(EXAMPLE), "--out", str(out),
                             "--format", "json,html"], stderr=subprocess.PIPE, env=env, text=True)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and proc.poll() is None:       # wait for the partial folder
        if any(p.name.startswith(".dossier.partial-") for p in outside.iterdir()):
            break
        time.sleep(0.02)
    if proc.poll() is None:
        proc.send_signal(signal.SIGTERM)
    err = proc.communicate(timeout=120)[1]
    if proc.returncode == 143:
        assert "terminated (SIGTERM)" in err
        assert not out.exists()
    else:                                   # finished before the signal arrived: a complete output
        assert proc.returncode in (0, 1)
        assert (out / "manifest.json").is_file()
    assert [p.name for p in outside.iterdir() if ".partial-" in p.name or p.name.endswith(".lock")] == []


def _children(pid: int) -> set:
    """The process ids whose parent is ``pid`` (Linux /proc)."""
    out = set()
    for task in Path(f"/proc/{pid}/task").glob("*"):
        try:
            out |= {int(c) for c in (task / "children").read_text().split()}
        except OSError:
            pass
    return out


def _alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


@pytest.mark.skipif(not Path("/proc/self/task").is_dir(), reason="reads the process tree from /proc (Linux)")
@pytest.mark.parametrize("analytes", [None, 12])        # the demo (one piece) and a PDF laid out in parts
def test_sigterm_during_the_pdf_layout_stops_promptly(outside, tmp_path, analytes):
    """SIGTERM while WeasyPrint lays the PDF out: the run ends within seconds, its layout workers
    with it, and leaves no partial output (the layout runs in worker processes, validator.report.pdf)."""
    if analytes is None:
        study = EXAMPLE
    else:
        spec = importlib.util.spec_from_file_location("make_multiresidue",
                                                      ROOT / "example_studies" / "make_multiresidue.py")
        generator = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(generator)
        study = generator.write(tmp_path / "study", analytes)
    out = outside / "dossier"
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    proc = subprocess.Popen([sys.executable, "-m", "validator", "run", str(study), "--out", str(out),
                             "--format", "json,html,pdf"], stderr=subprocess.PIPE, env=env, text=True)
    deadline = time.monotonic() + 240
    while time.monotonic() < deadline and proc.poll() is None:   # dossier.html is written just before the layout
        if any((p / "dossier.html").exists() for p in outside.glob(".dossier.partial-*")):
            break
        time.sleep(0.02)
    workers = set()
    while time.monotonic() < deadline and proc.poll() is None and not workers:
        workers = _children(proc.pid)                           # the layout worker(s) have started
        time.sleep(0.05)
    time.sleep(0.5)
    if proc.poll() is not None:
        pytest.skip("the run finished before the layout could be interrupted")
    proc.send_signal(signal.SIGTERM)
    sent = time.monotonic()
    err = proc.communicate(timeout=120)[1]
    # common practice, no published source: a user stopping a job expects it gone within seconds
    assert time.monotonic() - sent < 10
    assert proc.returncode == 143, err
    assert "terminated (SIGTERM)" in err
    assert not out.exists()
    assert [p.name for p in outside.iterdir() if ".partial-" in p.name or p.name.endswith(".lock")] == []
    time.sleep(0.5)
    assert not [w for w in workers if _alive(w)]
