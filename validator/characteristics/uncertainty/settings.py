"""The [uncertainty] table of the study file (no data file of its own: it reads the precision,
recovery and reference-material results). The model lives in validator.inputs.study until
the study schema is assembled per characteristic."""

from ...inputs.study import UncertaintySection

__all__ = ["UncertaintySection"]
