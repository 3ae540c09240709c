"""Guideline presets: default acceptance criteria named by ``[study] guideline = "..."``.

A preset fills keys of the sections the study declares when the study does not set them; a
value the study sets overrides the preset, and both are recorded (results.json ``guideline``,
the dossier's audit trail). Each value names the document and section it comes from. Values
recalled rather than read from the document in this work are marked ``from_memory`` and shown
as such in the dossier; the laboratory must confirm every preset value against the current text
of the guideline.

This module holds data and one pure function; it reads no files.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["PresetValue", "PresetRequirement", "Preset", "PresetUse", "PRESETS", "PRESET_NAMES", "resolve", "supplied_note",
           "missing_requirements", "requirement_criterion_note"]


@dataclass(frozen=True)
class PresetValue:
    """One default of a preset: the study-file key ("section.key"), its value and where it comes from."""

    key: str
    value: float | int | str | bool
    source: str
    from_memory: bool


@dataclass(frozen=True)
class PresetRequirement:
    """A characteristic the guideline requires a validation to show: ``characteristic`` is its
    results.json section (the registry entry's name), ``what`` the guideline's words for it. A study
    naming the preset without showing it cannot pass (a not-applicable criterion
    ``guideline-requires-<characteristic>``: not shown is not passed)."""

    characteristic: str
    what: str
    source: str
    from_memory: bool


@dataclass(frozen=True)
class Preset:
    name: str
    title: str
    values: tuple[PresetValue, ...]
    requires: tuple[PresetRequirement, ...] = ()


@dataclass(frozen=True)
class PresetUse:
    """What became of one preset value in this study: used, or overridden by the study's own value."""

    key: str
    preset_value: float | int | str | bool
    study_value: float | int | str | bool | None     # None: the study does not set the key
    used: bool
    source: str
    from_memory: bool


_M10 = "ICH M10 (final, 24 May 2022)"
_SANTE = "SANTE/11312/2021"
_EP17 = "CLSI EP17-A2 (2012)"
_MDL = "40 CFR Part 136 Appendix B, Revision 2 (2017)"
_EP15 = "CLSI EP15-A3 (2014)"

PRESETS: dict[str, Preset] = {p.name: p for p in (
    Preset("ich-m10", f"{_M10}, chromatographic assays", (
        # from memory: ICH M10 sec. 3.2.1 (selectivity, chromatography): interference <= 20 % of the LLOQ
        # response and <= 5 % of the IS response, in at least 6 individual sources
        PresetValue("selectivity.analyte_limit_pct", 20.0, f"{_M10} sec. 3.2.1", True),
        PresetValue("selectivity.internal_standard_limit_pct", 5.0, f"{_M10} sec. 3.2.1", True),
        PresetValue("selectivity.min_lots", 6, f"{_M10} sec. 3.2.1", True),
        # from memory: ICH M10 sec. 3.2.3 (matrix effect): at least 6 lots, accuracy within +/-15 %, CV <= 15 %
        PresetValue("matrix_effect.lot_max_bias_pct", 15.0, f"{_M10} sec. 3.2.3", True),
        PresetValue("matrix_effect.lot_max_cv_pct", 15.0, f"{_M10} sec. 3.2.3", True),
        PresetValue("matrix_effect.min_lots", 6, f"{_M10} sec. 3.2.3", True),
        # from memory: ICH M10 sec. 3.2.6 (carry-over): <= 20 % of the LLOQ and <= 5 % of the IS
        PresetValue("carry_over.analyte_limit_pct", 20.0, f"{_M10} sec. 3.2.6", True),
        PresetValue("carry_over.internal_standard_limit_pct", 5.0, f"{_M10} sec. 3.2.6", True),
        # from memory: ICH M10 sec. 3.2.7 (dilution integrity): mean accuracy within +/-15 %, CV <= 15 %, 5 replicates
        PresetValue("dilution_integrity.max_bias_pct", 15.0, f"{_M10} sec. 3.2.7", True),
        PresetValue("dilution_integrity.max_cv_pct", 15.0, f"{_M10} sec. 3.2.7", True),
        PresetValue("dilution_integrity.min_replicates", 5, f"{_M10} sec. 3.2.7", True),
        # from memory: ICH M10 sec. 3.2.8 (stability): mean within +/-15 % of nominal, at least 3 QCs per level
        PresetValue("stability.limit_pct", 15.0, f"{_M10} sec. 3.2.8", True),
        PresetValue("stability.min_replicates", 3, f"{_M10} sec. 3.2.8", True),
        # from memory: ICH M10 sec. 5 (incurred sample reanalysis): within 20 % of the mean for at
        # least two-thirds of the repeats (chromatography)
        PresetValue("reanalysis.limit_pct", 20.0, f"{_M10} sec. 5", True),
        PresetValue("reanalysis.min_fraction", 2 / 3, f"{_M10} sec. 5", True),
        # from memory: ICH M10 sec. 5: ISR on 10 % of the first 1000 study samples and 5 % beyond, so a
        # verdict needs the number of study samples ([reanalysis] study_samples)
        PresetValue("reanalysis.size_rule", "ich-m10", f"{_M10} sec. 5", True),
    ), (
        # from memory: ICH M10 sec. 3.2 (validation of chromatographic methods): selectivity, matrix effect,
        # calibration curve and range, accuracy and precision, carry-over and stability are each shown
        PresetRequirement("calibration", "calibration curve and range", f"{_M10} sec. 3.2.4", True),
        PresetRequirement("selectivity", "selectivity", f"{_M10} sec. 3.2.1", True),
        PresetRequirement("matrix_effect", "matrix effect", f"{_M10} sec. 3.2.3", True),
        PresetRequirement("precision", "within-run and between-run accuracy and precision of the QCs",
                          f"{_M10} sec. 3.2.5", True),
        PresetRequirement("carry_over", "carry-over", f"{_M10} sec. 3.2.6", True),
        PresetRequirement("stability", "stability", f"{_M10} sec. 3.2.8", True),
    )),
    Preset("sante-11312-2021", _SANTE, (
        # from memory: SANTE/11312/2021 (matrix effects, sec. on calibration / Appendix A glossary): an
        # effect beyond +/-20 % calls for matrix-matched calibration
        PresetValue("matrix_effect.limit_pct", 20.0, f"{_SANTE}, matrix effects (sec. D, calibration)", True),
    ), (
        # from memory: SANTE/11312/2021 method validation (sec. on validation requirements): mean recovery and
        # repeatability RSD at (at least) the LOQ and a higher level
        PresetRequirement("recovery", "mean recovery", f"{_SANTE}, method validation", True),
        PresetRequirement("precision", "repeatability (RSD_r)", f"{_SANTE}, method validation", True),
    )),
    Preset("clsi-ep17", _EP17, (
        # from memory: CLSI EP17-A2 sec. 5.3: LoB as the 95th percentile of the blank results
        PresetValue("limit_of_blank.percentile", 0.95, f"{_EP17} sec. 5.3", True),
    ), (
        PresetRequirement("limit_of_blank", "limit of blank and limit of detection", _EP17, True),
    )),
    Preset("clsi-ep15", f"{_EP15}, user verification of precision and estimation of bias", (
        # from memory: CLSI EP15-A3 sec. 3 (precision experiment): 5 days, one run a day, 5 replicates per
        # run, at least 2 samples (concentrations); the claims are verified by the upper verification limit
        # at alpha 0.05 divided over the samples (the study's [criteria] alpha, 0.05 by default)
        PresetValue("precision.min_series", 5, f"{_EP15} sec. 3, the 5 x 5 design", True),
        PresetValue("precision.min_replicates", 5, f"{_EP15} sec. 3, the 5 x 5 design", True),
        PresetValue("precision.min_levels", 2, f"{_EP15} sec. 3, samples", True),
    ), (
        PresetRequirement("precision", "repeatability and within-laboratory precision", f"{_EP15} sec. 3", True),
    )),
    Preset("40-cfr-136-appendix-b", _MDL, (
        # Appendix B Rev. 2, "Definition": the MDL is reported with confidence 0.99 that the measured
        # concentration is distinguishable from method blank results (read in the rule's text, eCFR)
        PresetValue("method_detection_limit.confidence", 0.99, f"{_MDL}, Definition", False),
    ), (
        PresetRequirement("method_detection_limit", "method detection limit", _MDL, False),
    )),
)}
PRESET_NAMES = tuple(PRESETS)


def resolve(name: str, declared_sections: dict) -> tuple[dict, tuple[PresetUse, ...]]:
    """The values a preset supplies to the declared sections, and what became of each.

    Parameters
    ----------
    name : str
        A key of :data:`PRESETS`.
    declared_sections : dict
        ``{section: {key: study value, ...}}`` for each section the study declares, holding only
        the keys the study itself sets.

    Returns
    -------
    (updates, uses)
        ``updates`` is ``{section: {key: preset value}}`` for the keys the preset supplies (section
        declared, key not set by the study); ``uses`` lists every preset value of a declared section,
        used or overridden. Sections the study does not declare are left out: a preset never adds
        a characteristic.
    """
    preset = PRESETS[name]
    updates: dict = {}
    uses = []
    for pv in preset.values:
        section, key = pv.key.split(".", 1)
        if section not in declared_sections:
            continue
        own = declared_sections[section]
        if key in own:
            uses.append(PresetUse(pv.key, pv.value, own[key], False, pv.source, pv.from_memory))
        else:
            updates.setdefault(section, {})[key] = pv.value
            uses.append(PresetUse(pv.key, pv.value, None, True, pv.source, pv.from_memory))
    return updates, tuple(uses)


def supplied_note(name: str, uses: tuple[PresetUse, ...]) -> str:
    """"" when the preset has values for a section the study declares; else a sentence saying it supplied
    nothing and which sections it covers (a preset that silently does nothing reads as if it applied)."""
    if uses:
        return ""
    sections = list(dict.fromkeys(pv.key.split(".", 1)[0] for pv in PRESETS[name].values))
    return (f"the preset supplied nothing: it has values only for {', '.join(f'[{s}]' for s in sections)}, "
            "none of which this study declares; every criterion comes from the study file or the tool's defaults")


def missing_requirements(name: str | None, assessed) -> tuple[PresetRequirement, ...]:
    """The characteristics preset ``name`` requires that are not among ``assessed`` (names of the
    characteristics an analyte has results for); ``()`` without a preset."""
    if name is None:
        return ()
    have = set(assessed)
    return tuple(r for r in PRESETS[name].requires if r.characteristic not in have)


def requirement_criterion_note(name: str, req: PresetRequirement) -> str:
    """Why the requirement's criterion is not applicable, in words."""
    recalled = ", from memory" if req.from_memory else ""
    return (f"not applicable: {req.what} is required by the {PRESETS[name].title} preset (guideline = \"{name}\"; "
            f"{req.source}{recalled}), but the study does not show it for this analyte; not shown is not passed")
