"""The dossier's first pages: the conclusion, the analyte x characteristic matrix and the
criteria ordered failing first, all read from the results.json dictionary.

Nothing here estimates: values are picked from results.json (each with its path, so the
dossier can show it with ``data-src``) and verdicts are combined by the rule the overall
verdict uses (any not met: not met; else any not applicable: not applicable; else met).
"""

from __future__ import annotations

from dataclasses import dataclass

from . import numbers as N

__all__ = ["Cell", "MatrixRow", "matrix", "demonstrated_range", "DemonstratedRange", "judged_precision",
           "RANGE_CRITERIA", "other_verdicts", "guideline_note", "ordered_criteria", "conclusion", "characteristic_verdicts",
           "criterion_characteristic", "studied_heading", "units_of", "common_unit", "units_by_analyte",
           "flagged_results", "flagged_sources"]


def units_of(analyte: dict, study: dict) -> tuple[str, str]:
    """(concentration unit, response unit) of one analyte's results.json entry: its own
    (``[analyte_settings.<analyte>.study]``), else the study's."""
    return (analyte.get("concentration_unit", study["concentration_unit"]),
            analyte.get("response_unit", study["response_unit"]))


def common_unit(results: dict, which: int = 0) -> str | None:
    """The concentration (``which=0``) or response (1) unit every analyte shares, ``None`` when they differ."""
    found = {units_of(a, results["study"])[which] for a in results["analytes"]}
    return found.pop() if len(found) == 1 else None


def units_by_analyte(results: dict) -> list[dict]:
    """The analytes whose units are not the study's: ``{index, name, concentration, response}`` each."""
    study = results["study"]
    out = []
    for i, a in enumerate(results["analytes"]):
        conc, resp = units_of(a, study)
        if (conc, resp) != (study["concentration_unit"], study["response_unit"]):
            out.append({"index": i, "name": a["name"], "concentration": conc, "response": resp})
    return out


@dataclass(frozen=True)
class Cell:
    """One number of the matrix: its value, its results.json path and its rounding rule."""
    value: float | None
    src: str
    rule: str


@dataclass(frozen=True)
class MatrixRow:
    """One analyte's line of the summary matrix (a missing characteristic: ``None`` with ``*_note``)."""
    index: int
    name: str
    verdict: str
    unit: str                  # the analyte's concentration unit (range, LOD and LOQ are in it)
    ranges: tuple[tuple[Cell, Cell], ...]     # the range demonstrated (see :func:`demonstrated_range`)
    range_basis: str           # what it rests on, in words
    range_note: str            # why there is none (empty when there is one)
    lod: Cell | None
    loq: Cell | None
    detection_note: str
    recovery_low: Cell | None
    recovery_high: Cell | None
    repeatability_max: Cell | None
    intermediate_max: Cell | None
    uncertainty_max: Cell | None
    # the verdict of each other characteristic with criteria (calibration, the sector ones, ...), and of each
    # the guideline preset requires but the analyte does not show (``None``: not evaluated)
    others: tuple[tuple[str, bool | None], ...]
    not_met: int
    not_applicable: int


# the characteristic a criterion id belongs to (by prefix; the first match wins)
_CRITERION_CHARACTERISTIC = (
    ("lack-of-fit", "calibration"), ("back-calculation", "calibration"), ("monotonic", "calibration"),
    ("r-squared", "calibration"), ("working-range", "working_range"), ("loq-verification", "detection"),
    ("recovery-", "recovery"), ("repeatability-rsd-", "precision"), ("intermediate-rsd-", "precision"),
    ("repeatability-claim-", "precision"), ("within-laboratory-claim-", "precision"),
    ("accuracy-profile-", "accuracy_profile"), ("expanded-uncertainty-", "uncertainty"),
    ("limit-of-blank", "limit_of_blank"), ("limit-of-detection", "limit_of_blank"),
    ("limit-of-quantitation", "limit_of_blank"),
    ("reference-material-", "reference_material"), ("slope-equivalence", "revalidation"),
    ("residual-sd-ratio", "revalidation"), ("method-comparison-", "comparison"),
    ("protocol-deviation", "protocol"), ("guideline-requires-", "guideline"),
    # the sector characteristics (issue #15)
    ("carry-over", "carry_over"), ("carry-over-", "carry_over"), ("incurred-sample-reanalysis", "reanalysis"),
    ("matrix-effect-", "matrix_effect"), ("matrix-factor-", "matrix_effect"), ("matrix-lots-", "matrix_effect"),
    ("method-detection-limit", "method_detection_limit"), ("selectivity", "selectivity"),
    ("dilution-", "dilution_integrity"), ("stability-", "stability"),
)


def criterion_characteristic(criterion_id: str) -> str:
    """The results.json section a criterion judges ('other' when its id is not known here)."""
    for prefix, name in _CRITERION_CHARACTERISTIC:
        if criterion_id == prefix or (prefix.endswith("-") and criterion_id.startswith(prefix)):
            return name
    return "other"


def _combined(passes) -> bool | None:
    passes = list(passes)
    if any(p is False for p in passes):
        return False
    if any(p is None for p in passes):
        return None
    return True


def characteristic_verdicts(analyte: dict) -> dict[str, bool | None]:
    """Verdict of each characteristic of one analyte from its own criteria only (absent: no criteria)."""
    grouped: dict[str, list] = {}
    for c in analyte["criteria"]:
        grouped.setdefault(criterion_characteristic(c["id"]), []).append(c["pass"])
    return {name: _combined(passes) for name, passes in grouped.items()}


def _extreme(analyte_index: int, section: str, levels, key: str, pick) -> Cell | None:
    candidates = [(lv[key], i) for i, lv in enumerate(levels) if lv.get(key) is not None]
    if not candidates:
        return None
    value, i = pick(candidates)
    return Cell(value, f"analytes.{analyte_index}.{section}.levels.{i}.{key}", N.rule_for_path(key))


# the criteria a working range rests on: those of the calibration it is read from, and its own
RANGE_CRITERIA = ("lack-of-fit", "back-calculation", "monotonic", "r-squared", "working-range")


@dataclass(frozen=True)
class DemonstratedRange:
    """The range the summary calls validated: the working range when every criterion it rests on
    (:data:`RANGE_CRITERIA`) is met, intersected with each interval where the accuracy profile lies
    within its acceptance limits when one was studied (``pieces`` empty, ``note`` why, otherwise)."""
    pieces: tuple[tuple[Cell, Cell], ...]
    basis: str
    note: str


def _unmet(analyte: dict, ids) -> list[str]:
    """'lack-of-fit not met', 'r-squared not applicable' for each of ``ids`` not met."""
    return [f"{c['id']} {'not met' if c['pass'] is False else 'not applicable'}"
            for c in analyte["criteria"] if c["id"] in ids and c["pass"] is not True]


def demonstrated_range(index: int, analyte: dict) -> DemonstratedRange:
    """The validated range of one analyte for the summary, the conclusion and the cover (picked from
    results.json, with the path of each end: a bound of the working range or of the accuracy profile)."""
    base = f"analytes.{index}"
    wr = analyte.get("working_range")
    if not wr:
        return DemonstratedRange((), "", "no working range assessed")
    if wr.get("low") is None:
        return DemonstratedRange((), "", wr["basis"])
    # the calibration's criteria first: when one fails, the working-range criterion is not applicable for it
    unmet = _unmet(analyte, RANGE_CRITERIA[:-1]) or _unmet(analyte, RANGE_CRITERIA[-1:])
    if unmet:
        return DemonstratedRange((), "", "not validated: " + ", ".join(unmet)
                                 + " (a range is validated only when the criteria it rests on are met)")
    # a range that starts at the reported LOQ shows it as the detection table does (2 s.f.)
    low = Cell(wr["low"], f"{base}.working_range.low",
               "uncertainty" if str(wr.get("basis", "")).startswith("reported LOQ") else "value")
    high = Cell(wr["high"], f"{base}.working_range.high", "value")
    ap = analyte.get("accuracy_profile")
    if not ap:
        return DemonstratedRange(((low, high),), "working range", "")
    pieces = []
    for j, r in enumerate(ap.get("validated_ranges") or ()):
        a_low = Cell(r["low"], f"{base}.accuracy_profile.validated_ranges.{j}.low", "value")
        a_high = Cell(r["high"], f"{base}.accuracy_profile.validated_ranges.{j}.high", "value")
        lo = a_low if a_low.value > low.value else low
        hi = a_high if a_high.value < high.value else high
        if lo.value <= hi.value:
            pieces.append((lo, hi))
    basis = "working range within the accuracy profile's acceptance limits"
    if not pieces:
        return DemonstratedRange((), basis, "not validated: the accuracy profile lies within its acceptance "
                                 "limits nowhere in the working range")
    return DemonstratedRange(tuple(pieces), basis, "")


def judged_precision(analyte: dict) -> list[dict]:
    """Per precision level, the repeatability and intermediate RSD the criteria judge, each with its
    results.json path: the nested design's conditions when a design is declared, else the one-way
    ANOVA's (``{"level", "repeatability": (value, path), "intermediate": (value, path), "procedure"}``)."""
    out = []
    for i, lv in enumerate((analyte.get("precision") or {}).get("levels", [])):
        nested = lv.get("nested")
        if nested and nested.get("conditions"):
            last = len(nested["conditions"]) - 1
            path = f"precision.levels.{i}.nested.conditions"
            out.append({"level": lv["level"], "procedure": "nested " + "/".join(nested["design"]),
                        "repeatability": (nested["conditions"][0]["rsd_pct"], f"{path}.0.rsd_pct"),
                        "intermediate": (nested["conditions"][last]["rsd_pct"], f"{path}.{last}.rsd_pct")})
        else:
            path = f"precision.levels.{i}"
            out.append({"level": lv["level"], "procedure": "one-way ANOVA by series",
                        "repeatability": (lv.get("repeatability_rsd_pct"), f"{path}.repeatability_rsd_pct"),
                        "intermediate": (lv.get("intermediate_rsd_pct"), f"{path}.intermediate_rsd_pct")})
    return out


def _judged_max(index: int, analyte: dict, which: str) -> Cell | None:
    found = [(lv[which][0], lv[which][1]) for lv in judged_precision(analyte) if lv[which][0] is not None]
    if not found:
        return None
    value, path = max(found)
    return Cell(value, f"analytes.{index}.{path}", N.rule_for_path(path))


# characteristics the matrix shows in columns of their own (their verdicts are in the analyte's section)
_MATRIX_COLUMNS = ("working_range", "detection", "recovery", "precision", "uncertainty", "protocol", "guideline")
_SHORT_LABELS = {"calibration": "calibration", "carry_over": "carry-over", "matrix_effect": "matrix effect",
                 "selectivity": "selectivity", "stability": "stability", "dilution_integrity": "dilution",
                 "reanalysis": "ISR", "limit_of_blank": "LoB/LoD", "method_detection_limit": "MDL",
                 "reference_material": "CRM", "accuracy_profile": "accuracy profile", "comparison": "comparison",
                 "revalidation": "re-validation", "precision": "precision", "recovery": "recovery",
                 "other": "other"}


def other_verdicts(analyte: dict) -> tuple[tuple[str, bool | None], ...]:
    """(short label, verdict) of each characteristic with criteria that has no column of its own in the
    matrix, in criteria order, then each characteristic a guideline preset requires and the analyte does
    not show (label '<name> (required, not shown)', verdict ``None``)."""
    verdicts = characteristic_verdicts(analyte)
    out = [(_SHORT_LABELS.get(name, name.replace("_", " ")), v) for name, v in verdicts.items()
           if name not in _MATRIX_COLUMNS]
    for c in analyte["criteria"]:
        if c["id"].startswith("guideline-requires-"):
            name = c["id"].removeprefix("guideline-requires-").replace("-", "_")
            out.append((_SHORT_LABELS.get(name, name.replace("_", " ")) + " (required, not shown)", None))
    return tuple(out)


def guideline_note(results: dict) -> dict | None:
    """What page 2 says of ``[study] guideline``: the preset's title and name, how many of its values are
    used as limits and how many of those are recalled (from memory), and per required characteristic
    the analytes that do not show it (``None`` without a preset)."""
    g = results.get("guideline")
    if not g:
        return None
    used = [v for v in g["values"] if v["used"]]
    missing: dict[str, list[tuple[int, str]]] = {}
    for i, a in enumerate(results["analytes"]):
        for c in a["criteria"]:
            if c["id"].startswith("guideline-requires-"):
                missing.setdefault(c["description"].split(": required by")[0], []).append((i, a["name"]))
    return {"title": g["title"], "name": g["name"], "used": len(used),
            "recalled": sum(1 for v in used if v["from_memory"]), "missing": list(missing.items())}


def matrix(results: dict) -> list[MatrixRow]:
    """One row per analyte: validated range, LOD/LOQ on the reported basis, range of the level mean
    recoveries, largest repeatability and intermediate RSD, largest relative expanded uncertainty
    (where assessed), verdict and counts of criteria."""
    rows = []
    for i, a in enumerate(results["analytes"]):
        base = f"analytes.{i}"
        unit = units_of(a, results["study"])[0]
        shown = demonstrated_range(i, a)
        det = a.get("detection")
        lod = loq = None
        det_note = "not assessed"
        if det:
            j, rep = next((j, e) for j, e in enumerate(det["estimates"]) if e["method"] == det["reported_basis"])
            det_note = "" if rep["lod"] is not None else rep.get("reason") or "not applicable"
            if rep["lod"] is not None:
                lod = Cell(rep["lod"], f"{base}.detection.estimates.{j}.lod", "uncertainty")
                loq = Cell(rep["loq"], f"{base}.detection.estimates.{j}.loq", "uncertainty")
        rec = a.get("recovery")
        rec_levels = rec["levels"] if rec else []
        unc_levels = (a.get("uncertainty") or {}).get("levels", [])
        rows.append(MatrixRow(
            index=i, name=a["name"], verdict=a["verdict"], unit=unit, ranges=shown.pieces, range_basis=shown.basis,
            range_note=shown.note,
            lod=lod, loq=loq, detection_note=det_note,
            recovery_low=_extreme(i, "recovery", rec_levels, "mean_pct", min),
            recovery_high=_extreme(i, "recovery", rec_levels, "mean_pct", max),
            repeatability_max=_judged_max(i, a, "repeatability"),
            intermediate_max=_judged_max(i, a, "intermediate"),
            uncertainty_max=_extreme(i, "uncertainty", unc_levels, "expanded_pct", max),
            others=other_verdicts(a),
            not_met=sum(1 for c in a["criteria"] if c["pass"] is False),
            not_applicable=sum(1 for c in a["criteria"] if c["pass"] is None)))
    return rows


_ORDER = {False: 0, None: 1, True: 2}


def ordered_criteria(results: dict) -> list[dict]:
    """Every criterion of every analyte, not met first, then not applicable, then met (stable within
    each group), with its analyte, its indices in results.json and its display (label, unit, rule)."""
    study = results["study"]
    rows = [dict(c, analyte=a["name"], analyte_index=i, criterion_index=j,
                 display=N.criterion_display(c["id"], c["description"], units_of(a, study)[0]))
            for i, a in enumerate(results["analytes"]) for j, c in enumerate(a["criteria"])]
    for c in rows:       # the value as printed beside its limit: never seeming to contradict its verdict
        c["value_text"] = N.criterion_value(c["value"], c["limit"], c["display"], c["pass"])
    return sorted(rows, key=lambda c: _ORDER[c["pass"]])


def _names(names: list[str], limit: int = 6) -> str:
    if len(names) <= limit:
        return ", ".join(names)
    return ", ".join(names[:limit]) + f" and {len(names) - limit} more"


def conclusion(results: dict) -> str:
    """The conclusion paragraph: the overall verdict in words, what failed or could not be judged,
    and over which ranges the method was shown to work."""
    analytes = results["analytes"]
    total = sum(len(a["criteria"]) for a in analytes)
    failed = [a["name"] for a in analytes if any(c["pass"] is False for c in a["criteria"])]
    incomplete = [a["name"] for a in analytes
                  if a["name"] not in failed and any(c["pass"] is None for c in a["criteria"])]
    n_failed = sum(1 for a in analytes for c in a["criteria"] if c["pass"] is False)
    n_na = sum(1 for a in analytes for c in a["criteria"] if c["pass"] is None)
    passed = len(analytes) - len(failed) - len(incomplete)
    parts = []
    if results["verdict"] == "pass":
        parts.append(f"The method met all {total} acceptance criteria declared for its {len(analytes)} "
                     f"analyte(s); on these data it is fit for the intended use within the validated ranges "
                     "below, subject to the reviewer's judgement of the remarks in this dossier.")
    else:
        parts.append(f"{passed} of {len(analytes)} analyte(s) met every acceptance criterion.")
        if failed:
            parts.append(f"{n_failed} criterion/criteria were NOT MET, for {_names(failed)}: the method is not "
                         "shown fit for these analytes until the failures are resolved (listed first below).")
        if n_na:
            parts.append(f"{n_na} criterion/criteria could not be evaluated on these data"
                         + (f" (for {_names(incomplete)})" if incomplete else "")
                         + "; what was not shown is not passed, so the overall verdict cannot be a pass.")
    ranges = [(a["name"], demonstrated_range(i, a), units_of(a, results["study"])[0])
              for i, a in enumerate(analytes) if a.get("working_range")]
    shown = [f"{name} " + " and ".join(f"{N.by_rule(lo.value, 'value')} to {N.by_rule(hi.value, 'value')}"
                                      for lo, hi in dr.pieces) + f" {unit} ({dr.basis})"
             for name, dr, unit in ranges if dr.pieces]
    missing = [(name, dr.note) for name, dr, _ in ranges if not dr.pieces]
    if shown and len(shown) <= 6:
        parts.append("Validated ranges: " + "; ".join(shown) + ".")
    elif shown:
        parts.append(f"{len(shown)} of {len(analytes)} analyte(s) have a validated range (see the matrix for each "
                     "and its basis).")
    if missing and len(missing) <= 6:
        parts.append("No validated range for " + "; ".join(f"{name} ({note})" for name, note in missing) + ".")
    elif missing:
        parts.append(f"No validated range for {_names([name for name, _ in missing])} (the reason of each in the "
                     "matrix).")
    deviations = (results.get("protocol") or {}).get("deviations") or []
    if deviations:
        parts.append(f"The run deviates from its approved protocol in {len(deviations)} point(s) (listed below).")
    return " ".join(parts)


def _lower_first(title: str) -> str:
    """'Recovery (trueness)' -> 'recovery (trueness)'; an acronym ('LOQ verification') keeps its case."""
    return title if title[:2].isupper() else title[:1].lower() + title[1:]


def studied_heading(analyte: dict, names: tuple[str, ...] = ("detection", "working_range", "recovery",
                                                              "reference_material", "precision"),
                    titles: dict[str, str] | None = None) -> str:
    """A heading naming the characteristics of ``names`` this analyte actually has results for (each by
    its title in ``titles``, else by :func:`numbers.characteristic_label`)."""
    titles = titles or {}
    present = [_lower_first(titles.get(n) or N.characteristic_label(n)) for n in names if analyte.get(n)]
    if not present:
        return ""
    text = present[0] if len(present) == 1 else ", ".join(present[:-1]) + " and " + present[-1]
    return text[:1].upper() + text[1:]


# --- plausibility remarks -------------------------------------------------------------------------

# an LOD this many times below the lowest calibrator is remarked on
# common practice, no published source: the limits should lie within, or near, the calibrated range
LOD_BELOW_LOWEST_FACTOR = 3.0

_TEST_NAMES = {"grubbs_double": "Grubbs' test for a pair of series means", "grubbs": "Grubbs' test of the series means",
               "cochran": "Cochran's test", "grubbs_within_series": "Grubbs' test within a series",
               "lack_of_fit": "the lack-of-fit test", "normality": "the normality test",
               "heteroscedasticity": "the heteroscedasticity test", "levene": "the equal-variance test",
               "mandel": "Mandel's fitting test", "intercept_test": "the intercept test",
               "loq_verification": "the LOQ verification"}


def lowest_calibrator(calibration: dict) -> float | None:
    """The lowest calibrator level above zero (None when there is none)."""
    levels = [lv["concentration"] for lv in calibration["level_table"] if lv["concentration"] > 0]
    return min(levels) if levels else None


def _too_few(analyte: dict, unit: str) -> list:
    """'needs at least ...' reasons of the analyte, one remark per test and reason."""
    grouped: dict[tuple[str, str], list[str]] = {}
    for entry in analyte.get("not_applicable", []):
        reason = entry["reason"]
        if "needs at least" not in reason and "too few" not in reason:
            continue
        parts = entry["item"].split(".")
        names = [p for p in parts if not p.isdigit()]
        test = _TEST_NAMES.get(names[-1], names[-1].replace("_", " "))
        where = ""
        if len(parts) >= 3 and parts[0] == "precision" and parts[1] == "levels" and parts[2].isdigit():
            level = analyte["precision"]["levels"][int(parts[2])]["level"]
            where = N.by_rule(level, "value")
        grouped.setdefault((test, reason), [])
        if where and where not in grouped[(test, reason)]:     # several series at one level: named once
            grouped[(test, reason)].append(where)
    out = []
    for (test, reason), levels in grouped.items():
        at = f" at level(s) {', '.join(levels)} {unit}" if levels else ""
        out.append(Remark("too-few-data", f"too few data for {test}{at}: {reason}."))
    return out


@dataclass(frozen=True)
class Remark:
    """One plausibility remark: its kind (to group the same remark across analytes) and its text."""
    kind: str
    text: str


REMARK_KINDS = {"limits-below-range": "LOD or LOQ below the lowest calibrator",
                "sample-outside-range": "samples outside the calibrated range",
                "function-changed": "calibration function other than the earlier validation's",
                "too-few-data": "tests with too few data",
                "matrix-effect-beyond-limit": "matrix effect beyond its limit",
                "precision-bound-above-limit": "precision met on the point estimate, its upper bound above the limit",
                "pooled-calibration": "calibration and limits from one fit pooling the runs"}


def grouped_remarks(per_analyte: list[tuple[int, str, list[Remark]]], single_limit: int = 3) -> list[dict]:
    """The remarks of all analytes for the summary: each kind in full when it concerns at most
    ``single_limit`` analytes, else once with the analytes it concerns (their sections have the text)."""
    kinds: dict[str, list[tuple[int, str, Remark]]] = {}
    for index, name, items in per_analyte:
        for remark in items:
            kinds.setdefault(remark.kind, []).append((index, name, remark))
    out = []
    for kind, items in kinds.items():
        analytes = list(dict.fromkeys((index, name) for index, name, _ in items))
        if len(analytes) <= single_limit:
            out.extend({"kind": kind, "title": "", "analytes": [(index, name)], "text": r.text}
                       for index, name, r in items)
        else:
            out.append({"kind": kind, "title": REMARK_KINDS.get(kind, kind), "analytes": analytes,
                        "text": f"{len(analytes)} analytes; see each analyte's section"})
    return out


def _matrix_effect(analyte: dict, guideline: dict | None) -> list[Remark]:
    """A matrix effect (ME %) beyond its limit, judged or only reported: named in the summary either way,
    with where the limit comes from (a guideline preset or the study) and how it was configured."""
    me = analyte.get("matrix_effect") or {}
    sr = me.get("slope_ratio")
    if not sr or sr.get("statistic") is None or not sr.get("beyond_limit"):
        return []
    limit = sr["limit_percent"]
    preset = next((v for v in (guideline or {}).get("values", []) if v["key"] == "matrix_effect.limit_pct"
                   and v["used"] and v["study_value"] is None and v["preset_value"] == limit), None)
    source = (f"the {guideline['title']} preset's limit (guideline = \"{guideline['name']}\"; "
              f"{preset['source']}{', from memory' if preset['from_memory'] else ''})" if preset else
              "the study's limit ([matrix_effect] limit_pct)")
    text = (f"the matrix effect ME % = {N.by_rule(sr['statistic'], 'percent')} % (slope in matrix / slope in solvent "
            f"− 1) lies beyond ±{N.by_rule(limit, 'value')} %, {source}: "
            + (f"beyond it {guideline['title']} calls for matrix-matched calibration (or another calibration that "
               "compensates the effect), as quantification against solvent standards would be biased. " if preset else
               "beyond it quantification against solvent standards would be biased; matrix-matched calibration "
               "is indicated. "))
    verdict = next((c["pass"] for c in analyte["criteria"] if c["id"] == "matrix-effect-slope-ratio"), "absent")
    if me.get("slope_ratio_judged") and verdict != "absent":
        text += ("It is judged (judge_slope_ratio = true): criterion matrix-effect-slope-ratio, "
                 f"{ {True: 'met', False: 'NOT MET', None: 'not applicable'}[verdict]}.")
    else:
        text += ("It is reported, not judged (judge_slope_ratio = false), so the verdict does not depend on it: "
                 "confirm that samples are quantified against the matrix-matched [calibration], or set "
                 "judge_slope_ratio = true.")
    return [Remark("matrix-effect-beyond-limit", text)]


def remarks(analyte: dict, unit: str, guideline: dict | None = None) -> list[Remark]:
    """Plain-language plausibility remarks on one analyte's results (empty when there is nothing to say):
    limits below the lowest calibrator, samples outside the calibrated range, a calibration function
    other than the earlier validation's, a matrix effect beyond its limit (``guideline``: the
    results.json ``guideline`` entry, naming a preset that supplied the limit), tests with too few data."""
    out = _matrix_effect(analyte, guideline)
    cal = analyte["calibration"]
    lowest = lowest_calibrator(cal)
    det = analyte.get("detection")
    if det and lowest is not None:
        rep = next(e for e in det["estimates"] if e["method"] == det["reported_basis"])
        far = rep["lod"] is not None and rep["lod"] > 0 and lowest / rep["lod"] >= LOD_BELOW_LOWEST_FACTOR
        loq_below = rep["loq"] is not None and rep["loq"] < lowest
        lod_text = f"the LOD ({N.uncertainty(rep['lod'])} {unit})"
        loq_text = f"the LOQ ({N.uncertainty(rep['loq'])} {unit})"
        below = f"the lowest calibrator ({N.by_rule(lowest, 'value')} {unit})"
        if far:
            what = f"{lod_text} is {lowest / rep['lod']:.1f} times below {below}"
            what += f" and {loq_text} lies below it too" if loq_below else ""
        elif loq_below:
            what = f"{loq_text} lies below {below}"
        if far or loq_below:
            out.append(Remark("limits-below-range", f"{what}: extrapolated below the calibrated range; confirm "
                              "with samples spiked near the limits before reporting results there."))
    levels = [lv["concentration"] for lv in cal["level_table"]]
    if levels:
        top, bottom = max(levels), min(levels)
        for s in analyte.get("samples") or []:
            x = s.get("concentration")
            if x is None or s.get("within_range", True):
                continue
            side = "above" if x > top else "below"
            out.append(Remark("sample-outside-range", f"sample {s['id']} ({N.by_rule(x, 'value')} {unit}) is {side} the calibrated range "
                       f"({N.by_rule(bottom, 'value')} to {N.by_rule(top, 'value')} {unit}): its result is "
                       "extrapolated; dilute or re-calibrate before reporting it."))
    rv = analyte.get("revalidation")
    own = (rv or {}).get("current_own_choice")
    if own:
        before = (rv["refit_model"], rv["refit_weighting"], rv["refit_through_origin"])
        now = (own["model"], own["weighting"], own["through_origin"])
        if before != now:
            out.append(Remark("function-changed",
                              f"this run's own calibration function ({_function(*now)}) differs from the earlier "
                              f"validation's ({_function(*before)}); the comparison uses the earlier function."))
    out.extend(_precision_bounds(analyte, unit))
    out.extend(_pooled_calibration(analyte))
    out.extend(_too_few(analyte, unit))
    return out


def _precision_bounds(analyte: dict, unit: str) -> list[Remark]:
    """An RSD criterion met on its point estimate while the estimate's one-sided upper confidence bound
    (1 - alpha, as the criterion's note gives it) lies above the limit: met on that basis only."""
    criteria = {c["id"]: c for c in analyte["criteria"]}
    levels = (analyte.get("precision") or {}).get("levels", [])
    out = []
    for lv in levels:
        nested = lv.get("nested")
        if nested and nested.get("conditions"):
            bounds = {"repeatability": nested["conditions"][0].get("rsd_upper_pct"),
                      "intermediate": nested["conditions"][-1].get("rsd_upper_pct")}
        else:
            b = lv.get("rsd_upper_bounds") or {}
            bounds = {"repeatability": b.get("repeatability_rsd_upper_pct"),
                      "intermediate": b.get("intermediate_rsd_upper_pct")}
        for kind, label in (("repeatability", "repeatability RSD"), ("intermediate", "intermediate precision RSD")):
            c = criteria.get(f"{kind}-rsd-{lv['level']:g}")
            bound = bounds[kind]
            if (c is None or c["pass"] is not True or bound is None or c["limit"] is None
                    or bound <= c["limit"] or c["value"] == bound):
                continue
            out.append(Remark("precision-bound-above-limit",
                              f"the {label} at {N.by_rule(lv['level'], 'value')} {unit} "
                              f"({N.by_rule(c['value'], 'rsd')} %) meets its {N.by_rule(c['limit'], 'value')} % limit on "
                              f"the point estimate only: its upper confidence bound, {N.by_rule(bound, 'rsd')} %, is "
                              f"above it ({c['id']}, not met on that basis)."))
    return out


def _pooled_calibration(analyte: dict) -> list[Remark]:
    """Runs quantified with their own calibrations while the calibration section, the LOD/LOQ and the
    working range come from one fit pooling every run's calibrators."""
    runs = analyte.get("runs") or {}
    if runs.get("quantified_with") != "run" or len(runs.get("calibrations") or ()) < 2:
        return []
    return [Remark("pooled-calibration",
                   f"the calibration shown, its LOD and LOQ and the working range come from one fit pooling the "
                   f"calibrators of all {len(runs['calibrations'])} runs, while each run's QCs and samples are "
                   "quantified with that run's own calibration (see Analytical runs): the pooled figures describe "
                   "the method across runs, not the calibration any result was read from; judge each run's "
                   "calibration in its own table.")]


def _function(model: str, weighting: str, through_origin: bool) -> str:
    name = "straight line through the origin" if through_origin else (
        "straight line" if model == "linear" else "second-order polynomial" if model == "quadratic" else model)
    return f"{name}, {N.weighting_label(weighting)}"


def flagged_points(calibration: dict) -> list[str]:
    """The point number (row of the calibration data table, from 1) of each flagged calibrator."""
    out = []
    for o in calibration["outliers"]["flagged"]:
        match = next((str(i) for i, b in enumerate(calibration["back_calculated"], start=1)
                      if b["nominal"] == o["concentration"] and b["response"] == o["response"]), "?")
        out.append(match)
    return out


def flagged_results(analyte: dict) -> list[dict]:
    """Each precision result an outlier test flags, as results.json gives it (``precision.levels[].
    flagged_results[]``), with its level, its position there (``src``, the results.json path) and the
    names of the flagging tests in words (``by``), in level and input order."""
    out = []
    levels = (analyte.get("precision") or {}).get("levels", [])
    for li, lvl in enumerate(levels):
        for k, f in enumerate(lvl.get("flagged_results", [])):
            out.append({**f, "level": lvl["level"], "level_src": f"precision.levels.{li}.level",
                        "src": f"precision.levels.{li}.flagged_results.{k}",
                        "by": [_TEST_NAMES[t] for t in f["tests"]]})
    return out


def flagged_sources(analyte: dict) -> dict:
    """``{(file, sheet or None, row): "the flagging tests in words"}`` of the analyte's flagged precision
    results that name their source (for marking them among the raw data; a row holds one result)."""
    return {(f["source"]["file"], f["source"].get("sheet"), f["source"]["row"]): ", ".join(f["by"])
            for f in flagged_results(analyte) if f.get("source") is not None}

