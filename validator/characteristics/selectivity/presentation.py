"""Sentences for selectivity, from its results.json entry."""

from __future__ import annotations

from ...report.text import fmt

__all__ = ["sentences", "figures"]


def sentences(entry: dict, reading) -> dict:
    failing = [lot["lot"] for lot in entry["lots"] if not lot["passed"]]
    out = {"summary": (f"{entry['n_lots_passed']} of {entry['n_lots']} blank-matrix lots show no interference above the "
                       "limits" + (f"; interference in lot(s) {', '.join(failing)}." if failing else "."))}
    if entry["passed"] is None:
        out["summary"] += f" Not judged: {entry['reason']}."
    else:
        out["summary"] += (f" At least {fmt(100 * entry['min_fraction'], 3)} % of the lots must pass: "
                           + ("met." if entry["passed"] else "NOT met."))
    if entry.get("data_from") == "runs":
        runs = list(dict.fromkeys(i["run"] for i in entry["injections"]))
        out["source"] = (f"Read from {len(entry['injections'])} matrix-blank injection(s) of the runs "
                         f"({', '.join(runs)}), each against the mean response of its own run's lowest "
                         "calibrators (LLOQ).")
    return out


def figures(entry: dict, reading) -> dict:
    return {}
