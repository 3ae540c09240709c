"""One error hierarchy for everything a user can fix.

Every error the user can act on derives from :class:`ValidatorError`. The
command line catches that class in one place, prints its message as one line
on stderr and exits with :attr:`ValidatorError.exit_code` (2). Anything else
that escapes is a bug in validator.

Input errors carry where the problem is (file, row, column or key) and the
offending value as attributes, and their message reads like::

    calibration.csv, row 7, column "response": "1.2.3" is not a number
"""

from __future__ import annotations

__all__ = ["ValidatorError", "StudyError", "DataError", "OutputError"]


class ValidatorError(Exception):
    """Base class of every error a user can fix; exit code 2."""

    exit_code = 2


def _locate(file: str | None, row: int | None, column: str | None, key: str | None,
            line: int | None = None) -> str:
    parts = []
    if file:
        parts.append(file)
    if line is not None:
        parts.append(f"line {line}")
    if row is not None:
        parts.append(f"row {row}")
    if column is not None:
        parts.append(f'column "{column}"')
    if key is not None:
        parts.append(f"key {key}")
    return ", ".join(parts)


class StudyError(ValidatorError, ValueError):
    """The study file or a data file it names is not usable.

    Attributes
    ----------
    file, line, row, column, key, value
        Where the problem is and what was found; ``None`` where not relevant.
    problem
        The bare description, without the location.
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
        super().__init__(f"{where}: {problem}" if where else problem)


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
