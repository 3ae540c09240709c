"""Sentences for dilution integrity, from its results.json entry."""

from __future__ import annotations

from ...report.text import fmt

__all__ = ["sentences", "figures"]


def sentences(entry: dict, reading) -> dict:
    out = {}
    for i, lv in enumerate(entry["levels"]):
        head = f"Diluted ×{fmt(lv['dilution_factor'])} from {fmt(lv['nominal'])} {reading.unit}"
        if lv["passed"] is None:
            out[f"level_{i}"] = f"{head}: not judged: {lv['reason']}."
        else:
            cv = (f"CV {fmt(lv['cv_percent'], 3)} %" if lv["cv_passed"] is not None
                  else f"CV not judged ({lv['cv_reason']})")
            out[f"level_{i}"] = (f"{head}: {lv['n']} QCs, mean accuracy {fmt(lv['accuracy_percent'], 4)} % and {cv} "
                                 "after the factor; "
                                 + ("dilution does not affect the result within the limits." if lv["passed"]
                                    else "NOT within the limits."))
    return out


def figures(entry: dict, reading) -> dict:
    return {}
