"""Sentences for stability, from its results.json entry."""

from __future__ import annotations

from ...report.plots import PALETTE, figure, points, svg
from ...report.text import by_rule, fmt, level_label

__all__ = ["sentences", "figures"]


def sentences(entry: dict, reading) -> dict:
    """One sentence for the conditions shown stable (their values are in the section's table) and one for
    each condition not shown stable or not judged."""
    conditions = entry["conditions"]
    stable = [c for c in conditions if c["result"]["passed"] is True]
    out = {}
    if stable:
        limits = sorted({c["result"]["limit_percent"] for c in stable})
        on = {c["result"]["judged_on"] for c in stable}
        what = ("mean deviation" if on == {"estimate"} else "confidence interval of the deviation" if "estimate" not in on
                else "mean deviation (or its confidence interval, as judged)")
        out["stable"] = (f"{len(stable)} of {len(conditions)} condition(s) and level(s) shown stable: each "
                         f"{what} within ±{' or ±'.join(fmt(lim) for lim in limits)} % of its reference (values in "
                         "the table).")
    for i, c in enumerate(conditions):
        s = c["result"]
        if s["passed"] is True:
            continue
        head = f"{c['condition']} at {fmt(c['nominal'])} {reading.unit}"
        if s["deviation_percent"] is None:
            out[f"condition_{i}"] = f"{head}: no deviation: {s['reason']}."
            continue
        ci = "" if s["interval"] is None else (f" ({level_label(s['interval_level'])} CI {by_rule(s['interval'][0], 'percent')} to "
                                               f"{by_rule(s['interval'][1], 'percent')} %)")
        word = {True: "stable", False: "NOT shown stable", None: "not judged"}[s["passed"]]
        out[f"condition_{i}"] = (f"{head}: mean {by_rule(s['deviation_percent'], 'percent')} % from {s['reference']}{ci}; "
                                 f"{word} against ±{fmt(s['limit_percent'])} %"
                                 + (f" ({s['reason']})." if s["passed"] is None and s["reason"] else "."))
    return out


def figures(entry: dict, reading) -> dict:
    """``deviations``: each condition's mean deviation from its reference (%) with its confidence interval,
    against ± the limit (one row per condition and nominal level)."""
    rows = [c for c in entry["conditions"] if c["result"]["deviation_percent"] is not None]
    if not rows:
        return {}
    fig, ax = figure(figsize=(6.4, 0.8 + 0.26 * len(rows)))     # shown two thirds of the text wide (type as in the thirds)
    ys = list(range(len(rows)))[::-1]
    level = None
    for y, c in zip(ys, rows):
        s = c["result"]
        if s["interval"] is not None:
            level = s["interval_level"]
            ax.plot(s["interval"], [y, y], color=PALETTE["data"], lw=1.0)
    points(ax, [c["result"]["deviation_percent"] for c in rows], ys, "o", label="mean deviation", gid="means")
    if level is not None:
        ax.plot([], [], color=PALETTE["data"], lw=1.0, label=f"{level_label(level)} confidence interval")
    for i, lim in enumerate(sorted({c["result"]["limit_percent"] for c in rows})):
        for x in (-lim, lim):
            ax.axvline(x, color=PALETTE["pred"], ls="--", lw=0.8,
                       label=f"limits ±{fmt(lim)} %" if x > 0 and i == 0 else None, gid=f"limit-{i}")
    ax.axvline(0, color=PALETTE["ink"], lw=0.6)
    names = {"nominal": "the nominal value", "fresh": "the fresh samples' mean"}
    references = sorted({names.get(c["result"]["reference"], c["result"]["reference"]) for c in rows})
    ax.set_yticks(ys)
    ax.set_yticklabels([f"{c['condition']}, {fmt(c['nominal'])} {reading.unit}" for c in rows])
    ax.set_ylim(-0.6, len(rows) - 0.4)
    ax.set_xlabel(f"deviation of the mean from {' or '.join(references)} (%)")
    ax.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0), frameon=False, fontsize=7)
    fig.tight_layout()
    return {"deviations": svg(fig, f"stab{reading.key}")}
