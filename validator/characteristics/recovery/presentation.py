"""Recovery in plain language and in a figure, from its results.json entry alone."""

from __future__ import annotations

from ...report.plots import PALETTE, figure, points, svg
from ...report.text import by_rule
from ...report.text import fmt

__all__ = ["sentences", "figures"]


def sentences(rec: dict, reading) -> dict[str, str]:
    """``mean``: the overall mean and the levels outside their range; ``t_test``: the bias test per level."""
    failed = [lvl for lvl in rec["levels"] if not lvl["pass"]]
    mean = (f"Mean recovery over all {rec['n']} spiked results is {by_rule(rec['overall_mean_pct'], 'percent')} %. "
            + ("Every level's mean lies inside its acceptance range." if not failed else
               "The mean recovery is outside its acceptance range at added "
               + ", ".join(fmt(lvl["added"]) for lvl in failed) + f" {reading.unit}."))
    alpha = reading.alpha
    sig = [lvl for lvl in rec["levels"] if lvl["p_value"] is not None and lvl["p_value"] < alpha]
    t_test = ("The t test against 100 % finds a significant bias at added "
              + ", ".join(fmt(lvl["added"]) for lvl in sig) + f" {reading.unit}"
              + f" (alpha = {alpha:g}); judge whether its size matters against the range."
              if sig else f"The t test against 100 % finds no significant bias at any level (alpha = {alpha:g}).")
    return {"mean": mean, "t_test": t_test}


def figures(rec: dict, reading) -> dict[str, str]:
    """``levels``: each spiked replicate's recovery, the level mean and its acceptance range."""
    levels = rec["levels"]
    fig, ax = figure(figsize=(3.0, 2.3))     # a third of the text width in the dossier
    for i, lv in enumerate(levels):
        lo, hi = lv["range_pct"]
        ax.fill_between([i - 0.35, i + 0.35], lo, hi, color=PALETTE["band"], linewidth=0)
        points(ax, [i] * len(lv["recoveries_pct"]), lv["recoveries_pct"], "o")
        ax.plot([i - 0.25, i + 0.25], [lv["mean_pct"]] * 2, "-", color=PALETTE["ink"], linewidth=1.4)
    ax.axhline(100, color=PALETTE["ink"], linewidth=0.6, ls=":")
    ax.set_xticks(range(len(levels)))
    ax.set_xticklabels([f"{lv['added']:g}" for lv in levels])
    ax.set_xlabel(f"added ({reading.unit})")
    ax.set_ylabel("recovery (%)")
    ax.set_title("recovery per replicate", fontsize=8, loc="left")
    fig.tight_layout()
    return {"levels": svg(fig, f"rec{reading.key}")}
