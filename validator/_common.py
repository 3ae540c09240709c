"""Result types shared by every validation characteristic."""

from __future__ import annotations

import math
import re
import warnings
from contextlib import contextmanager
from dataclasses import dataclass, field

import numpy as np

__all__ = ["ConfidenceInterval", "TestResult", "SourceRow", "not_applicable", "finite_or_none", "quiet_numpy", "level_label",
           "open_unit", "positive", "no_relative_sd", "LIMIT_RELATIVE_TOLERANCE", "not_above", "not_below",
           "between"]


@dataclass(frozen=True)
class ConfidenceInterval:
    """A two-sided confidence interval; ``level`` is e.g. 0.95."""

    low: float
    high: float
    level: float

    def contains(self, value: float) -> bool:
        return self.low <= value <= self.high

    @property
    def label(self) -> str:
        """The level as text, e.g. "95 %": the one way a confidence level becomes a label."""
        return level_label(self.level)


@dataclass(frozen=True)
class SourceRow:
    """Where one input value was read: the data file as the study names it, the sheet of a workbook
    (``None`` for CSV) and the file row (CSV line, header = row 1, or sheet row), as results.json's
    ``data_rows`` and the run injections name them."""

    file: str
    sheet: str | None = field(metadata={"omit_none": True})
    row: int


def level_label(level: float | None) -> str:
    """A confidence level as a label: 0.99 -> "99 %", 0.9 -> "90 %" ("" when there is none).

    Every "NN % CI" that validator writes (criteria, sentences, the dossier) is made here
    from the interval's own level, never written as text.
    """
    if level is None:
        return ""
    return f"{100 * level:.6g} %"


@dataclass(frozen=True)
class TestResult:
    """A hypothesis test, or the statement that it was not applicable.

    ``statistic`` and ``pvalue`` are ``None`` exactly when ``reason`` says why
    the test could not be done on these data.
    """

    method: str
    statistic: float | None
    pvalue: float | None
    df: tuple[float, ...] | None = None
    reason: str = ""

    @property
    def applicable(self) -> bool:
        return self.statistic is not None


def not_applicable(method: str, reason: str) -> TestResult:
    return TestResult(method=method, statistic=None, pvalue=None, df=None, reason=reason)


def finite_or_none(value):
    """A float for JSON: ``None`` for NaN/inf (the reason is recorded elsewhere)."""
    if value is None:
        return None
    value = float(value)
    return value if np.isfinite(value) else None


@contextmanager
def quiet_numpy():
    """Turn numpy/scipy runtime warnings off inside a calculation.

    Degenerate data are detected explicitly and reported as diagnostics; the
    raw library warnings would only be noise to the user.
    """
    with np.errstate(all="ignore"), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        yield


def open_unit(name: str, value, high: float = 1.0) -> float:
    """``value`` as a float in the open interval (0, high) (a probability, alpha, a coverage), else ValueError."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number in the open interval (0, {high:g}), got {value!r}") from None
    if not (0.0 < v < high):
        raise ValueError(f"{name} must be in the open interval (0, {high:g}), got {value!r}")
    return v


def positive(name: str, value) -> float:
    """``value`` as a finite float > 0 (a factor, a limit, degrees of freedom), else ValueError."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a finite number > 0, got {value!r}") from None
    if not (math.isfinite(v) and v > 0):
        raise ValueError(f"{name} must be a finite number > 0, got {value!r}")
    return v


# A value within this relative distance of an acceptance limit counts as ON the limit. Results are
# computed in binary floating point, where 100 x 0.14 / 0.7 is 20.000000000000004 and
# 100 (2.55 / 3 - 1) is -15.000000000000002: a value that is exactly on its limit in decimal
# arithmetic may land a few units in the last place beyond it, and would then be judged against
# what the dossier shows (20 %, -15 %). 1e-9 lies far above that representation error (about
# 1e-16 relative per operation, 1e-13 after long sums) and far below any difference a laboratory
# reports (this tool's choice, no published source). It is applied in this one place: every
# comparison of a value with an acceptance limit goes through not_above, not_below or between
# (criteria.at_most, at_least and interval_within, and the sector statistics' own verdicts,
# per sample and per lot too). A limit of exactly 0 is compared exactly.
LIMIT_RELATIVE_TOLERANCE = 1e-9


def not_above(value, limit):
    """``value <= limit``, a value within :data:`LIMIT_RELATIVE_TOLERANCE` of the limit counting as on it.

    Works elementwise on numpy arrays (a bool array back).
    """
    return value <= limit + LIMIT_RELATIVE_TOLERANCE * abs(limit)


def not_below(value, limit):
    """``value >= limit``, a value within :data:`LIMIT_RELATIVE_TOLERANCE` of the limit counting as on it."""
    return value >= limit - LIMIT_RELATIVE_TOLERANCE * abs(limit)


def between(value, low, high) -> bool:
    """``low <= value <= high``, each end by :func:`not_below` and :func:`not_above`."""
    return bool(not_below(value, low) and not_above(value, high))


def no_relative_sd(mean, what: str = "the mean") -> str:
    """Why no RSD (CV) = 100 SD / mean is judged for this mean, or "" when the mean is positive.

    An RSD describes a spread relative to a positive level; with a mean of zero it does not
    exist and with a negative mean (results scattered around or below zero) it is not
    meaningful: a negative RSD would "meet" any maximum and SD / |mean| would call results
    precise whose level is wrong. Every RSD or CV that validator judges is therefore not
    applicable, with this reason, unless its mean is positive.
    """
    if mean is None or not isinstance(mean, (int, float, np.integer, np.floating)) or not math.isfinite(mean):
        return f"{what} does not exist, so no RSD (CV) exists"
    if mean == 0:
        return f"{what} is zero, so no RSD (CV) exists"
    if mean < 0:
        return (f"{what} is negative ({float(mean):.4g}), so an RSD (CV) is not meaningful: it needs a positive "
                "mean (the results scatter around or below zero)")
    return ""


# a minus sign (ASCII or U+2212) that is a sign: not after a letter or digit ("d-1" is a hyphen), before a
# digit or a decimal point and digit ("-20 °C", "-.5")
_SIGN = re.compile(r"(?<![^\W_])[-\u2212](?=\.?\d)")
# a decimal point between two digits ("2.5")
_DECIMAL_POINT = re.compile(r"(?<=\d)\.(?=\d)")


def name_slug(name: str) -> str:
    """The id form of a name (stability conditions in criterion ids): case-folded, runs of characters
    other than letters and digits replaced by one hyphen, except that a minus sign before a number is
    written "minus" and a decimal point between digits is kept: "stored at -20 °C" ->
    "stored-at-minus-20-c", "stored at 20 °C" -> "stored-at-20-c", "2.5 h" -> "2.5-h", "bench top" and
    "Bench-Top" -> "bench-top"."""
    text = _SIGN.sub(" minus ", name.casefold())
    return ".".join(re.sub(r"[\W_]+", "-", part).strip("-") for part in _DECIMAL_POINT.split(text))


def name_key(name: str) -> str:
    """A name compared ignoring letter case, spaces and punctuation, but not a minus sign before a
    number nor a decimal point between digits ("D-1", "d 1", "d1." -> "d1"; "-1" -> "minus1"; "1.5" ->
    "1.5", not "15")."""
    text = _SIGN.sub(" minus ", name.casefold())
    return ".".join(re.sub(r"[\W_]+", "", part) for part in _DECIMAL_POINT.split(text))
