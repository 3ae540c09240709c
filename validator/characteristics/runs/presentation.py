"""Analytical runs: the dossier's sentence on how found values were obtained (from results.json only)."""

from __future__ import annotations

from ...report.text import weighting_label

__all__ = ["sentences"]


def sentences(entry: dict, reading) -> dict:
    """``path``: which way found values came into recovery, precision, reference material and samples."""
    runs = [c["run"] for c in entry["calibrations"]]
    if entry["quantified_with"] == "pooled":
        how = ("through one calibration fitted to the calibrators of all runs together "
               f"({len(runs)} pooled calibration)")
    else:
        how = f"each through the calibration of its own run ({len(runs)} run calibrations: {', '.join(runs)})"
    weighting = "unweighted" if entry["weighting"] == "none" else f"weighted {weighting_label(entry['weighting'])}"
    model = {"linear": "straight line", "quadratic": "quadratic", "origin": "straight line through the origin"}
    names = {"samples": "samples", "recovery": "recovery", "precision": "precision (series = run)",
             "reference_material": "reference material", "limit_of_blank": "the limit of blank (EP17)",
             "method_detection_limit": "the method detection limit", "carry_over": "carry-over (the run sequences)",
             "selectivity": "selectivity (matrix blanks)", "matrix_effect": "the matrix effect (QCs of each lot)",
             "stability": "stability (stored QCs)", "dilution_integrity": "dilution integrity (diluted QCs)"}
    fed = [names.get(n, n) for n in entry.get("feeds", ())]
    uses = (f"{fed[0][0].upper()}{fed[0][1:]}" + "".join(f", {f}" for f in fed[1:-1])
            + (f" and {fed[-1]}" if len(fed) > 1 else "") + " use these injections" if fed
            else "No characteristic takes its data from these injections")
    return {"path": "Found values were computed by validator from the raw responses in the run exports, "
                    f"{how}, {model.get(entry['model'], entry['model'])}, {weighting}. {uses}; each injection's "
                    "chain is listed below."}
