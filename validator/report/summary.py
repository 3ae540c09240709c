"""The dossier's first pages: the conclusion, the analyte x characteristic matrix and the
criteria ordered failing first, all read from the results.json dictionary.

Nothing here estimates: values are picked from results.json (each with its path, so the
dossier can show it with ``data-src``) and verdicts are combined by the rule the overall
verdict uses (any not met: not met; else any not applicable: not applicable; else met).
"""

from __future__ import annotations

from dataclasses import dataclass

from . import numbers as N

__all__ = ["Cell", "MatrixRow", "matrix", "ordered_criteria", "conclusion", "characteristic_verdicts",
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
    range_low: Cell | None
    range_high: Cell | None
    range_note: str
    lod: Cell | None
    loq: Cell | None
    detection_note: str
    recovery_low: Cell | None
    recovery_high: Cell | None
    repeatability_max: Cell | None
    intermediate_max: Cell | None
    uncertainty_max: Cell | None
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
    ("protocol-deviation", "protocol"),
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


def matrix(results: dict) -> list[MatrixRow]:
    """One row per analyte: validated range, LOD/LOQ on the reported basis, range of the level mean
    recoveries, largest repeatability and intermediate RSD, largest relative expanded uncertainty
    (where assessed), verdict and counts of criteria."""
    rows = []
    for i, a in enumerate(results["analytes"]):
        base = f"analytes.{i}"
        unit = units_of(a, results["study"])[0]
        wr = a.get("working_range")
        if wr and wr.get("low") is not None:
            # a range that starts at the reported LOQ shows it as the detection table does (2 s.f.)
            low = Cell(wr["low"], f"{base}.working_range.low",
                       "uncertainty" if str(wr.get("basis", "")).startswith("reported LOQ") else "value")
            high = Cell(wr["high"], f"{base}.working_range.high", "value")
            range_note = ""
        else:
            low = high = None
            range_note = wr["basis"] if wr else "not assessed"
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
        prec_levels = (a.get("precision") or {}).get("levels", [])
        unc_levels = (a.get("uncertainty") or {}).get("levels", [])
        rows.append(MatrixRow(
            index=i, name=a["name"], verdict=a["verdict"], unit=unit, range_low=low, range_high=high, range_note=range_note,
            lod=lod, loq=loq, detection_note=det_note,
            recovery_low=_extreme(i, "recovery", rec_levels, "mean_pct", min),
            recovery_high=_extreme(i, "recovery", rec_levels, "mean_pct", max),
            repeatability_max=_extreme(i, "precision", prec_levels, "repeatability_rsd_pct", max),
            intermediate_max=_extreme(i, "precision", prec_levels, "intermediate_rsd_pct", max),
            uncertainty_max=_extreme(i, "uncertainty", unc_levels, "expanded_pct", max),
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
    ranges = [(a["name"], a["working_range"], units_of(a, results["study"])[0])
              for a in analytes if a.get("working_range")]
    shown = [f"{name} {N.by_rule(wr['low'], 'value')} to {N.by_rule(wr['high'], 'value')} {unit}"
             for name, wr, unit in ranges if wr.get("low") is not None]
    missing = [name for name, wr, _ in ranges if wr.get("low") is None]
    if shown and len(shown) <= 6:
        parts.append("Validated working ranges: " + "; ".join(shown) + ".")
    elif shown:
        parts.append(f"{len(shown)} analyte(s) have a validated working range (see the matrix).")
    if missing:
        parts.append(f"No working range could be stated for {_names(missing)}.")
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
                "matrix-effect-beyond-limit": "matrix effect beyond its limit"}


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
    out.extend(_too_few(analyte, unit))
    return out


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

