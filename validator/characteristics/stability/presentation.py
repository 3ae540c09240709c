"""Sentences for stability, from its results.json entry."""

from __future__ import annotations

from ...report.text import fmt, level_label

__all__ = ["sentences", "figures"]


def sentences(entry: dict, reading) -> dict:
    out = {}
    for i, c in enumerate(entry["conditions"]):
        s = c["result"]
        head = f"{c['condition']} at {fmt(c['nominal'])} {reading.unit}"
        if s["deviation_percent"] is None:
            out[f"condition_{i}"] = f"{head}: no deviation: {s['reason']}."
            continue
        ci = "" if s["interval"] is None else (f" ({level_label(s['interval_level'])} CI {fmt(s['interval'][0], 3)} to "
                                               f"{fmt(s['interval'][1], 3)} %)")
        word = {True: "stable", False: "NOT shown stable", None: "not judged"}[s["passed"]]
        out[f"condition_{i}"] = (f"{head}: mean {fmt(s['deviation_percent'], 3)} % from {s['reference']}{ci}; "
                                 f"{word} against ±{fmt(s['limit_percent'])} %"
                                 + (f" ({s['reason']})." if s["passed"] is None and s["reason"] else "."))
    return out


def figures(entry: dict, reading) -> dict:
    return {}
