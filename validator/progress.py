"""Progress of a long ``validator run`` on stderr: one line, rewritten in place, erased at the end.

Shown only when stderr is a terminal, not with ``--quiet``, and only once the run has taken
``delay`` seconds (2 s), so short runs, pipes, log files and CI see nothing extra: the CLI's
one-line verdict (stdout) and its one-line errors (stderr) stay as they are.

Written with the standard library: neither rich nor tqdm is in the project's dependencies, and
one line rewritten with a carriage return needs neither. No thread is used (figures are drawn in
forked processes, and a thread writing to stderr during a fork could leave the child's stream
locked): the line is redrawn when the run reports a step, so a long step without steps (the PDF
layout) shows its name and the time it started.
"""

from __future__ import annotations

import shutil
import sys
import time

__all__ = ["Progress"]


class Progress:
    """``progress(stage, done, total)`` reports a step; ``close()`` erases the line (call it before
    anything else is printed). Does nothing when disabled."""

    def __init__(self, stream=None, *, quiet: bool = False, delay: float = 2.0, clock=time.monotonic):
        self.stream = sys.stderr if stream is None else stream
        try:
            terminal = self.stream.isatty()
        except (AttributeError, ValueError):        # no isatty, or a closed stream
            terminal = False
        self.enabled = terminal and not quiet
        self.delay = delay
        self.clock = clock
        self.start = clock()
        self._shown = 0              # length of the line on screen (0: nothing shown)
        self._last = (None, 0.0)     # (stage, time) of the last drawing

    def __call__(self, stage: str, done: int | None = None, total: int | None = None) -> None:
        if not self.enabled:
            return
        now = self.clock()
        elapsed = now - self.start
        if elapsed < self.delay:
            return
        final = total is not None and done == total
        if stage == self._last[0] and not final and now - self._last[1] < 0.2:
            return                   # at most five redraws a second within a stage
        self._last = (stage, now)
        count = f" {done}/{total}" if total else ""
        line = f"validator: {stage}{count} ({elapsed:.0f} s)"
        width = max(shutil.get_terminal_size((80, 24)).columns - 1, 20)
        line = line[:width]
        self._write("\r" + line.ljust(self._shown))
        self._shown = len(line)

    def close(self) -> None:
        """Erase the line, so the verdict or an error message starts on a clean line."""
        if self.enabled and self._shown:
            self._write("\r" + " " * self._shown + "\r")
            self._shown = 0

    def _write(self, text: str) -> None:
        try:
            self.stream.write(text)
            self.stream.flush()
        except (OSError, ValueError):   # a terminal gone away must not end the run
            self.enabled = False
