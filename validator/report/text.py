"""Number formatting and verdict words of the dossier: the helpers the characteristics'
``presentation.py`` modules build their sentences with.

Numbers are rounded by the rules of :mod:`validator.report.numbers`;
results.json keeps full precision. Every sentence (in each characteristic's
``presentation.py``) is built from values already in results.json; it compares
them with the study's alpha and limits but estimates nothing.
"""

from __future__ import annotations

from .._common import level_label, not_above  # noqa: F401 (not_above: the one limit rule, for sentences)
from . import numbers as N
# the reporting rules, re-exported for the characteristics' presentation modules (which import report.text)
from .numbers import (basis_label, by_rule, interval, interval_at, matched, plus_minus, superscripts_in,  # noqa: F401
                      suspect_label, uncertainty, weighting_label)
from .summary import flagged_points  # noqa: F401

__all__ = ["SIG", "SIG_P", "fmt", "fmt_p", "level_label", "met", "verdict_label",
           "basis_label", "by_rule", "matched", "plus_minus", "interval_at", "suspect_label", "superscripts_in", "uncertainty", "interval", "weighting_label",
           "flagged_points"]

SIG = N.DEFAULT_SIG
SIG_P = N.P_SIG
MISSING = N.MISSING


def fmt(value, sig: int = SIG) -> str:
    """A number to ``sig`` significant figures (``n/a`` for null), trailing zeros dropped;
    see :mod:`validator.report.numbers` for the reporting rules."""
    return N.sig(value, sig, keep_zeros=False)


def fmt_p(value) -> str:
    return N.p_value(value)


# results.json verdict words -> met (True), not met (False), not applicable (None): the one
# place the dossier reads a verdict word; a re-validation not shown equivalent is not met
VERDICT_WORDS = {"pass": True, "fail": False, "not applicable": None, "incomplete": None,
                 "equivalent": True, "not shown equivalent": False, "different": False}


def met(verdict_word: str) -> bool | None:
    """Whether a verdict word of results.json means met, not met or not applicable."""
    return VERDICT_WORDS[verdict_word]


def verdict_label(passed) -> dict:
    """Word and symbol for a verdict, never colour alone.

    ``passed`` is a criterion's True/False/None or an overall verdict string
    ("pass", "fail", "incomplete").
    """
    passed = met(passed) if isinstance(passed, str) else passed
    if passed is True:
        return {"css": "met", "symbol": "✓", "word": "met"}
    if passed is False:
        return {"css": "unmet", "symbol": "✗", "word": "NOT MET"}
    return {"css": "na", "symbol": "–", "word": "not applicable"}
