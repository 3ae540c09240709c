"""One error hierarchy for everything a user can fix.

Every error the user can act on derives from :class:`ValidatorError`. The
command line catches that class in one place, prints its message as one line
on stderr and exits with :attr:`ValidatorError.exit_code` (2). Anything else
that escapes is a bug in validator.

Input errors carry where the problem is (file, row, column or key) and the
offending value as attributes, and their message reads like::

    calibration.csv, row 7, column "response": "1.2.3" is not a number

A message is always one line: control characters in echoed values, paths and
keys are shown as escapes (``\\n``, ``\\x00``) and a long echoed value is cut
to its first :data:`MAX_ECHO` characters followed by its length.
"""

from __future__ import annotations

import re

__all__ = ["ValidatorError", "StudyError", "DataError", "OutputError", "MAX_ECHO", "show", "shorten",
           "escape_control", "one_line", "control_character", "did_you_mean"]

MAX_ECHO = 80            # characters of a user's value echoed in a message
MAX_LOCATION = 300       # characters of a path or key named in a message
MAX_LINE = 2000          # characters of a whole message line (last resort)

# C0 and C1 controls, DEL, and the Unicode line and paragraph separators: all of
# them could break a message into several lines or hide part of it
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f\u2028\u2029]")
_NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}
_CC = re.compile("[\x00-\x1f\x7f-\x9f]")                   # Unicode category Cc
_CC_BUT_WHITESPACE = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")


def control_character(text: str, *, allow_whitespace: bool = False) -> str | None:
    """The first control character in ``text`` and its position, as text ("\\x00 at position 3").

    With ``allow_whitespace``, tab, line feed and carriage return are not counted.
    """
    bad = (_CC_BUT_WHITESPACE if allow_whitespace else _CC).search(text)
    return None if bad is None else f"{_escape(bad)} at position {bad.start()}"


def _escape(match: re.Match) -> str:
    c = match.group()
    return _NAMED.get(c) or (f"\\x{ord(c):02x}" if ord(c) < 0x100 else f"\\u{ord(c):04x}")


def escape_control(text: str) -> str:
    """``text`` with every control character written as an escape (``\\n``, ``\\x00``)."""
    return _CONTROL.sub(_escape, text)


def shorten(text: str, limit: int = MAX_ECHO) -> str:
    """``text`` cut to ``limit`` characters, followed by its length when cut."""
    if len(text) <= limit:
        return text
    return f"{text[:limit]}... ({len(text)} characters)"


def show(value: object, limit: int = MAX_ECHO) -> str:
    """A user's value as echoed in a message: shortened, control characters escaped.

    Strings are shown as they are (the caller adds quotes); anything else by
    its ``repr``. An integer too long to write out is described by its size.
    """
    if isinstance(value, str):
        text = value
    else:
        try:
            text = repr(value)
        except ValueError:   # an int over Python's limit on digits converted to text
            text = (f"<an integer of about {int(value.bit_length() * 0.30103) + 1} digits>"
                    if isinstance(value, int) else f"<a {type(value).__name__} holding such an integer>")
    return escape_control(shorten(text, limit))


def did_you_mean(value: str, choices) -> str:
    """A hint naming the closest of ``choices`` to a mistyped ``value`` (``'; did you mean "x"?'``),
    else the choices themselves when there are few, else nothing."""
    import difflib

    choices = [str(c) for c in choices]
    close = difflib.get_close_matches(str(value), choices, n=1, cutoff=0.6)
    if close:
        return f'; did you mean "{show(close[0])}"?'
    if 0 < len(choices) <= 10:
        return " (known: " + ", ".join(f'"{show(c)}"' for c in sorted(choices)) + ")"
    return ""


def one_line(text: str) -> str:
    """A whole message made safe to print as one line on stderr."""
    return escape_control(shorten(text, MAX_LINE))


class ValidatorError(Exception):
    """Base class of every error a user can fix; exit code 2."""

    exit_code = 2


def _locate(file: str | None, row: int | None, column: str | None, key: str | None,
            line: int | None = None) -> str:
    parts = []
    if file:
        parts.append(show(file, MAX_LOCATION))
    if line is not None:
        parts.append(f"line {line}")
    if row is not None:
        parts.append(f"row {row}")
    if column is not None:
        parts.append(f'column "{show(column, MAX_LOCATION)}"')
    if key is not None:
        parts.append(f"key {show(key, MAX_LOCATION)}")
    return ", ".join(parts)


class StudyError(ValidatorError, ValueError):
    """The study file or a data file it names is not usable.

    Attributes
    ----------
    file, line, row, column, key, value
        Where the problem is and what was found; ``None`` where not relevant.
    problem
        The bare description, without the location.

    The message is one line whatever the inputs: the location parts are
    shortened and escaped here, and any control character left in ``problem``
    is escaped too. Callers echo values through :func:`show`, which also
    shortens them.
    """

    def __init__(self, problem: str, *, file: str | None = None, row: int | None = None,
                 column: str | None = None, key: str | None = None, value: object = None,
                 line: int | None = None):
        self.problem = problem
        self.file = file
        self.row = row
        self.column = column
        self.key = key
        self.value = value
        self.line = line
        where = _locate(file, row, column, key, line)
        super().__init__(escape_control(f"{where}: {problem}" if where else problem))


class DataError(StudyError):
    """A data file (CSV) has content that cannot be analysed as declared."""


class OutputError(ValidatorError, OSError):
    """An output folder cannot be written, or a folder to verify cannot be read, as asked.

    Attributes
    ----------
    path
        The file or folder concerned, as a string; ``None`` where not known.
    """

    def __init__(self, message: str, *, path: object = None):
        super().__init__(message)
        self.path = None if path is None else str(path)
