"""The method comparison in a figure, from its results.json entry alone."""

from __future__ import annotations

from ...report.plots import PALETTE, figure, points, svg

__all__ = ["figures"]


def _nan(values) -> list:
    """results.json's nulls (a difference that does not exist) as NaN: not drawn."""
    return [float("nan") if v is None else v for v in values]


def figures(mc: dict, reading) -> dict[str, str]:
    """``agreement``: test against reference with the identity line and the Passing-Bablok and Deming
    fits; the Bland-Altman differences against the pair means with the bias and limits of agreement."""
    x = [p["reference"] for p in mc["data"]]
    y = [p["test"] for p in mc["data"]]
    pb, dm, ba = mc["passing_bablok"], mc["deming"], mc["bland_altman"]
    unit = reading.unit
    fig, (ax1, ax2) = figure(1, 2, figsize=(6.4, 3.0))
    lo, hi = min(min(x), min(y)), max(max(x), max(y))
    ax1.plot([lo, hi], [lo, hi], ":", color=PALETTE["ink"], linewidth=0.8, label="identity")
    if pb["slope"] is not None:                     # None: not applicable, nothing to draw
        ax1.plot([lo, hi], [pb["intercept"] + pb["slope"] * lo, pb["intercept"] + pb["slope"] * hi], "-",
                 color=PALETTE["fit"], linewidth=1.2, label="Passing-Bablok")
    if dm["slope"] is not None:
        ax1.plot([lo, hi], [dm["intercept"] + dm["slope"] * lo, dm["intercept"] + dm["slope"] * hi], "--",
                 color=PALETTE["pred"], linewidth=1.2, label="Deming")
    points(ax1, x, y, "o")
    ax1.set_xlabel(f"previous / reference ({unit})")
    ax1.set_ylabel(f"this run / test ({unit})")
    ax1.legend(frameon=False, fontsize=6, loc="upper left", bbox_to_anchor=(1.0, 1.0))   # outside: never over data
    means = [(a + b) / 2 for a, b in zip(x, y)]
    points(ax2, means, _nan(ba["differences"]), "s")
    if ba["bias"] is not None:
        ax2.axhline(ba["bias"], color=PALETTE["fit"], linewidth=1.2)
        for limit in ba["limits"]:
            ax2.axhline(limit, color=PALETTE["pred"], linewidth=1, ls="--")
    ax2.axhline(0, color=PALETTE["ink"], linewidth=0.6, ls=":")
    ax2.set_xlabel(f"mean of the two ({unit})")
    ax2.set_ylabel("difference" + (" (%)" if ba["percentage"] else f" ({unit})"))
    ax2.set_title("bias (solid), limits of agreement (dashed)", fontsize=8, loc="left")
    fig.tight_layout()
    return {"agreement": svg(fig, f"mc{reading.key}")}
