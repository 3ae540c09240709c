"""Number formatting and the plain-language sentences of the dossier.

Numbers are shown to :data:`SIG` significant figures and p-values to
:data:`SIG_P`; results.json keeps full precision. Every sentence is built
from values already in results.json; this module compares them with the
study's alpha and limits but estimates nothing.
"""

from __future__ import annotations

from .._common import level_label

__all__ = ["SIG", "SIG_P", "fmt", "fmt_p", "level_label", "met", "verdict_label", "calibration_sentences"]

SIG = 5
SIG_P = 3
MISSING = "n/a"


def fmt(value, sig: int = SIG) -> str:
    """A number to ``sig`` significant figures (``n/a`` for null)."""
    if value is None:
        return MISSING
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return str(value)
    if value == 0:
        return "0"
    text = f"{value:.{sig}g}"
    if "e" in text:
        mant, exp = text.split("e")
        return f"{mant}×10^{int(exp)}"
    return text


def fmt_p(value) -> str:
    return fmt(value, SIG_P)


# results.json verdict words -> met (True), not met (False), not applicable (None): the one
# place the dossier reads a verdict word; a re-validation not shown equivalent is not met
VERDICT_WORDS = {"pass": True, "fail": False, "not applicable": None, "incomplete": None,
                 "equivalent": True, "not shown equivalent": False, "different": False}


def met(verdict_word: str) -> bool | None:
    """Whether a verdict word of results.json means met, not met or not applicable."""
    return VERDICT_WORDS[verdict_word]


def verdict_label(passed) -> dict:
    """Word and symbol for a verdict, never colour alone.

    ``passed`` is a criterion's True/False/None or an overall verdict string
    ("pass", "fail", "incomplete").
    """
    passed = met(passed) if isinstance(passed, str) else passed
    if passed is True:
        return {"css": "met", "symbol": "✓", "word": "met"}
    if passed is False:
        return {"css": "unmet", "symbol": "✗", "word": "NOT MET"}
    return {"css": "na", "symbol": "–", "word": "not applicable"}


def _sig(p, alpha):
    return p is not None and p < alpha


def calibration_sentences(a: dict, alpha: float, unit: str) -> dict:
    """Plain-language reading of each calibration result, keyed by topic."""
    cal = a["calibration"]
    out = {}
    model = {"linear": "straight line", "quadratic": "second-order polynomial"}[cal["model"]]
    if cal["through_origin"]:
        model += " through the origin"
    weighting = "unweighted" if cal["weighting"] == "none" else f"weighted {cal['weighting']}"
    slope = cal["coefficients"]["slope"]
    out["fit"] = (f"A {model} ({weighting}) was fitted to n = {cal['n']} points at {cal['levels']} "
                  f"concentration levels ({cal['model_choice']}). The slope is {fmt(slope['estimate'])} "
                  f"({level_label(slope['ci_level'])} CI {fmt(slope['ci'][0])} to {fmt(slope['ci'][1])}); "
                  f"the residual standard deviation s(y/x) is {fmt(cal['residual_sd'])} and R² = {fmt(cal['r_squared'], 6)}.")
    def test_sentence(key: str, name: str, reading) -> None:
        """``reading(test)`` for an applicable test, else the one not-applicable sentence with its reason."""
        test = cal[key]
        out[key] = f"{name} was not applicable: {_reason(a, key)}." if test is None else reading(test)

    def lack_of_fit(lof):
        evidence = "is" if _sig(lof["p_value"], alpha) else "is no"
        return (f"The lack-of-fit test gives F = {fmt(lof['statistic'])} on ({lof['df'][0]}, {lof['df'][1]}) "
                f"degrees of freedom with p = {fmt_p(lof['p_value'])}, so there {evidence} evidence at "
                f"alpha = {alpha:g} that the {model} misses systematic structure (such as curvature) "
                "beyond the scatter of the replicates.")

    def mandel(m):
        better = "fits significantly better" if _sig(m["p_value"], alpha) else "does not fit significantly better"
        under = "unweighted fits" if m["weighting"] == "none" else f"fits weighted {m['weighting']}"
        return (f"Mandel's fitting test ({under}) gives F = {fmt(m['statistic'])} on (1, {m['df'][1]}) df, "
                f"p = {fmt_p(m['p_value'])}: a second-order polynomial {better} than a straight line "
                f"at alpha = {alpha:g}.")

    def normality(nt):
        ok = "are not" if _sig(nt["p_value"], alpha) else "are"
        return (f"{nt['method']}: W = {fmt(nt['statistic'])}, p = {fmt_p(nt['p_value'])}; "
                f"the residuals {ok} consistent with a normal distribution at alpha = {alpha:g}.")

    def heteroscedasticity(ht):
        if _sig(ht["p_value"], alpha):
            tail = ("the scatter of the response changes with concentration"
                    + ("; a weighted fit should be considered." if cal["weighting"] == "none"
                       else f"; the fit uses {cal['weighting']} weighting."))
        else:
            tail = "there is no evidence that the scatter of the response changes with concentration."
        return (f"{ht['method']} on the unweighted fit: LM = {fmt(ht['statistic'])}, "
                f"p = {fmt_p(ht['p_value'])}; at alpha = {alpha:g} {tail}")

    test_sentence("lack_of_fit", "The lack-of-fit test", lack_of_fit)
    test_sentence("mandel", "Mandel's fitting test", mandel)
    test_sentence("normality", "The normality test", normality)
    test_sentence("heteroscedasticity", "The heteroscedasticity test", heteroscedasticity)
    it = cal["intercept_test"]
    if it is not None:
        differs = "differs" if _sig(it["p_value"], alpha) else "does not differ"
        out["intercept"] = (f"The intercept {differs} significantly from zero "
                            f"(t = {fmt(it['statistic'])}, p = {fmt_p(it['p_value'])}).")
    flagged = cal["outliers"]["flagged"]
    if not flagged:
        out["outliers"] = "No calibrator is flagged by its studentised residual or Cook's distance."
    else:
        pts = "; ".join(f"{fmt(o['concentration'])} {unit} ({', '.join(o['reasons'])})" for o in flagged)
        out["outliers"] = (f"{len(flagged)} calibrator(s) flagged: {pts}. Flagged points stay in the fit; "
                           "a reviewer decides, with a documented reason, whether any is excluded.")
    judged = [b for b in cal["back_calculated"] if b["pass"] is not None]
    within = sum(1 for b in judged if b["pass"])
    out["back_calculated"] = (f"{within} of {len(judged)} calibrators back-calculate within their tolerance"
                              + (f" (fraction {fmt(cal['fraction_within_tolerance'], 3)})." if judged else "."))
    return out


def _reason(a: dict, item: str) -> str:
    for entry in a.get("not_applicable", []):
        if entry["item"] == item:
            return entry["reason"]
    return "see the analyte's notes"
