"""Sentences of the measurement-uncertainty budget, built only from its results.json entry (a dict)."""

from __future__ import annotations

from ...report.text import by_rule, fmt, uncertainty

__all__ = ["sentences"]


def sentences(entry: dict, reading) -> dict[str, str]:
    """``summary``: the expanded uncertainty per level, at the LOQ and beside the accuracy profile's."""
    unit = reading.unit
    k = fmt(entry["coverage_factor"])
    if entry["u_bias_pct"] is None:
        return {"summary": f"No combined uncertainty: {entry['reason']}."}
    parts = []
    for lv in entry["levels"]:
        if lv["expanded_pct"] is None:
            parts.append(f"at {fmt(lv['concentration'])} {unit} not estimated ({lv['reason']})")
            continue
        absolute = "" if lv["expanded"] is None else f", ± {uncertainty(lv['expanded'])} {unit}"
        parts.append(f"at {fmt(lv['concentration'])} {unit} U = {uncertainty(lv['expanded_pct'])} %{absolute}")
    text = (f"Expanded uncertainty (k = {k}) from u(Rw) and u(bias) = {uncertainty(entry['u_bias_pct'])} % "
            f"(RMS of {len(entry['bias_evidence'])} bias estimate(s) {by_rule(entry['rms_bias_pct'], 'percent')} %, "
            f"u(Cref) {uncertainty(entry['reference_uncertainty_pct'])} %): " + "; ".join(parts) + ".")
    loq = entry.get("at_loq")
    if loq is not None and loq["expanded_pct"] is not None:
        text += (f" At the LOQ ({uncertainty(loq['concentration'])} {unit}), U = {uncertainty(loq['expanded_pct'])} % "
                 f"({loq['basis']}).")
    profile = [lv for lv in entry["levels"] if lv.get("profile_expanded_pct") is not None]
    if profile:
        text += (" From the accuracy profile's intervals, k times their standard deviation is "
                 + "; ".join(f"{uncertainty(lv['profile_expanded_pct'])} % at {fmt(lv['concentration'])} {unit}"
                             for lv in profile) + " (bias and u(Cref) not included).")
    return {"summary": text}
