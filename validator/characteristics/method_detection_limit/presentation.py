"""Sentences for the method detection limit, from its results.json entry."""

from __future__ import annotations

from ...report.plots import PALETTE, figure, points, results_in_file_order
from ...report.text import fmt

__all__ = ["sentences", "figures"]

_RULES = {"none numerical": "no method blank gave a numerical result, so MDL_b does not apply",
          "highest blank": "some method blanks gave numerical results: MDL_b is the highest of them",
          "ranked blank": "some of more than 100 method blanks gave numerical results: MDL_b is the blank at rank "
                          "round(0.99 n)",
          "mean + t s": "every method blank gave a numerical result: MDL_b = mean (0 if negative) + t·s"}


def sentences(entry: dict, reading) -> dict:
    unit = reading.unit
    if entry["value"] is None:
        out = {"summary": f"No MDL: {entry['reason']}."}
    else:
        which = "MDL_s (spiked samples)" if entry["blank"] is None or entry["spiked"] >= entry["blank"] else \
            "MDL_b (method blanks)"
        out = {"summary": (f"Method detection limit {fmt(entry['value'])} {unit}, the higher of MDL_s = "
                           f"{fmt(entry['spiked'])} {unit} (t = {fmt(entry['spiked_t'], 4)} on {entry['n_spiked'] - 1} df "
                           f"times the SD of {entry['n_spiked']} spiked results) and MDL_b = {fmt(entry['blank'])} {unit}; "
                           f"here {which}.")}
    rule = ("none was analysed, so MDL_b is unknown" if entry["n_blanks"] == 0 else _RULES[entry["blank_rule"]])
    out["blanks"] = f"Method blanks: {entry['n_blanks']}, {entry['n_blanks_numerical']} with a numerical result; {rule}."
    if entry["blank_rule_reading"]:
        out["reading"] = f"Rule applied: {entry['blank_rule_reading']}."
    if entry["notes"]:
        out["notes"] = "Design: " + "; ".join(entry["notes"]) + "."
    return out


def figures(entry: dict, reading) -> dict:
    """``results``: the spiked results and the numerical method blanks in file order, with MDL_s and MDL_b."""
    spiked, blanks = entry.get("spiked_results") or [], entry.get("blank_numerical_results") or []
    if not spiked and not blanks:
        return {}
    fig, ax = figure(figsize=(6.4, 2.8))
    points(ax, range(1, len(spiked) + 1), spiked, "o", label=f"spiked results ({len(spiked)})",
           gid="spiked-results")
    if blanks:
        points(ax, range(len(spiked) + 1, len(spiked) + len(blanks) + 1), blanks, "s", colour=PALETTE["pred"],
               label=f"numerical blanks ({len(blanks)} of {entry['n_blanks']})",
               gid="blank-results")
    if entry["spiked"] is not None:
        ax.axhline(entry["spiked"], color=PALETTE["ink"], ls="--", lw=0.8,
                   label=f"MDL_s {fmt(entry['spiked'])} {reading.unit}", gid="mdl-s-line")
    if entry["blank"] is not None:
        ax.axhline(entry["blank"], color=PALETTE["bad"], ls="-.", lw=0.8,
                   label=f"MDL_b {fmt(entry['blank'])} {reading.unit}", gid="mdl-b-line")
    if entry.get("spike_level") is not None:
        ax.axhline(entry["spike_level"], color=PALETTE["data"], ls=":", lw=0.8,
                   label=f"spike level {fmt(entry['spike_level'])} {reading.unit}", gid="spike-line")
    return {"results": results_in_file_order(fig, ax, what="spiked samples, then method blanks", unit=reading.unit,
                                              name=f"mdl{reading.key}")}
