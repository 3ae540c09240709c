"""Sentences and the figure of the accuracy profile, built only from its results.json entry (a dict)."""

from __future__ import annotations

from ...report.plots import PALETTE, figure, points, svg
from ...report.text import fmt

__all__ = ["sentences", "figures"]


def _ranges(entry: dict, unit: str) -> str:
    ranges = entry.get("validated_ranges")
    if not ranges:
        return "none"
    return " and ".join(f"{fmt(r['low'])} to {fmt(r['high'])} {unit}" for r in ranges)


def sentences(entry: dict, reading) -> dict[str, str]:
    """``summary``: the levels inside, the range within the acceptance limits and its basis."""
    unit = reading.unit
    levels = entry["levels"]
    inside = [lv for lv in levels if lv["inside"] is True]
    outside = [lv for lv in levels if lv["inside"] is False]
    missing = [lv for lv in levels if lv["inside"] is None]
    parts = [f"With beta = {fmt(entry['beta'])}, the beta-expectation tolerance interval lies within the "
             f"acceptance limits at {len(inside)} of {len(levels)} level(s)"]
    if outside:
        parts.append("it leaves them at " + ", ".join(
            f"{fmt(lv['nominal'])} {unit} ({fmt(lv['tolerance_low_pct'])} to {fmt(lv['tolerance_high_pct'])} % "
            f"against ±{fmt(lv['acceptance_pct'])} %)" for lv in outside))
    if missing:
        parts.append("no interval exists at " + ", ".join(f"{fmt(lv['nominal'])} {unit} ({lv['reason']})"
                                                         for lv in missing))
    text = "; ".join(parts) + f". Range within the acceptance limits: {_ranges(entry, unit)}"
    if entry.get("validated_ranges"):
        text += f" ({entry['basis']})"
    text += f". Runs are the {entry['runs_by']}."
    return {"summary": text}


def figures(entry: dict, reading) -> dict[str, str]:
    """``profile``: relative bias and tolerance limits against concentration, with the acceptance limits."""
    levels = [lv for lv in entry["levels"] if lv["tolerance_low_pct"] is not None]
    if not levels:
        return {}
    fig, ax = figure(figsize=(3.0, 2.3))     # a third of the text width in the dossier
    x = [lv["nominal"] for lv in levels]
    ax.fill_between(x, [lv["tolerance_low_pct"] for lv in levels], [lv["tolerance_high_pct"] for lv in levels],
                    color=PALETTE["band"], linewidth=0, label="tolerance interval")
    ax.plot(x, [lv["tolerance_low_pct"] for lv in levels], "-", color=PALETTE["conf"], linewidth=1.0)
    ax.plot(x, [lv["tolerance_high_pct"] for lv in levels], "-", color=PALETTE["conf"], linewidth=1.0)
    ax.plot(x, [lv["relative_bias_pct"] for lv in levels], "-", color=PALETTE["ink"], linewidth=0.8)
    points(ax, x, [lv["relative_bias_pct"] for lv in levels], "o", label="relative bias")
    ax.plot(x, [lv["acceptance_pct"] for lv in levels], "--", color=PALETTE["pred"], linewidth=1.0,
            label="acceptance limits")
    ax.plot(x, [-lv["acceptance_pct"] for lv in levels], "--", color=PALETTE["pred"], linewidth=1.0)
    for r in entry.get("validated_ranges") or ():
        ax.axvspan(r["low"], r["high"], color=PALETTE["grid"], alpha=0.35, linewidth=0)
    ax.axhline(0, color=PALETTE["ink"], linewidth=0.6, ls=":")
    ax.set_xlabel(f"nominal ({reading.unit})")
    ax.set_ylabel("relative error (%)")
    ax.legend(fontsize=6, frameon=False, ncol=2, loc="lower left", bbox_to_anchor=(0.0, 1.01))
    fig.tight_layout()
    return {"profile": svg(fig, f"ap{reading.key}")}
