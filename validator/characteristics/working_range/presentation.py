"""The working range and the LOQ verification in plain language, from their results.json entries alone."""

from __future__ import annotations

import re

from ...report.text import basis_label, fmt, uncertainty

__all__ = ["sentences", "loq_sentences"]


def sentences(wr: dict, reading) -> dict[str, str]:
    """``range``: the validated working range and its basis."""
    if wr["low"] is None:
        return {"range": f"No working range can be stated: {wr['basis']}."}
    criteria = (reading.analyte or {}).get("criteria", [])
    own = next((c for c in criteria if c["id"] == "working-range"), None)
    if own is not None and own["pass"] is not True:
        why = own["note"].removeprefix("not applicable: ") or "its criterion is not met"
        return {"range": f"The calibrators passing back-calculation span {range_low(wr)} to {fmt(wr['high'])} "
                         f"{reading.unit} ({_basis_in_words(wr['basis'])}), but this range is NOT validated: {why}."}
    return {"range": f"The validated working range is {range_low(wr)} to {fmt(wr['high'])} {reading.unit} "
                     f"({_basis_in_words(wr['basis'])})."}


_FROM_LOQ = re.compile(r"reported LOQ (\S+) (.*?)\(([^()]*)\)")


def range_low(wr: dict) -> str:
    """The low end of the range: the reported LOQ by the uncertainty rule (2 significant figures, as in
    the detection table) when the range starts at it, a calibrator's nominal level otherwise."""
    return uncertainty(wr["low"]) if wr["basis"].startswith("reported LOQ") else fmt(wr["low"])


def _basis_in_words(basis: str) -> str:
    """The basis with the LOQ by the uncertainty rule and its detection basis id in words."""
    def words(m):
        try:
            value = uncertainty(float(m.group(1)))
        except ValueError:
            value = m.group(1)
        return f"reported LOQ {value} {m.group(2)}({basis_label(m.group(3))})"
    return _FROM_LOQ.sub(words, basis)


def loq_sentences(lv: dict, reading) -> dict[str, str]:
    """``verdict``: whether the precision near the LOQ supports it."""
    if lv["pass"] is None:
        return {"verdict": f"The LOQ could not be verified with data near it: {lv['reason']}."}
    state = "supports" if lv["pass"] else "does NOT support"
    return {"verdict": f"The precision at levels up to 2 × LOQ {state} the LOQ: every RSD there is "
                       f"{'at most' if lv['pass'] else 'not all within'} {fmt(lv['rsd_max_pct'])} %."}
