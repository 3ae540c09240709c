"""Reporting: the dossier's sentence on the reporting unit (from results.json only)."""

from __future__ import annotations

__all__ = ["sentences"]


def sentences(entry: dict, reading) -> dict:
    return {"basis": f"Results are given in the measured solution ({reading.unit}) and, multiplied by each "
                     f"sample's preparation factor (dilution factor × final volume / aliquot), in "
                     f"{entry['unit']}; s(x0) and its interval scale by the same factor. The factors' own "
                     "uncertainties are not included."}
