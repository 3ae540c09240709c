"""Sentences and the figure of lot accuracies for the matrix effect, from its results.json entry."""

from __future__ import annotations

from ...report.plots import PALETTE, figure, points, svg
from ...report.text import by_rule, fmt, level_label, weighting_label

__all__ = ["sentences", "figures"]


def sentences(entry: dict, reading) -> dict:
    out = {}
    sr = entry["slope_ratio"]
    if sr is None:
        out["slope_ratio"] = f"No slope ratio: {entry['slope_ratio_reason']}."
    elif sr["statistic"] is None:
        out["slope_ratio"] = f"No slope ratio: {sr['reason']}."
    else:
        kind = "suppression" if sr["statistic"] < 0 else "enhancement"
        ci = sr["interval"]
        interval = ("" if ci is None else f" ({level_label(sr['interval_level'])} CI {by_rule(ci[0], 'percent')} to "
                    f"{by_rule(ci[1], 'percent')} %, Fieller)")
        flag = ("beyond" if sr["beyond_limit"] else "within")
        weighted = ("unweighted straight lines" if sr["weighting"] == "none" else
                    f"straight lines weighted {weighting_label(sr['weighting'])}, the weighting of the calibration")
        variances = ("separate residual variances, Welch-Satterthwaite df" if sr["variance"] == "separate"
                     else "one pooled residual variance")
        out["slope_ratio"] = (f"The matrix-matched calibration's slope is {fmt(sr['slope_ratio'], 4)} times the solvent "
                              f"slope (both {weighted}; {variances}): a matrix effect of {by_rule(sr['statistic'], 'percent')} % ({kind}){interval}, {flag} "
                              f"±{fmt(sr['limit_percent'])} %. "
                              + ("Beyond it, quantification against solvent standards would be biased: calibrate in "
                                 "matrix." if sr["beyond_limit"] else ""))
        if sr["interval"] is None and sr["reason"]:
            out["slope_ratio"] += f" No interval: {sr['reason']}."
        if entry["slope_ratio_note"]:
            out["slope_ratio"] += f" {entry['slope_ratio_note']}."
    for i, lv in enumerate(entry["lots"]):
        word = {True: "meets", False: "does NOT meet", None: "cannot be judged against"}[lv["passed"]]
        out[f"lots_{i}"] = (f"At nominal {fmt(lv['nominal'])} {reading.unit}, {lv['n_lots_passed']} of {lv['n_lots']} matrix "
                            f"lots meet accuracy within ±{fmt(lv['max_bias_percent'])} % and CV at most "
                            f"{fmt(lv['max_cv_percent'])} %; the level {word} the criterion"
                            + (f" ({lv['reason']})." if lv["reason"] else "."))
    mf = entry["normalised_factor"]
    if mf is not None:
        if mf["cv_percent"] is None:
            out["factor"] = f"No CV of the IS-normalised matrix factor: {mf['reason']}."
        else:
            out["factor"] = (f"The IS-normalised matrix factor averages {fmt(mf['mean'], 4)} over {len(mf['lots'])} lots "
                             f"with a CV of {by_rule(mf['cv_percent'], 'rsd')} % (at most {fmt(mf['max_cv_percent'])} % allowed)"
                             + (f"; not judged: {mf['reason']}." if mf["passed"] is None and mf["reason"] else "."))
    return out


def figures(entry: dict, reading) -> dict:
    """``lots``: the bias of each matrix lot's mean, per QC level, with ± the accuracy limit."""
    if not entry["lots"]:
        return {}
    names = list(dict.fromkeys(lot["lot"] for lv in entry["lots"] for lot in lv["lots"]))
    markers = "os^Dv<>p"
    fig, ax = figure(figsize=(3.4, 2.4))     # a third of the text width in the dossier
    for k, lv in enumerate(entry["lots"]):
        judged = [lot for lot in lv["lots"] if lot["bias_percent"] is not None]
        points(ax, [names.index(lot["lot"]) for lot in judged], [lot["bias_percent"] for lot in judged],
               markers[k % len(markers)], label=f"nominal {fmt(lv['nominal'])} {reading.unit}")
    lim = max(lv["max_bias_percent"] for lv in entry["lots"])
    for y in (-lim, lim):
        ax.axhline(y, color=PALETTE["pred"], ls="--", lw=0.8)
    ax.axhline(0, color=PALETTE["ink"], lw=0.6)
    ax.set_xticks(range(len(names)))
    ax.set_xticklabels(names, rotation=30, ha="right")
    ax.set_xlabel("matrix lot")
    ax.set_ylabel("bias of the lot mean, %")
    ax.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0), frameon=False, fontsize=7)   # outside: never over data
    fig.tight_layout()
    return {"lots": svg(fig, f"melots{reading.key}")}
