"""Accuracy profile: the ``[accuracy_profile]`` table of the study file.

It reads no file of its own: the profile is built from the precision data (level = nominal
value, found, and the run: the innermost factor of [precision] design, else the series). Its
per-level acceptance limits are checked against those data by the precision loader.
"""

from __future__ import annotations

from typing import Optional

from pydantic import Field, model_validator

from ...errors import StudyError
from ...inputs.study import _Section

__all__ = ["AccuracyProfileSection", "AcceptanceLevel", "load"]


class AcceptanceLevel(_Section):
    level: float = Field(gt=0)
    acceptance_pct: float = Field(gt=0, le=100)


class AccuracyProfileSection(_Section):
    # expected proportion of future results inside the beta-expectation interval
    beta: float = Field(0.80, ge=0.5, le=0.999)
    # acceptance limits +/- lambda % of the nominal value; per-level values in levels
    acceptance_pct: float = Field(gt=0, le=100)
    levels: list[AcceptanceLevel] = []
    # optional beta-content, gamma-confidence interval beside the beta-expectation one
    content: Optional[float] = Field(None, ge=0.5, le=0.999)
    confidence: Optional[float] = Field(None, ge=0.5, le=0.999)

    @model_validator(mode="after")
    def _pair(self):
        if (self.content is None) != (self.confidence is None):
            raise ValueError("content and confidence go together: give both for a beta-content interval, "
                             "or neither")
        return self

    def acceptance_for(self, level: float) -> float:
        for lv in self.levels:
            if abs(lv.level - level) <= 1e-9 * max(abs(level), 1.0):
                return lv.acceptance_pct
        return self.acceptance_pct


def load(reader, settings: AccuracyProfileSection, analytes) -> dict:
    """No data file of its own: only checks that the study has the [precision] data it is built from."""
    if getattr(reader.study.config, "precision", None) is None:
        raise StudyError("[accuracy_profile] is built from the precision results, so it needs a [precision] section "
                         "naming their data", file=reader.study.shown, key="accuracy_profile")
    return {}
