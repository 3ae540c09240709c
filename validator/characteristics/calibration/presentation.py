"""The calibration in plain language, from its results.json entry alone.

Its figures (the fit with its bands, the residual diagnostics) are still drawn in
:mod:`validator.report.plots` from the engine's plot series.
"""

from __future__ import annotations

from ...report.text import (by_rule, flagged_points, fmt, fmt_p, interval, level_label, matched, superscripts_in,
                            uncertainty, weighting_label)

__all__ = ["sentences"]


def _sig(p, alpha):
    return p is not None and p < alpha


def sentences(cal: dict, reading) -> dict[str, str]:
    """Plain-language reading of each calibration result, keyed by topic: ``fit``, ``lack_of_fit``,
    ``mandel``, ``normality``, ``heteroscedasticity``, ``intercept`` (when tested), ``outliers``,
    ``back_calculated``."""
    alpha, unit = reading.alpha, reading.unit
    out = {}
    model = {"linear": "straight line", "quadratic": "second-order polynomial"}[cal["model"]]
    if cal["through_origin"]:
        model += " through the origin"
    weighting = weighting_label(cal["weighting"])
    weighting = weighting if weighting == "unweighted" else f"weighted {weighting}"
    slope = cal["coefficients"]["slope"]
    low, high = interval(*slope["ci"])
    # a quadratic's "slope" coefficient is its linear term, the slope at x = 0 only
    slope_name = "linear coefficient b (the slope at zero concentration)" if cal["model"] == "quadratic" else "slope"
    out["fit"] = (f"A {model} ({weighting}) was fitted to n = {cal['n']} points at {cal['levels']} "
                  f"concentration levels ({cal['model_choice']}). The {slope_name} is "
                  f"{matched(slope['estimate'], slope['std_error'])} ({level_label(slope['ci_level'])} CI {low} to {high}); "
                  f"the residual standard deviation s(y/x) is {uncertainty(cal['residual_sd'])} and "
                  f"R² = {by_rule(cal['r_squared'], 'correlation')}.")
    def test_sentence(key: str, name: str, describe) -> None:
        """``describe(test)`` for an applicable test, else the one not-applicable sentence with its reason."""
        test = cal[key]
        out[key] = f"{name} was not applicable: {reading.reason_for(key)}." if test is None else describe(test)

    def lack_of_fit(lof):
        evidence = "is" if _sig(lof["p_value"], alpha) else "is no"
        return (f"The lack-of-fit test gives F = {_stat(lof['statistic'])} on ({lof['df'][0]}, {lof['df'][1]}) "
                f"degrees of freedom with p = {fmt_p(lof['p_value'])}, so there {evidence} evidence at "
                f"alpha = {alpha:g} that the {model} misses systematic structure (such as curvature) "
                "beyond the scatter of the replicates.")

    def mandel(m):
        better = "fits significantly better" if _sig(m["p_value"], alpha) else "does not fit significantly better"
        under = "unweighted fits" if m["weighting"] == "none" else f"fits weighted {weighting_label(m['weighting'])}"
        return (f"Mandel's fitting test ({under}) gives F = {_stat(m['statistic'])} on (1, {m['df'][1]}) df, "
                f"p = {fmt_p(m['p_value'])}: a second-order polynomial {better} than a straight line "
                f"at alpha = {alpha:g}.")

    def normality(nt):
        ok = "are not" if _sig(nt["p_value"], alpha) else "are"
        return (f"{nt['method']}: W = {_stat(nt['statistic'])}, p = {fmt_p(nt['p_value'])}; "
                f"the residuals {ok} consistent with a normal distribution at alpha = {alpha:g}.")

    def heteroscedasticity(ht):
        if _sig(ht["p_value"], alpha):
            tail = ("the scatter of the response changes with concentration"
                    + ("; a weighted fit should be considered." if cal["weighting"] == "none"
                       else f"; the fit uses {weighting_label(cal['weighting'])} weighting."))
        else:
            tail = "there is no evidence that the scatter of the response changes with concentration."
        return (f"{ht['method']} on the unweighted fit: LM = {_stat(ht['statistic'])}, "
                f"p = {fmt_p(ht['p_value'])}; at alpha = {alpha:g} {tail}")

    test_sentence("lack_of_fit", "The lack-of-fit test", lack_of_fit)
    test_sentence("mandel", "Mandel's fitting test", mandel)
    test_sentence("normality", "The normality test", normality)
    test_sentence("heteroscedasticity", "The heteroscedasticity test", heteroscedasticity)
    it = cal["intercept_test"]
    if it is not None:
        differs = "differs" if _sig(it["p_value"], alpha) else "does not differ"
        out["intercept"] = (f"The intercept {differs} significantly from zero "
                            f"(t = {_stat(it['statistic'])}, p = {fmt_p(it['p_value'])}).")
    flagged = cal["outliers"]["flagged"]
    if not flagged:
        out["outliers"] = "No calibrator is flagged by its studentised residual or Cook's distance."
    else:
        pts = "; ".join(f"calibration point {point} ({fmt(o['concentration'])} {unit}, response "
                        f"{fmt(o['response'])}; {', '.join(o['reasons'])})" for o, point in zip(flagged, flagged_points(cal)))
        out["outliers"] = (f"{len(flagged)} calibrator(s) flagged: {pts}. Flagged points stay in the fit; "
                           "a reviewer decides, with a documented reason, whether any is excluded.")
    judged = [b for b in cal["back_calculated"] if b["pass"] is not None]
    within = sum(1 for b in judged if b["pass"])
    out["back_calculated"] = (f"{within} of {len(judged)} calibrators back-calculate within their tolerance"
                              + (f" (fraction {by_rule(cal['fraction_within_tolerance'], 'statistic')})." if judged else "."))
    return {key: superscripts_in(text) for key, text in out.items()}


def _stat(value) -> str:
    return by_rule(value, "statistic")
