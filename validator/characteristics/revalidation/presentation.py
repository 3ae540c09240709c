"""The re-validation in a figure, from results.json alone: the previous validation's calibration
function (its entry's ``previous_function``) beside this run's (the analyte's calibration entry)."""

from __future__ import annotations

from ...report.plots import PALETTE, figure, points, svg

__all__ = ["figures"]


def _values(function: dict, xs) -> list:
    """a + b x + c x² at each x."""
    a, b, c = function["intercept"], function["slope"], function["quadratic"]
    return [a + b * x + c * x * x for x in xs]


def _this_run(calibration: dict) -> dict:
    coefficients = calibration["coefficients"]
    levels = [lv["concentration"] for lv in calibration["level_table"]]
    return {"intercept": coefficients.get("intercept", {}).get("estimate", 0.0),
            "slope": coefficients["slope"]["estimate"],
            "quadratic": coefficients.get("quadratic", {}).get("estimate", 0.0),
            "low": min(levels), "high": max(levels)}


def figures(rv: dict, reading) -> dict[str, str]:
    """``functions``: the previous (dashed) and this run's own (solid) calibration functions, each over
    its calibrated range, with this run's calibrators."""
    if rv.get("previous_function") is None or reading.analyte is None:
        return {}
    calibration = reading.analyte["calibration"]
    fig, ax = figure(figsize=(6.4, 3.0))
    for label, function, style, colour in (
            ("previous validation", rv["previous_function"], "--", PALETTE["pred"]),
            ("this run", _this_run(calibration), "-", PALETTE["fit"])):
        lo, hi = function["low"], function["high"]
        xs = [lo + (hi - lo) * i / 60 for i in range(61)]
        ax.plot(xs, _values(function, xs), style, color=colour, linewidth=1.4, label=label)
    points(ax, [b["nominal"] for b in calibration["back_calculated"]],
           [b["response"] for b in calibration["back_calculated"]], "o", label="calibrators, this run")
    ax.set_xlabel(f"concentration ({reading.unit})")
    ax.set_ylabel(f"response ({reading.response_unit})")
    ax.legend(frameon=False, fontsize=7, loc="upper left", bbox_to_anchor=(1.0, 1.0))   # outside: never over data
    fig.tight_layout()
    return {"functions": svg(fig, f"rv{reading.key}")}
