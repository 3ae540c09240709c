"""Sentences for the method detection limit, from its results.json entry."""

from __future__ import annotations

from ...report.text import fmt

__all__ = ["sentences", "figures"]

_RULES = {"none numerical": "no method blank gave a numerical result, so MDL_b does not apply",
          "highest blank": "some method blanks gave numerical results: MDL_b is the highest of them",
          "ranked blank": "some of more than 100 method blanks gave numerical results: MDL_b is the blank at rank "
                          "round(0.99 n)",
          "mean + t s": "every method blank gave a numerical result: MDL_b = mean (0 if negative) + t·s"}


def sentences(entry: dict, reading) -> dict:
    unit = reading.unit
    if entry["value"] is None:
        out = {"summary": f"No MDL: {entry['reason']}."}
    else:
        which = "MDL_s (spiked samples)" if entry["blank"] is None or entry["spiked"] >= entry["blank"] else \
            "MDL_b (method blanks)"
        out = {"summary": (f"Method detection limit {fmt(entry['value'])} {unit}, the higher of MDL_s = "
                           f"{fmt(entry['spiked'])} {unit} (t = {fmt(entry['spiked_t'], 4)} on {entry['n_spiked'] - 1} df "
                           f"times the SD of {entry['n_spiked']} spiked results) and MDL_b = {fmt(entry['blank'])} {unit}; "
                           f"here {which}.")}
    out["blanks"] = f"Method blanks: {entry['n_blanks']}, {entry['n_blanks_numerical']} with a numerical result; {_RULES[entry['blank_rule']]}."
    if entry["blank_rule_reading"]:
        out["reading"] = f"Rule applied: {entry['blank_rule_reading']}."
    if entry["notes"]:
        out["notes"] = "Design: " + "; ".join(entry["notes"]) + "."
    return out


def figures(entry: dict, reading) -> dict:
    return {}
