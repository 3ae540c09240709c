"""Sentences of the nested precision design and the claim verifications, built only from the
precision entry of results.json (a dict)."""

from __future__ import annotations

from .text import fmt

__all__ = ["sentences"]


def sentences(entry: dict, unit: str) -> dict:
    """{"precision_nested": ...} when a nested design or claims were assessed, else {}."""
    parts = []
    for lv in entry["levels"]:
        nested = lv.get("nested")
        if nested is None:
            continue
        comps = ", ".join(f"{c['source']} {fmt(c['sd'], 3)}" + (" (negative estimate set to 0)" if c["set_to_zero"]
                                                                  else "") for c in nested["components"])
        ip = nested["conditions"][-1]
        parts.append(f"at {fmt(lv['level'])} {unit} ({nested['method']}): SDs {comps}; intermediate precision "
                     f"RSD {fmt(ip['rsd_pct'], 3)} %" + ("" if ip["rsd_upper_pct"] is None else
                                                        f", upper bound {fmt(ip['rsd_upper_pct'], 3)} %"))
    text = ("Nested design " + ", ".join(entry["levels"][0]["nested"]["design"]) + ", replicate: "
            + "; ".join(parts) + ". The one-way tables above treat each innermost unit of the design as a series; "
            "the RSD criteria and the claims use the nested estimates.") if parts else ""
    claims = [(lv, c) for lv in entry["levels"] for c in lv.get("claims") or ()]
    if claims:
        failed = [f"{c['quantity']} at {fmt(lv['level'])}" for lv, c in claims if c["verified"] is False]
        missing = [f"{c['quantity']} at {fmt(lv['level'])}" for lv, c in claims if c["verified"] is None]
        text += (" " if text else "") + (
            f"Claimed precision verified at {sum(c['verified'] is True for _, c in claims)} of {len(claims)} checks"
            + (f"; above the upper verification limit: {', '.join(failed)}" if failed else "")
            + (f"; not verifiable: {', '.join(missing)}" if missing else "") + ".")
    return {"precision_nested": text} if text else {}
