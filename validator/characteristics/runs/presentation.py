"""Analytical runs: the dossier's sentence on how found values were obtained (from results.json only)."""

from __future__ import annotations

__all__ = ["sentences"]


def sentences(entry: dict, reading) -> dict:
    """``path``: which way found values came into recovery, precision, reference material and samples."""
    runs = [c["run"] for c in entry["calibrations"]]
    if entry["quantified_with"] == "pooled":
        how = ("through one calibration fitted to the calibrators of all runs together "
               f"({len(runs)} pooled calibration)")
    else:
        how = f"each through the calibration of its own run ({len(runs)} run calibrations: {', '.join(runs)})"
    weighting = "unweighted" if entry["weighting"] == "none" else f"weighted {entry['weighting']}"
    model = {"linear": "straight line", "quadratic": "quadratic", "origin": "straight line through the origin"}
    return {"path": "Found values were computed by validator from the raw responses in the run exports, "
                    f"{how}, {model.get(entry['model'], entry['model'])}, {weighting}. Recovery, precision "
                    "(series = run), reference material and samples use these found values; each injection's "
                    "chain is listed below."}
