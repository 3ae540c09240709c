"""Detection capability in plain language, from its results.json entry alone."""

from __future__ import annotations

from ...report.text import fmt

__all__ = ["sentences"]


def sentences(det: dict, reading) -> dict[str, str]:
    """``limits``: LOD and LOQ on the reported basis; ``iso``: ISO 11843-2's critical and minimum
    detectable values."""
    unit = reading.unit
    out = {}
    rep = next(e for e in det["estimates"] if e["method"] == det["reported_basis"])
    if rep["lod"] is not None:
        out["limits"] = (f"On the reported basis ({rep['method']}), the limit of detection is "
                         f"{fmt(rep['lod'])} {unit} and the limit of quantitation {fmt(rep['loq'])} {unit}. "
                         "Estimates on the other bases are listed for comparison; they differ because "
                         "each uses a different estimate of the noise.")
    else:
        out["limits"] = f"No LOD/LOQ on the reported basis ({rep['method']}): {rep['reason']}."
    iso = next(e for e in det["estimates"] if e["method"] == "iso-11843-2")
    if iso["lod"] is not None:
        out["iso"] = (f"ISO 11843-2: critical value x_C = {fmt(iso['critical_value'])} {unit} (a result above it "
                      f"is distinguished from zero with error probability alpha = {reading.alpha:g}) and minimum "
                      f"detectable value x_D = {fmt(iso['lod'])} {unit}, with delta = {fmt(iso['delta'])} computed "
                      "exactly from the non-central t distribution (not the 2t approximation).")
    else:
        out["iso"] = f"ISO 11843-2 was not applicable: {iso['reason']}."
    return out
