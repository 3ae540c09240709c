"""Precision: the ``[precision]`` table of the study file and the precision data file it names.

The file has one row per result: ``level``, ``found``, and either ``series`` (the one-way
design) or the columns named by ``design`` (a nested design, outermost factor first, e.g.
``day`` and ``run``); optionally ``analyte`` (and ``series`` beside a design).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Annotated, Optional

import numpy as np
from pydantic import Field, model_validator

from ..._common import SourceRow
from ...errors import show
from ...inputs.loading import declared_levels_exist, numeric_column, per_analyte
from ...inputs.study import DataSource, _Section
from ...inputs.tables import exact_centre

__all__ = ["PrecisionSection", "PrecisionLevelLimit", "PrecisionData", "load", "RESERVED_COLUMNS"]


class PrecisionLevelLimit(_Section):
    level: float = Field(ge=0)
    repeatability_rsd_max_pct: Optional[float] = Field(None, gt=0, le=100)
    intermediate_rsd_max_pct: Optional[float] = Field(None, gt=0, le=100)
    claimed_repeatability_rsd_pct: Optional[float] = Field(None, gt=0, le=100)
    claimed_within_laboratory_rsd_pct: Optional[float] = Field(None, gt=0, le=100)
    # claims as SDs in the concentration unit (CLSI EP15-A3 takes a claim as an SD or a CV), at this level only
    claimed_repeatability_sd: Optional[float] = Field(None, gt=0, allow_inf_nan=False)
    claimed_within_laboratory_sd: Optional[float] = Field(None, gt=0, allow_inf_nan=False)
    # a target value of the material measured at this level (reference material, assigned value) and its
    # standard uncertainty (df: None for a large or unknown number), for the EP15 verification of the bias
    reference_value: Optional[float] = Field(None, allow_inf_nan=False)
    reference_standard_uncertainty: Optional[float] = Field(None, ge=0, allow_inf_nan=False)
    reference_df: Optional[float] = Field(None, gt=0, le=1e6, allow_inf_nan=False)

    @model_validator(mode="after")
    def _claims_and_reference(self):
        for quantity in ("repeatability", "within_laboratory"):
            if (getattr(self, f"claimed_{quantity}_rsd_pct") is not None
                    and getattr(self, f"claimed_{quantity}_sd") is not None):
                raise ValueError(f"level {self.level:g} claims the {quantity.replace('_', '-')} precision both as an "
                                 f"RSD and as an SD; give one (claimed_{quantity}_rsd_pct or claimed_{quantity}_sd)")
        # a within-laboratory SD includes the repeatability (CLSI EP15-A3: s_WL^2 = s_r^2 + s_B^2), so a
        # claim below the repeatability claim is impossible: mistyped or the two swapped
        for unit in ("sd", "rsd_pct"):
            r, wl = getattr(self, f"claimed_repeatability_{unit}"), getattr(self, f"claimed_within_laboratory_{unit}")
            if r is not None and wl is not None and wl < r:
                raise ValueError(f"level {self.level:g}: claimed_within_laboratory_{unit} = {wl:g} is below "
                                 f"claimed_repeatability_{unit} = {r:g}; a within-laboratory precision includes the "
                                 "repeatability, so it cannot be smaller (are the two swapped?)")
        if self.reference_value is None and (self.reference_standard_uncertainty is not None
                                             or self.reference_df is not None):
            raise ValueError(f"level {self.level:g} gives reference_standard_uncertainty or reference_df without "
                             "reference_value")
        if self.reference_value is not None and self.reference_standard_uncertainty is None:
            raise ValueError(f"level {self.level:g} gives reference_value without reference_standard_uncertainty "
                             "(0 when the target value is taken as exact)")
        return self


# a column of the precision data naming a factor of the nested design (day, run, analyst, ...)
FactorColumn = Annotated[str, Field(min_length=1, max_length=40, pattern=r"^[A-Za-z_][A-Za-z0-9_]*$")]
RESERVED_COLUMNS = ("analyte", "level", "found")


class PrecisionSection(DataSource):        # data (sheet, header_row); none when [[runs]] give the QCs
    repeatability_rsd_max_pct: Optional[float] = Field(None, gt=0, le=100)
    intermediate_rsd_max_pct: Optional[float] = Field(None, gt=0, le=100)
    levels: list[PrecisionLevelLimit] = []
    # the nesting of the precision experiment, outermost factor first (e.g. ["day", "run"]); the
    # replicate is the innermost; None: the one-way design on the series column
    design: Optional[list[FactorColumn]] = Field(None, min_length=1, max_length=4)
    # a manufacturer's or earlier claim (RSD % of the level mean), verified by the upper
    # verification limit (CLSI EP15)
    claimed_repeatability_rsd_pct: Optional[float] = Field(None, gt=0, le=100)
    claimed_within_laboratory_rsd_pct: Optional[float] = Field(None, gt=0, le=100)
    # design minimums judged as criteria (None: not judged): series (days or runs) per level, results in
    # each series, levels (samples); the "clsi-ep15" preset sets EP15-A3's 5 days x 5 replicates, 2 samples
    min_series: Optional[int] = Field(None, ge=2, le=1000)
    min_replicates: Optional[int] = Field(None, ge=2, le=1000)
    min_levels: Optional[int] = Field(None, ge=1, le=100)

    @model_validator(mode="after")
    def _design(self):
        # RSD claims combine a level's own with the section's: a within-laboratory claim below the
        # repeatability claim is impossible (it includes the repeatability, CLSI EP15-A3)
        for lv in [None, *self.levels]:
            r, wl = self.claims_for(lv.level) if lv is not None else (self.claimed_repeatability_rsd_pct,
                                                                       self.claimed_within_laboratory_rsd_pct)
            if r is not None and wl is not None and wl < r:
                where = "" if lv is None else f"level {lv.level:g} (its own or the section's claims): "
                raise ValueError(f"{where}claimed_within_laboratory_rsd_pct = {wl:g} is below "
                                 f"claimed_repeatability_rsd_pct = {r:g}; a within-laboratory precision includes "
                                 "the repeatability, so it cannot be smaller (are the two swapped?)")
        if self.design is not None:
            if len(set(self.design)) != len(self.design):
                raise ValueError(f"design must name distinct columns, got {show(list(self.design))}")
            bad = [c for c in self.design if c in RESERVED_COLUMNS]
            if bad:
                raise ValueError(f"design names the column {show(bad[0])}, which holds "
                                 f"{'the results' if bad[0] == 'found' else 'no factor'}; name factor columns "
                                 "such as \"day\", \"run\", \"analyst\"")
        return self

    def _level(self, level: float):
        for lv in self.levels:
            if abs(lv.level - level) <= 1e-9 * max(abs(level), 1.0):
                return lv
        return None

    def limits_for(self, level: float) -> tuple:
        lv = self._level(level)
        if lv is not None:
            return (lv.repeatability_rsd_max_pct or self.repeatability_rsd_max_pct,
                    lv.intermediate_rsd_max_pct or self.intermediate_rsd_max_pct)
        return self.repeatability_rsd_max_pct, self.intermediate_rsd_max_pct

    def claims_for(self, level: float) -> tuple:
        """(claimed repeatability RSD %, claimed within-laboratory RSD %) at ``level``, None where not claimed."""
        lv = self._level(level)
        own = (None, None) if lv is None else (lv.claimed_repeatability_rsd_pct, lv.claimed_within_laboratory_rsd_pct)
        return (own[0] or self.claimed_repeatability_rsd_pct, own[1] or self.claimed_within_laboratory_rsd_pct)

    def sd_claims_for(self, level: float) -> tuple:
        """(claimed repeatability SD, claimed within-laboratory SD) at ``level`` (declared per level only)."""
        lv = self._level(level)
        return (None, None) if lv is None else (lv.claimed_repeatability_sd, lv.claimed_within_laboratory_sd)

    def reference_for(self, level: float) -> tuple | None:
        """(target value, its standard uncertainty, its df or None) at ``level``, or None when not given."""
        lv = self._level(level)
        if lv is None or lv.reference_value is None:
            return None
        return lv.reference_value, lv.reference_standard_uncertainty, lv.reference_df


@dataclass(frozen=True)
class PrecisionData:
    level: np.ndarray = field(repr=False)
    series: tuple[str, ...] = field(repr=False)
    found: np.ndarray = field(repr=False)       # found - offset, the subtraction done exactly
    offset: float = 0.0
    # the labels of each factor of [precision] design, outermost first (empty: the one-way design)
    factors: tuple[tuple[str, ...], ...] = field(default=(), repr=False)
    # where each result was read (file as the study names it, sheet, row), for naming flagged results
    sources: tuple[SourceRow, ...] = field(default=(), repr=False)


def load(reader, settings: PrecisionSection, analytes) -> dict[str, PrecisionData]:
    """``{analyte: PrecisionData}`` from the file ``settings.data``; errors name file, row, column, value.

    With a design, ``series`` is optional; the one-way analysis (outlier tests) then groups by
    the innermost unit of the design (its labels joined, e.g. "day-1 / run-2"). Per-level
    limits of [precision] and of [accuracy_profile] (which reads these data) must name levels
    present in the data.
    """
    design = tuple(settings.design or ())
    profile = getattr(reader.study.config, "accuracy_profile", None)

    def prepare(table):
        level = numeric_column(table, "level", reader.decimal)
        labels = [table.texts(name) for name in design]
        if table.has("series") or not design:
            series = table.texts("series")
        else:
            series = [" / ".join(path) for path in zip(*labels)]
        numeric_column(table, "found", reader.decimal)          # every cell checked before centring
        declared_levels_exist(reader, "precision", "level", [lv.level for lv in settings.levels], level)
        if profile is not None:
            declared_levels_exist(reader, "accuracy_profile", "level", [lv.level for lv in profile.levels], level)
        return table, level, series, labels

    def make(columns, idx, name):
        table, level, series, labels = columns
        offset, centred = exact_centre([table.columns["found"][i] for i in idx], table.decimal)
        sheet = getattr(table, "sheet", None) or None
        return PrecisionData(level[idx], tuple(series[i] for i in idx), centred, offset,
                             tuple(tuple(column[i] for i in idx) for column in labels),
                             tuple(SourceRow(table.path, sheet, table.rows[i]) for i in idx))

    required = ("level", "found") + (design if design else ("series",))
    optional = ("analyte",) + (("series",) if design and "series" not in design else ())
    return per_analyte(reader, settings, analytes, "precision", required, optional, "precision result", prepare,
                       make)
