"""Progress on stderr (issue #14, item 10): shown on a terminal for runs over about 2 s, never on a
pipe or with ``--quiet``; the verdict line and the error line stay as tests/test_cli.py expects."""

from __future__ import annotations

import io
import os
import pty
import select
import subprocess
import sys
from pathlib import Path

import pytest

from validator.progress import Progress

ROOT = Path(__file__).resolve().parents[1]


class FakeTerminal(io.StringIO):
    def isatty(self):
        return True


class Clock:
    def __init__(self):
        self.now = 0.0

    def __call__(self):
        return self.now


def test_nothing_before_the_delay_then_one_line_then_erased():
    stream, clock = FakeTerminal(), Clock()
    progress = Progress(stream, clock=clock)
    progress("analysing", 1, 300)
    assert stream.getvalue() == ""                     # a run under 2 s shows nothing
    clock.now = 2.5
    progress("analysing", 2, 300)
    assert stream.getvalue() == "\rvalidator: analysing 2/300 (2 s)"
    clock.now = 2.6
    progress("analysing", 3, 300)                       # within 0.2 s of the last drawing: skipped
    progress("analysing", 300, 300)                     # the last step is always drawn
    progress("laying out the PDF")
    progress.close()
    text = stream.getvalue()
    assert "\n" not in text                             # one line, rewritten in place
    assert "analysing 3/300" not in text and "analysing 300/300" in text
    assert text.endswith("\r" + " " * len("validator: laying out the PDF (3 s)") + "\r")


@pytest.mark.parametrize("stream, quiet", [(io.StringIO(), False), (FakeTerminal(), True)])
def test_quiet_off_a_terminal_and_with_quiet(stream, quiet):
    clock = Clock()
    progress = Progress(stream, quiet=quiet, clock=clock)
    clock.now = 100
    progress("analysing", 1, 2)
    progress.close()
    assert stream.getvalue() == ""


def _study(tmp_path, analytes=10):
    import importlib.util

    spec = importlib.util.spec_from_file_location("make_multiresidue", ROOT / "example_studies" / "make_multiresidue.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module.write(tmp_path / "study", analytes)


def _command(study, out, *extra):
    # 10 compounds with figures: a few seconds even on an idle 2-core machine, beyond the 2 s delay
    return [sys.executable, "-m", "validator", "run", str(study), "--out", str(out), "--format", "json,html", *extra]


def _run_with_terminal_stderr(command):
    """(exit code, stdout, everything written to stderr) with stderr on a pseudo-terminal."""
    master, slave = pty.openpty()
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    proc = subprocess.Popen(command, stdout=subprocess.PIPE, stderr=slave, stdin=subprocess.DEVNULL, env=env)
    os.close(slave)
    seen = b""
    while True:
        ready, _, _ = select.select([master], [], [], 600)
        if not ready:
            proc.kill()
            raise AssertionError("no end of output within 600 s")
        try:
            chunk = os.read(master, 4096)
        except OSError:                   # EIO: the child closed its end
            break
        if not chunk:
            break
        seen += chunk
    os.close(master)
    stdout = proc.stdout.read().decode()
    proc.wait()
    return proc.returncode, stdout, seen.decode()


@pytest.mark.slow
def test_progress_on_a_terminal_and_erased_before_the_verdict(tmp_path):
    study = _study(tmp_path)
    code, stdout, terminal = _run_with_terminal_stderr(_command(study, tmp_path / "out"))
    assert code in (0, 1)
    assert "validator: drawing figures" in terminal and "/10" in terminal
    assert "\n" not in terminal.replace("\r\n", "\n").rstrip("\n")     # only in-place rewrites
    assert terminal.split("\r")[-1].strip() == ""                      # the line is erased at the end
    assert len(stdout.splitlines()) == 1 and stdout.startswith("validator: ")


@pytest.mark.slow
def test_quiet_on_a_terminal_and_nothing_on_a_pipe(tmp_path):
    study = _study(tmp_path)
    code, stdout, terminal = _run_with_terminal_stderr(_command(study, tmp_path / "quiet", "--quiet"))
    assert code in (0, 1) and terminal == ""
    assert len(stdout.splitlines()) == 1
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    piped = subprocess.run(_command(study, tmp_path / "piped"), capture_output=True, text=True, env=env)
    assert piped.returncode in (0, 1)
    assert piped.stderr == ""
    assert len(piped.stdout.splitlines()) == 1 and piped.stdout.startswith("validator: ")


def test_an_error_is_still_one_line_on_a_terminal(tmp_path):
    code, stdout, terminal = _run_with_terminal_stderr(
        [sys.executable, "-m", "validator", "run", str(tmp_path / "missing.toml"), "--out", str(tmp_path / "o")])
    assert code == 2 and stdout == ""
    # a progress line may have been shown (the imports can take 2 s): it is erased before the error line
    assert terminal.count("\n") == 1
    assert terminal.rstrip("\r\n").split("\r")[-1].startswith("validator: error: ")
