"""SIGTERM unwinds like Ctrl-C: the partial output folder is removed and nothing is left behind.

# common practice, no published source: 128 + 15 = 143 is the shell's exit status for SIGTERM
"""

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

EXAMPLE = Path(__file__).resolve().parents[1] / "example_studies" / "anions-drinking-water" / "study.toml"


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
