"""Sample preparation and the reporting unit: the ``[sample_preparation]`` table of the study file.

A sample's result is first the concentration in the measured solution (the calibration's unit).
``[sample_preparation]`` states how a sample was prepared, by default and per sample id, so that the
result is also given in the reporting unit (e.g. mg/kg of the sample)::

    [sample_preparation]
    unit = "µg/kg"
    dilution_factor = 1            # the measured solution was diluted this many times
    aliquot = 2.0                  # mass or volume of sample taken (e.g. g)
    final_volume = 10.0            # volume it was made up to (e.g. mL)
    samples = { "MK-2611" = { dilution_factor = 5 } }     # per-sample differences

The factor is dilution_factor x final_volume / aliquot; the units of final_volume and aliquot are
the user's to choose so that concentration_unit x final_volume / aliquot is the reporting unit
(µg/L x mL / g = µg/kg).
"""

from __future__ import annotations

from typing import Annotated, Optional

from pydantic import ConfigDict, Field, model_validator

from ...inputs.study import TEXT_LIMITS, Text, _Section

__all__ = ["ReportingSection", "Preparation"]

Amount = Annotated[float, Field(gt=0, le=1e9)]
SampleKey = Annotated[str, Field(min_length=1, max_length=TEXT_LIMITS["analyte"])]


def _both_or_neither(model):
    if (model.aliquot is None) != (model.final_volume is None):
        raise ValueError("aliquot and final_volume go together: give both (the factor is final_volume / "
                         "aliquot) or neither")
    return model


class Preparation(_Section):
    """One sample's preparation where it differs from the default."""

    dilution_factor: Optional[Amount] = None
    aliquot: Optional[Amount] = None
    final_volume: Optional[Amount] = None

    @model_validator(mode="after")
    def _pair(self):
        return _both_or_neither(self)


class ReportingSection(_Section):
    """``[sample_preparation]``: the reporting unit and how samples were prepared (default, and per sample id)."""

    # how results are expressed, not design or criteria: the table is left out of the protocol
    model_config = ConfigDict(json_schema_extra={"protocol": False})

    unit: Text = Field(min_length=1, max_length=TEXT_LIMITS["concentration_unit"], pattern=r"\S")
    dilution_factor: Amount = 1.0
    aliquot: Optional[Amount] = None
    final_volume: Optional[Amount] = None
    samples: dict[SampleKey, Preparation] = Field(default_factory=dict)

    @model_validator(mode="after")
    def _pair(self):
        return _both_or_neither(self)

    def preparation_of(self, sample_id: str) -> tuple:
        """(dilution_factor, aliquot, final_volume) of a sample: its own values over the default ones."""
        own = self.samples.get(sample_id)
        if own is None and sample_id.endswith(")") and " (" in sample_id:
            own = self.samples.get(sample_id.rsplit(" (", 1)[0])    # "id (run)": a sample read in several runs
        dilution = own.dilution_factor if own is not None and own.dilution_factor is not None else self.dilution_factor
        if own is not None and own.aliquot is not None:
            return dilution, own.aliquot, own.final_volume
        return dilution, self.aliquot, self.final_volume
