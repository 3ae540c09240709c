"""The shape of a validation characteristic: its registry entry, its step's output, its context.

A characteristic is a sub-package of :mod:`validator.characteristics` whose ``__init__`` holds
``ENTRY = Characteristic(...)``; :data:`validator.registry.REGISTRY` lists the entries in the
order they are assessed. Nothing here imports the input, results or report layers: the types
they hand over (the study configuration, an analyte's data, the reading of the results) are
only named in annotations.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Generic, Mapping, TypeVar

from ..criteria import Criterion

__all__ = ["Characteristic", "Assessment", "Reading"]

R = TypeVar("R")


@dataclass(frozen=True)
class Reading:
    """What a characteristic's sentences and figures may know besides its results.json entry."""

    alpha: float                 # the study's alpha, to read p-values against
    unit: str                    # the analyte's concentration unit (its own, else the study's)
    response_unit: str = ""      # the analyte's response unit (its own, else the study's)
    key: str = ""                # unique per analyte in the dossier (prefix of a figure's element ids)
    # the analyte's not_applicable list of results.json, as (item, reason) pairs
    not_applicable: tuple[tuple[str, str], ...] = ()
    # the analyte's whole results.json entry, for a characteristic that shows the results of entries
    # above it (the re-validation draws this run's calibration); read it, never change it
    analyte: Mapping[str, Any] | None = None

    def reason_for(self, item: str) -> str:
        """Why the result at ``item`` (its path in the analyte's entry) is not applicable."""
        return next((reason for path, reason in self.not_applicable if path == item), "see the analyte's notes")


@dataclass(frozen=True)
class Assessment(Generic[R]):
    """What one characteristic adds: its result (kept in the context under its name) and criteria."""

    result: R
    criteria: tuple[Criterion, ...] = ()
    # data this step gives the entries below it, as (entry name, data): what their
    # ``ctx.data_of(ENTRY)`` (or the AnalyteData field of that name) then holds
    provides: tuple[tuple[str, Any], ...] = ()


@dataclass(frozen=True)
class Characteristic(Generic[R]):
    """A registry entry: everything the pipeline needs to know about one characteristic.

    ``name`` is at once its study-file table, its results.json key, its context key and its
    template fragment's name. ``assess(ctx)`` returns ``None`` when the characteristic is not
    assessed for the analyte. ``settings`` is the pydantic model of its ``[name]`` table
    (``None``: no table); a table whose keys all have defaults is always present, one with a
    required key is optional unless ``required``. ``load(reader, settings, analytes)`` reads
    its data file and returns ``{analyte: data}``. ``result_types`` are the dataclasses the
    ``results.Serialiser`` writes under ``name``. ``sentences(entry, reading)`` and
    ``figures(entry, reading)`` build the dossier's text and SVG figures from the written
    results.json entry alone; ``fragment`` is its template and ``placement`` where the dossier
    includes it: ``"characteristics"`` in each analyte's characteristics section (for an analyte
    that has the entry), ``"analyte"`` as a section of its own ahead of them (the calibration),
    ``"study-before"`` and ``"study-after"`` once, as a study-level section before or after the
    analytes' sections (the re-validation and method comparison; the quantified samples). ``json_path`` writes the result
    inside an earlier entry's section instead of under its own name (the LOQ verification is
    ``"detection.loq_verification"``). ``record(result)``, when given, makes the dataclass that
    results.json writes for a result that holds more than it shows (the calibration's fit).
    ``judges``: when the study declares the table but the analyte has no data in its file, the
    analyte gets a not-applicable criterion ``<name>-data`` saying so (never a silent omission);
    False for entries that only supply data or quantify (blanks, samples). ``runs_reads``: for an
    entry that can read the runs, what it reads there (``"blank or zero injections with a found
    value"``); when the study declares the table to read the runs and ``assess`` returns ``None``
    because the analyte's runs have none of these, the analyte gets the same ``<name>-data``
    criterion, saying so.
    """

    name: str
    title: str
    assess: Callable[["AnalyteContext"], Assessment[R] | None]     # validator.engine.AnalyteContext
    settings: type | None = None
    required: bool = False
    load: Callable[..., Mapping[str, Any]] | None = None
    result_types: tuple[type, ...] = ()
    sentences: Callable[[dict, Reading], Mapping[str, str]] | None = None
    figures: Callable[[dict, Reading], Mapping[str, str]] | None = None
    fragment: str | None = None
    placement: str = "characteristics"
    judges: bool = True
    json_path: str | None = None
    record: Callable[[R], Any] | None = None
    runs_reads: str = ""

    @property
    def written_at(self) -> str:
        """Its path in an analyte's results.json entry."""
        return self.json_path or self.name
