"""Plain-language sentences for the EP17-A2 limits, built only from their results.json entry."""

from __future__ import annotations

from ...report.plots import PALETTE, figure, points, results_in_file_order
from ...report.text import fmt

__all__ = ["sentences", "figures"]


def _lots(part: dict) -> str:
    n = len(part["lots"])
    return {"one lot": "", "largest lot": f", the largest of {n} reagent lots",
            "lots combined": f", from the results of all {n} reagent lots combined"}[part["lot_rule"]]


def sentences(entry: dict, reading) -> dict:
    unit = reading.unit
    out = {}
    lob = entry["lob"]
    if lob["value"] is None:
        out["lob"] = f"No limit of blank: {lob['reason']}."
    elif lob["method"] == "nonparametric":
        out["lob"] = (f"Limit of blank {fmt(lob['value'])} {unit}: the {fmt(100 * lob['percentile'])}th percentile "
                      f"of the blank results by rank interpolation{_lots(lob)} (non-parametric, CLSI EP17-A2).")
    else:
        out["lob"] = (f"Limit of blank {fmt(lob['value'])} {unit}: mean + c_p·SD of the blank results"
                      f"{_lots(lob)} (parametric, CLSI EP17-A2).")
    lod = entry["lod"]
    if lod is None:
        out["lod"] = f"No limit of detection: {entry['lod_reason']}."
    elif lod["value"] is None:
        out["lod"] = f"No limit of detection: {lod['reason']}."
    else:
        out["lod"] = (f"Limit of detection {fmt(lod['value'])} {unit} = LoB + c_p·SD of the low-level samples"
                      f"{_lots(lod)}: a sample at this concentration gives a result above the LoB with a "
                      "probability of about 95 %.")
    if lod is not None:
        short = [a for a in lod["above_blank"] if not a["passed"]]
        if short:
            out["above_blank"] = ("The low-level samples do not support an LoD: " + "; ".join(
                f"{'all lots' if a['lot'] == 'all lots' else 'lot ' + a['lot']}: {a['n_above']} of {a['n']} results "
                f"above the LoB, fewer than the {a['minimum_count']} needed" for a in short)
                + " (at least 95 % of results at the LoD lie above the LoB; binomial, one-sided 5 %).")
    loq = entry["loq"]
    if loq is None:
        out["loq"] = f"No limit of quantitation: {entry['loq_reason']}."
    elif loq["value"] is None:
        out["loq"] = f"No limit of quantitation: {loq['reason']}."
    else:
        out["loq"] = (f"Limit of quantitation {fmt(loq['value'])} {unit}: the lowest tested level meeting the accuracy "
                      "goal, with every higher level meeting it too, and not below the LoD.")
    notes = list(lob["notes"]) + (list(lod["notes"]) if lod else []) + (list(loq["notes"]) if loq else [])
    if notes:
        out["design"] = "Design: " + "; ".join(notes) + "."
    return out


def figures(entry: dict, reading) -> dict:
    """``results``: the blank and low-level results in file order, with the reported LoB and LoD as lines."""
    blanks, low = entry.get("blank_results") or [], entry.get("low_results") or []
    if not blanks and not low:
        return {}
    fig, ax = figure(figsize=(6.4, 2.8))
    points(ax, range(1, len(blanks) + 1), blanks, "o", label=f"blank results ({len(blanks)})", gid="blank-results")
    if low:
        points(ax, range(len(blanks) + 1, len(blanks) + len(low) + 1), low, "s", colour=PALETTE["pred"],
               label=f"low-level results ({len(low)})", gid="low-results")
    lob = entry["lob"]["value"]
    lod = None if entry["lod"] is None else entry["lod"]["value"]
    if lob is not None:
        ax.axhline(lob, color=PALETTE["ink"], ls="--", lw=0.8, label=f"LoB {fmt(lob)} {reading.unit}", gid="lob-line")
    if lod is not None:
        ax.axhline(lod, color=PALETTE["bad"], ls="-.", lw=0.8, label=f"LoD {fmt(lod)} {reading.unit}", gid="lod-line")
    return {"results": results_in_file_order(fig, ax, what="blanks, then low-level samples", unit=reading.unit,
                                              name=f"lob{reading.key}")}
