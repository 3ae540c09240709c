"""results.json: the one place where result objects become JSON.

Floats are written with full precision (Python's shortest round-trip repr);
NaN and infinity never appear: a value that does not exist is ``null`` and
the reason is recorded in the analyte's ``not_applicable`` list. The layout
is documented in docs/results.md and by the JSON Schema shipped as
``validator/schema/results.schema.json``.
"""

from __future__ import annotations

import json
import platform
from importlib import resources
from importlib.metadata import PackageNotFoundError, version

from ._common import finite_or_none as num
from . import __version__

__all__ = ["SCHEMA_VERSION", "build_results", "dumps", "load_schema", "library_versions"]

SCHEMA_VERSION = "1.0"
LIBRARIES = ("numpy", "scipy", "statsmodels", "matplotlib", "jinja2", "weasyprint", "pydantic")


def library_versions() -> dict:
    out = {"python": platform.python_version()}
    for name in LIBRARIES:
        try:
            out[name] = version(name)
        except PackageNotFoundError:
            out[name] = None
    return out


def load_schema() -> dict:
    return json.loads(resources.files("validator").joinpath("schema/results.schema.json").read_text())


def _ci(ci):
    return [num(ci.low), num(ci.high)]


def _test(t, with_method=False):
    if not t.applicable:
        return None
    out = {"method": t.method} if with_method else {}
    out.update({"statistic": num(t.statistic), "p_value": num(t.pvalue)})
    if t.df is not None:
        out["df"] = list(t.df)
    return out


def _coefficient(c):
    return {"estimate": num(c.estimate), "std_error": num(c.std_error), "ci": _ci(c.ci),
            "t_statistic": num(c.statistic), "p_value": num(c.pvalue)}


def _calibration(a):
    cal, fit = a.calibration, a.calibration.fit
    r = None
    if fit.r_squared >= 0 and "slope" in fit.coefficients and fit.n_params <= 2:
        r = (1 if fit.coefficients["slope"].estimate >= 0 else -1) * fit.r_squared ** 0.5
    return {
        "model": cal.model,
        "weighting": cal.weighting,
        "through_origin": cal.through_origin,
        "model_choice": cal.model_choice,
        "n": fit.n,
        "levels": len(cal.levels),
        "level_table": [{"concentration": num(c), "replicates": k} for c, k in zip(cal.levels, cal.replicates)],
        "df_resid": fit.df_resid,
        "confidence_level": 1 - fit.alpha,
        "t_quantile": num(fit.t_quantile),
        "coefficients": {k: _coefficient(v) for k, v in fit.coefficients.items()},
        "residual_sd": num(fit.residual_sd),
        "r_squared": num(fit.r_squared),
        "r": num(r),
        "lack_of_fit": _test(cal.lack_of_fit),
        "mandel": _test(cal.mandel),
        "normality": _test(cal.normality, True),
        "heteroscedasticity": _test(cal.heteroscedasticity, True),
        "levene": _test(cal.levene, True),
        "intercept_test": _test(cal.intercept_test),
        "weighting_candidates": [
            {"weighting": c.weighting, "sum_abs_relative_error_pct": num(c.sum_abs_relative_error_pct),
             "residual_sd": num(c.residual_sd), "reason": c.reason} for c in cal.weighting_candidates],
        "outliers": {
            "studentised_limit": num(cal.studentised_limit), "cooks_limit": num(cal.cooks_limit),
            "flagged": [{"concentration": num(o.concentration), "response": num(o.response),
                         "studentised_residual": num(o.studentised_residual),
                         "cooks_distance": num(o.cooks_distance), "reasons": list(o.reasons)}
                        for o in cal.outliers]},
        "back_calculated": [
            {"nominal": num(b.nominal), "response": num(b.response), "found": num(b.found),
             "deviation_pct": num(b.deviation_pct), "tolerance_pct": num(b.tolerance_pct),
             "pass": b.passed} for b in cal.back_calculated],
        "fraction_within_tolerance": num(cal.fraction_within_tolerance),
        "residuals": [num(v) for v in fit.residuals],
    }


def _not_applicable(a):
    cal = a.calibration
    tests = {"lack_of_fit": cal.lack_of_fit, "mandel": cal.mandel, "normality": cal.normality,
             "heteroscedasticity": cal.heteroscedasticity, "levene": cal.levene,
             "intercept_test": cal.intercept_test}
    out = [{"item": k, "reason": t.reason} for k, t in tests.items() if not t.applicable]
    out += [{"item": f"samples.{s.id}", "reason": s.reason} for s in a.samples if s.reason]
    return out


def _analyte(a):
    return {
        "name": a.name,
        "verdict": a.verdict,
        "characteristics_assessed": ["calibration"] + (["samples"] if a.samples else []),
        "calibration": _calibration(a),
        "samples": [
            {"id": s.id, "replicates": s.replicates, "mean_response": num(s.mean_response),
             "concentration": num(s.concentration), "std_error": num(s.std_error), "ci": _ci(s.ci),
             "within_range": s.within_range} for s in a.samples],
        "criteria": [{"id": c.id, "description": c.description, "value": num(c.value),
                      "limit": num(c.limit), "pass": c.passed, "note": c.note} for c in a.criteria],
        "diagnostics": list(a.calibration.diagnostics),
        "not_applicable": _not_applicable(a),
    }


def build_results(result, *, generated_at: str) -> dict:
    """The results.json content for a :class:`~validator.engine.StudyResult`."""
    loaded = result.loaded
    cfg = loaded.config.study
    return {
        "schema_version": SCHEMA_VERSION,
        "verdict": result.verdict,
        "tool": {"name": "validator", "version": __version__, "libraries": library_versions(),
                 "platform": platform.platform()},
        "generated_at": generated_at,
        "study": {"id": cfg.id, "title": cfg.title, "purpose": cfg.purpose,
                  "concentration_unit": cfg.concentration_unit, "response_unit": cfg.response_unit,
                  "analyst": cfg.analyst, "reviewer": cfg.reviewer, "instrument": cfg.instrument,
                  "method": cfg.method, "notes": cfg.notes},
        "inputs": [{"role": f.role, "path": f.path, "sha256": f.sha256, "bytes": f.size}
                   for f in loaded.inputs],
        "defaults_applied": [{"key": k, "value": v} for k, v in loaded.study.defaults_applied],
        "analytes": [_analyte(a) for a in result.analytes],
    }


def dumps(results: dict) -> str:
    """Serialise, refusing NaN/inf (they must have become null already)."""
    return json.dumps(results, indent=2, ensure_ascii=False, allow_nan=False) + "\n"
