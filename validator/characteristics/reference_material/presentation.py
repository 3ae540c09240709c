"""Reference material in plain language, from its results.json entry alone."""

from __future__ import annotations

from ...report.text import fmt

__all__ = ["sentences"]


def sentences(rm: dict, reading) -> dict[str, str]:
    """``bias``: the bias against the certified value and whether it is significant."""
    unit = reading.unit
    if rm["significant"] is None:
        why = rm.get("reason") or "needs at least 2 results"
        return {"bias": f"The reference material bias was not tested: {why}."}
    word = "is" if rm["significant"] else "is not"
    return {"bias": (
        f"The mean of {rm['n']} results on the reference material is {fmt(rm['mean'])} {unit} against "
        f"the certified {fmt(rm['certified_value'])} {unit}: bias {fmt(rm['bias'])} {unit} "
        f"({fmt(rm['bias_pct'], 3)} %), which {word} significant, since |bias| "
        f"{'>' if rm['significant'] else '≤'} {fmt(rm['coverage_factor'])}·u = {fmt(rm['expanded_uncertainty'])} {unit}.")}
