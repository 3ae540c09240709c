"""Measurement uncertainty: the ``[uncertainty]`` table of the study file.

No data file of its own: it reads the precision, recovery and reference-material results.
"""

from __future__ import annotations

from typing import Literal, Optional

from pydantic import Field

from ...errors import StudyError
from ...inputs.study import _Section

__all__ = ["UncertaintySection", "load"]


class UncertaintySection(_Section):
    # k of U = k u_c
    coverage_factor: float = Field(2.0, gt=0, le=10)
    # where u(bias) comes from (each used when the analyte has it); required, so that the table is
    # present only when the study asks for a budget and the budget's bias basis is the study's choice
    bias_from: list[Literal["reference_material", "recovery"]] = Field(min_length=1, max_length=2)
    # the relative standard uncertainty of the added amount of a spike, u(Cref) of a recovery level
    spike_standard_uncertainty_pct: float = Field(0.0, ge=0, le=100)
    # a target: the relative expanded uncertainty at each precision level at most this
    expanded_max_pct: Optional[float] = Field(None, gt=0, le=1000)


def load(reader, settings: UncertaintySection, analytes) -> dict:
    """No data file of its own: only checks that the study has the [precision] data u(Rw) comes from."""
    if getattr(reader.study.config, "precision", None) is None:
        raise StudyError("[uncertainty] is built from the precision results, so it needs a [precision] section "
                         "naming their data", file=reader.study.shown, key="uncertainty")
    return {}
