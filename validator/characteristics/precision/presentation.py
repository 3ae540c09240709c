"""Precision in plain language, from its results.json entry alone.

(Its figure, the results of each series as % of the level mean, is still drawn by
``validator.report.plots`` from the data: results.json does not hold the individual results.)
"""

from __future__ import annotations


from ...report.text import by_rule, fmt, fmt_p, suspect_label

__all__ = ["sentences"]


def sentences(prec: dict, reading) -> dict[str, str]:
    """``summary``: RSDs per level; ``outliers``: Cochran and Grubbs; ``nested``: the nested design and
    the claims (only when the study declares them)."""
    unit, alpha = reading.unit, reading.alpha
    out = {}
    parts = []
    for lvl in prec["levels"]:
        clamp = " (between-series variance estimated negative, set to 0)" if lvl["between_series_set_to_zero"] else ""
        parts.append(f"at {fmt(lvl['level'])} {unit}: repeatability RSD {by_rule(lvl['repeatability_rsd_pct'], 'rsd')} %, "
                     f"intermediate RSD {by_rule(lvl['intermediate_rsd_pct'], 'rsd')} %{clamp}")
    out["summary"] = "Precision " + "; ".join(parts) + "."
    flagged = [lvl for lvl in prec["levels"]
               for t in (lvl["cochran"], lvl["grubbs"], lvl.get("grubbs_double"))
               if t is not None and t["p_value"] is not None and t["p_value"] < alpha]
    within = [(lvl, t) for lvl in prec["levels"] for t in lvl.get("grubbs_within_series", [])
              if t["p_value"] is not None and t["p_value"] < alpha]
    outliers = ("Cochran's or Grubbs' test (single or double) flags a series at level(s) "
                + ", ".join(sorted({fmt(lvl["level"]) for lvl in flagged}))
                + "; the series stay in the estimate and need a reviewer's judgement."
                if flagged else "Neither Cochran's nor Grubbs' tests (single or double) flag a series.")
    if within:
        outliers += (" Grubbs' test within a series flags "
                     + "; ".join(f"{suspect_label(t['suspect'])}{_read_from(lvl, t['series'])} in series {t['series']} at level "
                                 f"{fmt(lvl['level'])} (p = {fmt_p(t['p_value'])})" for lvl, t in within)
                     + "; these results stay in the estimate and need a reviewer's judgement.")
    else:
        outliers += " Grubbs' test within a series flags no single result where it applies."
    if any(lvl.get("flagged_results") for lvl in prec["levels"]):
        outliers += " Each flagged result is listed with its file row in the table of flagged results and marked in the raw data."
    out["outliers"] = outliers
    nested = _nested(prec, unit)
    if nested:
        out["nested"] = nested
    return out


def _nested(prec: dict, unit: str) -> str:
    parts = []
    for lv in prec["levels"]:
        nested = lv.get("nested")
        if nested is None:
            continue
        comps = ", ".join(f"{c['source']} {by_rule(c['sd'], 'uncertainty')}" + (" (negative estimate set to 0)" if c["set_to_zero"]
                                                                  else "") for c in nested["components"])
        ip = nested["conditions"][-1]
        parts.append(f"at {fmt(lv['level'])} {unit} ({nested['method']}): SDs {comps}; intermediate precision "
                     f"RSD {by_rule(ip['rsd_pct'], 'rsd')} %" + ("" if ip["rsd_upper_pct"] is None else
                                                        f", upper bound {by_rule(ip['rsd_upper_pct'], 'rsd')} %"))
    text = ("Nested design " + ", ".join(prec["levels"][0]["nested"]["design"]) + ", replicate: "
            + "; ".join(parts) + ". The one-way tables above treat each innermost unit of the design as a series; "
            "the RSD criteria and the claims use the nested estimates.") if parts else ""
    claims = [(lv, c) for lv in prec["levels"] for c in lv.get("claims") or ()]
    if claims:
        failed = [f"{c['quantity']} at {fmt(lv['level'])}" for lv, c in claims if c["verified"] is False]
        missing = [f"{c['quantity']} at {fmt(lv['level'])}" for lv, c in claims if c["verified"] is None]
        text += (" " if text else "") + (
            f"Claimed precision verified at {sum(c['verified'] is True for _, c in claims)} of {len(claims)} checks"
            + (f"; above the upper verification limit: {', '.join(failed)}" if failed else "")
            + (f"; not verifiable: {', '.join(missing)}" if missing else "") + ".")
    trueness = [(lv, lv["trueness"]) for lv in prec["levels"] if lv.get("trueness")]
    if trueness:
        parts = []
        for lv, t in trueness:
            head = f"at {fmt(lv['level'])} {unit}: mean {fmt(t['mean'])} against {fmt(t['reference_value'])}"
            if t["verified"] is None:
                parts.append(f"{head}, not verifiable ({t['reason']})")
            else:
                parts.append(f"{head}, verification interval {fmt(t['verification_interval'][0])} to "
                             f"{fmt(t['verification_interval'][1])}: " + ("verified" if t["verified"] else "NOT verified"))
        text += (" " if text else "") + "Bias against the reference values (CLSI EP15) " + "; ".join(parts) + "."
    return text


def _read_from(level: dict, series: str) -> str:
    """" (file row N)" of the result Grubbs' test within ``series`` flags at ``level``, "" when not recorded."""
    for f in level.get("flagged_results", []):
        if f["series"] == series and "grubbs_within_series" in f["tests"] and "source" in f:
            src = f["source"]
            sheet = f", sheet {src['sheet']}" if "sheet" in src else ""
            return f" ({src['file']}{sheet} row {src['row']})"
    return ""

