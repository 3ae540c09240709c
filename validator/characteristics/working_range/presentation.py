"""The working range and the LOQ verification in plain language, from their results.json entries alone."""

from __future__ import annotations

from ...report.text import fmt

__all__ = ["sentences", "loq_sentences"]


def sentences(wr: dict, reading) -> dict[str, str]:
    """``range``: the validated working range and its basis."""
    if wr["low"] is None:
        return {"range": f"No working range can be stated: {wr['basis']}."}
    criteria = (reading.analyte or {}).get("criteria", [])
    own = next((c for c in criteria if c["id"] == "working-range"), None)
    if own is not None and own["pass"] is not True:
        why = own["note"].removeprefix("not applicable: ") or "its criterion is not met"
        return {"range": f"The calibrators passing back-calculation span {fmt(wr['low'])} to {fmt(wr['high'])} "
                         f"{reading.unit} ({wr['basis']}), but this range is NOT validated: {why}."}
    return {"range": f"The validated working range is {fmt(wr['low'])} to {fmt(wr['high'])} {reading.unit} "
                     f"({wr['basis']})."}


def loq_sentences(lv: dict, reading) -> dict[str, str]:
    """``verdict``: whether the precision near the LOQ supports it."""
    if lv["pass"] is None:
        return {"verdict": f"The LOQ could not be verified with data near it: {lv['reason']}."}
    state = "supports" if lv["pass"] else "does NOT support"
    return {"verdict": f"The precision at levels up to 2 × LOQ {state} the LOQ: every RSD there is "
                       f"{'at most' if lv['pass'] else 'not all within'} {fmt(lv['rsd_max_pct'])} %."}
