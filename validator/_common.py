"""Result types shared by every validation characteristic."""

from __future__ import annotations

import math
import warnings
from contextlib import contextmanager
from dataclasses import dataclass

import numpy as np

__all__ = ["ConfidenceInterval", "TestResult", "not_applicable", "finite_or_none", "quiet_numpy", "level_label",
           "open_unit", "positive"]


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
