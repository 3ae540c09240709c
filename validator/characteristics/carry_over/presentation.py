"""Sentences for carry-over, from its results.json entry."""

from __future__ import annotations

from ...report.text import fmt, not_above

__all__ = ["sentences", "figures"]


def sentences(entry: dict, reading) -> dict:
    out = {}
    if entry.get("data_from") == "runs":
        blanks = [b for b in entry["run_blanks"] if b["analyte_percent"] is not None]
        out["source"] = ("Read from the run sequences: in each run, the blank (or zero sample) injected right "
                         "after the highest calibrator, against the mean response of that run's lowest calibrators "
                         "(LLOQ)"
                         + (" and, for a blank without internal standard, the mean internal-standard response of "
                            "its calibrators and QCs" if
                            any(b["internal_standard_reference"] is not None for b in entry["run_blanks"]) else "")
                         + f"; {len(blanks)} such blank(s) in {len({b['run'] for b in entry['run_blanks']})} run(s).")
        missing = [b["reason"] for b in entry["run_blanks"] if b["analyte_percent"] is None]
        if missing and blanks:
            out["missing"] = "Not judged in these runs: " + "; ".join(missing) + "."
        # the blanks beyond a limit, named in the section (every blank's row: appendix C)
        above = [f"{b['run']}, {b['blank']} ({b['file']} row {b['row']}): analyte {fmt(b['analyte_percent'], 3)} % of LLOQ"
                 for b in blanks if not not_above(b["analyte_percent"], entry["analyte_limit_percent"])]
        above += [f"{b['run']}, {b['blank']} ({b['file']} row {b['row']}): internal standard "
                  f"{fmt(b['internal_standard_percent'], 3)} %" for b in entry["run_blanks"]
                  if b["internal_standard_percent"] is not None and entry["internal_standard_limit_percent"] is not None
                  and not not_above(b["internal_standard_percent"], entry["internal_standard_limit_percent"])]
        if above:
            out["above"] = "Blank(s) above the limit: " + "; ".join(above) + "."
    if entry["max_analyte_percent"] is None:
        out["analyte"] = f"Carry-over not judged: {entry['reason']}."
        return out
    n = len(entry["analyte_percent"])
    word = "within" if not_above(entry["max_analyte_percent"], entry["analyte_limit_percent"]) else "ABOVE"
    out["analyte"] = (f"The largest of {n} blank response(s) after the highest calibrator is "
                      f"{fmt(entry['max_analyte_percent'], 3)} % of the mean LLOQ response, {word} the limit of "
                      f"{fmt(entry['analyte_limit_percent'])} %.")
    if entry["max_internal_standard_percent"] is not None:
        word = ("within" if not_above(entry["max_internal_standard_percent"], entry["internal_standard_limit_percent"])
                else "ABOVE")
        out["internal_standard"] = (f"At the internal standard's retention the largest is "
                                    f"{fmt(entry['max_internal_standard_percent'], 3)} % of the mean IS response, {word} "
                                    f"{fmt(entry['internal_standard_limit_percent'])} %.")
    elif entry.get("internal_standard_note"):
        out["internal_standard"] = f"The internal-standard part is not judged: {entry['internal_standard_note']}."
    return out


def figures(entry: dict, reading) -> dict:
    return {}
