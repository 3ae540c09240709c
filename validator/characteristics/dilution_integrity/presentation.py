"""Sentences for dilution integrity, from its results.json entry."""

from __future__ import annotations

import math

from ...report.plots import PALETTE, figure, points, svg
from ...report.text import by_rule, fmt

__all__ = ["sentences", "figures"]


def sentences(entry: dict, reading) -> dict:
    out = {}
    for i, lv in enumerate(entry["levels"]):
        head = f"Diluted ×{fmt(lv['dilution_factor'])} from {fmt(lv['nominal'])} {reading.unit}"
        if lv["passed"] is None:
            out[f"level_{i}"] = f"{head}: not judged: {lv['reason']}."
        else:
            cv = (f"CV {by_rule(lv['cv_percent'], 'rsd')} %" if lv["cv_passed"] is not None
                  else f"CV not judged ({lv['cv_reason']})")
            out[f"level_{i}"] = (f"{head}: {lv['n']} QCs, mean accuracy {by_rule(lv['accuracy_percent'], 'percent')} % and {cv} "
                                 "after the factor; "
                                 + ("dilution does not affect the result within the limits." if lv["passed"]
                                    else "NOT within the limits."))
    return out


_MARKERS = "osD^v<>ph"


def figures(entry: dict, reading) -> dict:
    """``accuracy``: each diluted QC's accuracy after the factor (100 × result × factor / nominal, %), by
    dilution level, with the mean accuracy limits 100 ± max_bias_percent."""
    levels = [lv for lv in entry["levels"] if lv["back_calculated"]]
    if not levels:
        return {}
    fig, ax = figure(figsize=(6.4, 2.6))     # shown two thirds of the text wide (type as in the thirds)
    start = 1
    skipped = 0
    for i, lv in enumerate(levels):
        # a result × factor outside the floating-point range is null in results.json (its level is not
        # judged, see the table): such values are not drawn, and the figure says how many were left out
        accuracy = [a for a in (100.0 * v / lv["nominal"] if isinstance(v, (int, float)) else None
                                for v in lv["back_calculated"]) if a is not None and math.isfinite(a)]
        skipped += len(lv["back_calculated"]) - len(accuracy)
        if not accuracy:
            continue
        points(ax, range(start, start + len(accuracy)), accuracy, _MARKERS[i % len(_MARKERS)],
               colour=PALETTE["data"] if i % 2 == 0 else PALETTE["pred"],
               label=f"×{fmt(lv['dilution_factor'])} of {fmt(lv['nominal'])} {reading.unit} ({len(accuracy)})",
               gid=f"level-{i}")
        start += len(accuracy)
    for i, lim in enumerate(sorted({lv["max_bias_percent"] for lv in levels})):
        for y in (100 - lim, 100 + lim):
            ax.axhline(y, color=PALETTE["bad"], ls="--", lw=0.8,
                       label=f"limits 100 ± {fmt(lim)} % (on the mean)" if y > 100 and i == 0 else None,
                       gid=f"limit-{i}")
    ax.axhline(100, color=PALETTE["ink"], lw=0.6)
    if skipped:
        ax.text(0.01, 0.02, f"{skipped} diluted QC result{'s' if skipped != 1 else ''} not drawn: the result × "
                "factor is not a finite number (see the table)", transform=ax.transAxes, fontsize=7,
                color=PALETTE["ink"], gid="not-drawn")
    ax.set_xlabel("diluted QC, numbered through the dilutions (file order within each)")
    ax.set_ylabel("accuracy after the factor (% of nominal)")
    ax.xaxis.get_major_locator().set_params(integer=True)      # result numbers are whole
    ax.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0), frameon=False, fontsize=7)
    fig.tight_layout()
    return {"accuracy": svg(fig, f"dil{reading.key}")}
