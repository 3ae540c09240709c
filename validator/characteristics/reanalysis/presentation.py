"""Sentences and the figure of differences for incurred-sample reanalysis, from its results.json entry."""

from __future__ import annotations

from ...report.plots import PALETTE, figure, log_x, points, svg
from ...report.text import fmt

__all__ = ["sentences", "figures"]


def sentences(entry: dict, reading) -> dict:
    if entry["n"] == 0:
        return {"summary": f"No reanalysed samples: {entry['reason']}."}
    if entry["fraction_within"] is None:
        out = {"summary": f"No fraction within the limit: {entry['reason']}."}
    else:
        word = {True: "meets", False: "does NOT meet", None: "cannot be judged against"}[entry["passed"]]
        out = {"summary": (f"{entry['n_within']} of {entry['n_judged']} judged repeats "
                           f"({fmt(100 * entry['fraction_within'], 3)} %) lie within ±{fmt(entry['limit_percent'])} % of "
                           f"the mean of original and repeat; the study {word} its requirement of at least "
                           f"{fmt(100 * entry['min_fraction'], 3)} %.")}
    counted = sum(1 for s in entry["samples"] if s["difference_percent"] is None and s["within"] is False)
    if counted:
        out["undefined"] = (f"{counted} pair(s) of different results have a mean of zero or below (or overflow), so "
                            "no % difference: they count as not within the limit.")
    outside = sum(1 for s in entry["samples"] if s["within"] is False)
    not_judged = sum(1 for s in entry["samples"] if s["within"] is None)
    if outside or not_judged:
        # heads the section's short table of the samples not within the limit (all samples: appendix C)
        parts = ([f"{outside} outside the limit"] if outside else []) + ([f"{not_judged} not judged"] if not_judged else [])
        out["outside"] = f"Reanalysed samples {' and '.join(parts)}, of {entry['n']}:"
    if entry["notes"]:
        out["notes"] = "Note: " + "; ".join(entry["notes"]) + "."
    return out


def figures(entry: dict, reading) -> dict:
    """``differences``: each sample's % difference against the mean of its two results, with ± the limit."""
    rows = [s for s in entry["samples"] if s["difference_percent"] is not None]
    if not rows:
        return {}
    fig, ax = figure(figsize=(3.4, 2.4))     # a third of the text width in the dossier
    means = [(s["original"] + s["repeat"]) / 2 for s in rows]
    inside = [s["within"] for s in rows]
    points(ax, [m for m, ok in zip(means, inside) if ok],
           [s["difference_percent"] for s, ok in zip(rows, inside) if ok], "o", label="within the limit")
    points(ax, [m for m, ok in zip(means, inside) if not ok],
           [s["difference_percent"] for s, ok in zip(rows, inside) if not ok], "s", colour=PALETTE["bad"],
           label="outside the limit")
    lim = entry["limit_percent"]
    for y in (-lim, lim):
        ax.axhline(y, color=PALETTE["pred"], ls="--", lw=0.8)
    ax.axhline(0, color=PALETTE["ink"], lw=0.6)
    if min(means) > 0 and max(means) / min(means) > 20:
        log_x(ax)
    ax.set_xlabel(f"mean of original and repeat ({reading.unit})")
    ax.set_ylabel("(repeat − original) / mean, %")
    ax.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0), frameon=False, fontsize=7)   # outside: never over data
    fig.tight_layout()
    return {"differences": svg(fig, f"isr{reading.key}")}
