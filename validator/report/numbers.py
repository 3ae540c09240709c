"""Reportable numbers: the one place the dossier rounds and labels a value.

results.json keeps every value at full precision; the dossier shows each value
rounded by the rule for its kind (:data:`RULES`, listed in the formulas page):

* an uncertainty (standard error, standard deviation, a confidence interval's
  half-width) to two significant figures, and the value it belongs to rounded
  to the same decimal place (GUM, JCGM 100:2008, 7.2.6);
* a p-value to two significant figures;
* a value with its uncertainty ("3.09 ± 0.16"): the uncertainty to two significant figures and the
  value to its decimal place (:func:`plus_minus`);
* an interval about an estimate at the decimal place of the estimate as printed (:func:`interval_at`);
* a percentage statistic (recovery, deviation, bias, change, RSD, CV, difference in %) to one decimal;
* a column of like values at common decimals, those of its largest value (:func:`column`);
* a test statistic to three significant figures; R² and r to four decimals;
* any other value to four significant figures (trailing zeros dropped).

Very large or small numbers use a power of ten with a real superscript
("2.2×10⁻³¹"). Every function takes a number (or None, shown as ``n/a``) and
returns text; none estimates anything.

Labels: :func:`basis_label`, :func:`characteristic_label`, :func:`weighting_label`
and :func:`criterion_display` turn results.json identifiers into words.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

__all__ = ["MISSING", "RULES", "Rule", "sig", "fixed", "matched", "interval", "p_value", "by_rule", "plus_minus",
           "interval_at", "column", "decimals_as_shown",
           "rule_for_path", "superscript", "superscripts_in", "basis_label", "characteristic_label", "weighting_label",
           "criterion_display", "CriterionDisplay", "criterion_value", "suspect_label", "free_text_html",
           "step_label", "setting_value"]

MISSING = "n/a"
UNCERTAINTY_SIG = 2
P_SIG = 2
STATISTIC_SIG = 3
DEFAULT_SIG = 4
PERCENT_DECIMALS = 1
CORRELATION_DECIMALS = 4
# outside 10^-4 <= |x| < 10^6 a number is written with a power of ten
SCIENTIFIC_BELOW = -4
SCIENTIFIC_FROM = 6

_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def superscript(exponent: int) -> str:
    """An integer exponent in superscript digits: -31 -> '⁻³¹'."""
    return str(int(exponent)).translate(_SUPERSCRIPT)


def _missing(value) -> bool:
    return value is None or (isinstance(value, float) and not math.isfinite(value))


def _exponent(value: float) -> int:
    """The decimal exponent of |value| (0 for 0)."""
    return 0 if value == 0 else math.floor(math.log10(abs(value)))


def _rounded_exponent(value: float, digits: int) -> int:
    """The exponent of ``value`` after rounding to ``digits`` significant figures (0.0996 -> 0.10: -1)."""
    if value == 0:
        return 0
    e = _exponent(value)
    scaled = round(abs(value) / 10.0 ** (e - digits + 1))
    return e + 1 if scaled >= 10 ** digits else e


def _scientific(value: float, decimals_of_mantissa: int, exponent: int) -> str:
    mantissa = value / 10.0 ** exponent
    return f"{mantissa:.{max(decimals_of_mantissa, 0)}f}×10{superscript(exponent)}"


def _plain_or_scientific(value: float, decimals: int, exponent: int) -> str:
    """``value`` rounded at ``decimals`` decimal places (negative: tens, hundreds, ...); a power of
    ten ``exponent`` when that is outside the plain range."""
    if exponent < SCIENTIFIC_BELOW or exponent >= SCIENTIFIC_FROM:
        return _unsign_zero(_scientific(value, decimals + exponent, exponent))
    if decimals >= 0:
        return _unsign_zero(f"{value:.{decimals}f}")
    return _unsign_zero(f"{round(value, decimals):.0f}")


def _unsign_zero(text: str) -> str:
    """'-0.00' -> '0.00': a value that rounds to zero has no sign."""
    mantissa = text.partition("×")[0]
    return text[1:] if text.startswith("-") and not mantissa.strip("-0.") else text


def _special(value) -> str | None:
    if _missing(value):
        return MISSING
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int):
        return str(value)
    return None


def sig(value, digits: int = DEFAULT_SIG, *, keep_zeros: bool = True) -> str:
    """``value`` to ``digits`` significant figures.

    ``keep_zeros`` keeps trailing zeros that are significant (RSD 2.0 %); without it
    they are dropped (a nominal 0.5 stays 0.5).
    """
    special = _special(value)
    if special is not None:
        return special
    if value == 0:
        return "0"
    exponent = _rounded_exponent(value, digits)
    decimals = digits - 1 - exponent
    text = _plain_or_scientific(value, decimals, exponent)
    if not keep_zeros:
        text = _strip_zeros(text)
    return text


def _strip_zeros(text: str) -> str:
    mantissa, times, power = text.partition("×")
    if "." in mantissa:
        mantissa = mantissa.rstrip("0").rstrip(".")
    return mantissa + times + power


def fixed(value, decimals: int) -> str:
    """``value`` at a fixed number of decimal places (four significant figures with a power of ten
    when it is very large)."""
    special = _special(value)
    if special is not None:
        return special
    if abs(value) >= 10.0 ** SCIENTIFIC_FROM:
        return sig(value, DEFAULT_SIG)
    return _unsign_zero(f"{value:.{decimals}f}")


def _decimals_of_uncertainty(u: float, digits: int = UNCERTAINTY_SIG) -> int | None:
    """Decimal places at which ``u`` rounded to ``digits`` significant figures ends (None: no usable u)."""
    if _missing(u) or u == 0:
        return None
    return digits - 1 - _rounded_exponent(u, digits)


def matched(value, uncertainty) -> str:
    """``value`` rounded to the decimal place of its uncertainty at two significant figures (GUM 7.2.6).

    Without a usable uncertainty (missing or zero) the value is shown to four significant figures.
    Value and uncertainty share one power of ten when the larger of the two needs one.
    """
    special = None if isinstance(value, int) and not isinstance(value, bool) else _special(value)
    if special is not None:
        return special
    value = float(value)
    u = None if _missing(uncertainty) else abs(float(uncertainty))
    decimals = _decimals_of_uncertainty(u)
    if decimals is None:
        return sig(value, DEFAULT_SIG, keep_zeros=False)
    exponent = max(_exponent(value), _rounded_exponent(u, UNCERTAINTY_SIG))
    return _plain_or_scientific(value, decimals, exponent)


def uncertainty(u) -> str:
    """An uncertainty (standard error, standard deviation) to two significant figures."""
    return sig(_as_float(u), UNCERTAINTY_SIG)


def interval(low, high) -> tuple[str, str]:
    """Both ends of a confidence interval, rounded to the decimal place of its half-width at two
    significant figures (the half-width plays the part of the uncertainty, GUM 7.2.6)."""
    low, high = _as_float(low), _as_float(high)
    if _missing(low) or _missing(high):
        return sig(low, DEFAULT_SIG, keep_zeros=False), sig(high, DEFAULT_SIG, keep_zeros=False)
    half = abs(high - low) / 2
    return matched(low, half), matched(high, half)


def plus_minus(value, u, sep: str = " ± ") -> str:
    """``value ± u``: ``u`` to two significant figures and ``value`` to its decimal place (GUM 7.2.6)."""
    return f"{matched(value, u)}{sep}{uncertainty(u)}"


def decimals_as_shown(value, rule: str) -> int | None:
    """The decimal places of ``value`` as :func:`by_rule` prints it (None: no plain decimal place)."""
    value = _as_float(value)
    if _missing(value) or isinstance(value, bool):
        return None
    if rule in _RULE_DECIMALS:
        return _RULE_DECIMALS[rule]
    digits = _RULE_DIGITS.get(rule, DEFAULT_SIG)
    if value == 0:
        return None
    return digits - 1 - _rounded_exponent(value, digits)


def _at_decimals(value, decimals: int) -> str:
    special = _special(_as_float(value))
    if special is not None:
        return special
    value = float(value)
    return _plain_or_scientific(value, decimals, max(_exponent(value), -decimals))


def interval_at(low, high, value, rule: str = "value") -> tuple[str, str]:
    """Both ends of the interval of an estimate at the decimal place of the estimate as printed by
    ``rule`` (s_r 0.0075 with the interval 0.0052 to 0.0132); without a usable estimate, by
    :func:`interval`."""
    decimals = decimals_as_shown(value, rule)
    if decimals is None or _missing(_as_float(low)) or _missing(_as_float(high)):
        return interval(low, high)
    return _at_decimals(low, decimals), _at_decimals(high, decimals)


def column(values, rule: str = "value") -> list[str]:
    """A column of like values at common decimals: those its largest value has by ``rule``
    (103.0 and 98.8 rather than 103 and 98.81), more where the smallest value would otherwise keep
    fewer than two significant figures; missing values as ``n/a``."""
    usable = [abs(float(v)) for v in values if not _missing(_as_float(v)) and not isinstance(v, bool)]
    if not usable or max(usable) == 0:
        return [by_rule(v, rule) for v in values]
    decimals = decimals_as_shown(max(usable), rule)
    smallest = min((v for v in usable if v > 0), default=None)
    if smallest is not None:        # never fewer than 2 significant figures of the smallest value
        decimals = max(decimals, UNCERTAINTY_SIG - 1 - _rounded_exponent(smallest, UNCERTAINTY_SIG))
    return [_at_decimals(v, decimals) for v in values]


def p_value(p) -> str:
    """A p-value to two significant figures."""
    return sig(_as_float(p), P_SIG)


@dataclass(frozen=True)
class Rule:
    """One rounding rule: its name, what it applies to, and how (shown in the formulas page)."""
    name: str
    applies_to: str
    how: str


RULES: tuple[Rule, ...] = (
    Rule("uncertainty", "standard errors, standard deviations, s(y/x), LOD, LOQ (also where a range starts at "
         "it), x_C, standard and expanded uncertainties (absolute and in %), EP15 verification limits",
         "2 significant figures"),
    Rule("matched", "a value with its standard error (coefficients, sample concentrations)",
         "to the decimal place of its standard error at 2 significant figures (GUM 7.2.6)"),
    Rule("interval", "both ends of a confidence interval",
         "to the decimal place of its half-width at 2 significant figures"),
    Rule("p", "p-values", "2 significant figures"),
    Rule("plus-minus", "a value ± its uncertainty (samples' results ± U, slopes ± SE)",
         "the uncertainty to 2 significant figures, the value to the same decimal place (GUM 7.2.6)"),
    Rule("interval-of-estimate", "the confidence interval of an estimate shown beside it (the CI of an SD)",
         "both ends at the decimal place of the estimate as printed"),
    Rule("percent", "recovery, deviation, bias, change and difference in %", "1 decimal"),
    Rule("rsd", "RSD, CV, SD in % and tolerances in %", "1 decimal"),
    Rule("column", "a column of like values (means, nominal levels) in one table",
         "at common decimals: those of the column's largest value by its rule (more where the smallest "
         "would keep fewer than 2 significant figures)"),
    Rule("statistic", "test statistics (F, t, W, LM, C, G), HorRat", "3 significant figures"),
    Rule("correlation", "R² and r", "4 decimals"),
    Rule("recorded", "a raw peak area read from an instrument export", "as recorded (up to 15 significant figures)"),
    Rule("value", "any other value (concentrations, responses, means)", "4 significant figures"),
)


def _as_float(value):
    """An int as a float, so that a rule's rounding applies to it (None, bool and floats unchanged)."""
    return float(value) if isinstance(value, int) and not isinstance(value, bool) else value


def by_rule(value, rule: str) -> str:
    """``value`` formatted by the named rule of :data:`RULES` (``matched`` and ``interval`` need a partner)."""
    if rule not in ("count", "value"):
        value = _as_float(value)
    if rule == "uncertainty":
        return sig(value, UNCERTAINTY_SIG)
    if rule == "p":
        return p_value(value)
    if rule == "percent":
        return fixed(value, PERCENT_DECIMALS)
    if rule == "rsd":
        return fixed(value, PERCENT_DECIMALS)
    if rule == "statistic":
        return sig(value, STATISTIC_SIG)
    if rule == "correlation":
        return fixed(value, CORRELATION_DECIMALS)
    if rule == "value":
        return sig(value, DEFAULT_SIG, keep_zeros=False)
    if rule == "recorded":
        return sig(value, 15, keep_zeros=False)
    if rule == "count":
        return _special(value) or (str(int(value)) if float(value).is_integer() else sig(value, DEFAULT_SIG))
    raise ValueError(f"unknown rounding rule {rule!r}; expected one of {[r.name for r in RULES]}")


# the last named part of a results.json path -> its rule (the first matching pattern wins)
_PATH_RULES: tuple[tuple[str, str], ...] = (
    (r"^(analyte_response|internal_standard_response)$", "recorded"),     # raw areas of a run export
    (r"p_value$", "p"),
    (r"^range_pct$", "value"),      # a declared acceptance range is shown as declared
    (r"(limit_percent|^max_.*_percent)$", "value"),   # a declared limit in % is shown as declared
    (r"^(rsd_pct|repeatability_rsd_pct|intermediate_rsd_pct|sd_pct|rsd_max_pct|tolerance_pct|cv_pct|cv)$", "rsd"),
    (r"^(cv_percent|max_cv_percent)$", "rsd"),
    (r"^(expanded_pct|combined_pct|u_rw_pct|u_bias_pct)$", "uncertainty"),    # relative uncertainties, 2 s.f.
    (r"_(pct|percent)$", "percent"),
    (r"^(statistic|t_statistic|f_statistic|horrat|ratio)$", "statistic"),
    (r"^(r_squared|r)$", "correlation"),
    (r"(^|_)(sd|std_error|u_mean|expanded_uncertainty|standard_uncertainty|p_value_se|lod|loq|critical_value"
     r"|combined|expanded|upper_verification_limit|se_slope_matrix|se_slope_solvent|uncertainty)$", "uncertainty"),
)


def rule_for_path(path: str) -> str:
    """The rounding rule for the value at a results.json path ('analytes.0.precision.levels.1.repeatability_sd')."""
    names = [part for part in path.split(".") if not part.isdigit()]
    key = names[-1] if names else ""
    for pattern, rule in _PATH_RULES:
        if re.search(pattern, key):
            return rule
    return "value"


# --- labels: results.json identifiers in words -------------------------------------------------

BASIS_LABELS = {
    "ich-residual-sd": "ICH Q2, residual SD of the calibration",
    "ich-intercept-sd": "ICH Q2, SD of the intercept",
    "blank-sd": "ICH Q2, SD of the blanks",
    "iso-11843-2": "ISO 11843-2 minimum detectable value",
}

CHARACTERISTIC_LABELS = {
    "calibration": "calibration", "detection": "detection and quantitation limits",
    "working_range": "working range", "samples": "quantified samples", "recovery": "recovery (trueness)",
    "precision": "precision", "reference_material": "certified reference material",
    "revalidation": "re-validation", "comparison": "method comparison",
}


def basis_label(method: str) -> str:
    """A detection basis id ('ich-residual-sd') in words; an unknown id is returned unchanged."""
    return BASIS_LABELS.get(method, method)


def characteristic_label(name: str) -> str:
    """A results.json section name ('working_range') in words; a data role with a part
    ('matrix_effect.solvent_data') as 'matrix effect, solvent data'."""
    head, _, rest = name.partition(".")
    label = CHARACTERISTIC_LABELS.get(head, head.replace("_", " "))
    return label if not rest else ", ".join([label] + [part.replace("_", " ") for part in rest.split(".")])


def setting_value(value) -> str:
    """A study-file setting's value as the study file (TOML) writes it: true/false, ["spiked"],
    "text" as text, a float with its decimal point (20.0); no value: 'not set'."""
    if value is None:
        return "not set"
    if value == "":
        return "empty (not given)"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(f'"{v}"' if isinstance(v, str) else setting_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{k} = {setting_value(v)}" for k, v in value.items()) + "}"
    if isinstance(value, float):
        return repr(value)          # as TOML writes a float: 20.0, 0.05
    return str(value)


def superscripts_in(text: str) -> str:
    """Free text with '^2'-style exponents written as superscripts ('1/x^2' -> '1/x²')."""
    return re.sub(r"\^(-?\d+)", lambda m: superscript(int(m.group(1))), text)


def suspect_label(text: str) -> str:
    """An outlier test's suspect ('result 0.048417', 'series day-2') with a result's number by the
    "value" rule, as the table of flagged results shows it ('result 0.04842')."""
    m = re.fullmatch(r"result (\S+)", text or "")
    if not m:
        return text
    try:
        return f"result {by_rule(float(m.group(1)), 'value')}"
    except ValueError:
        return text


# symbols with a subscript as results.json's free text writes them (s_r) -> base and subscript
_SUBSCRIPTED = re.compile(r"\b(s|u|se|x|v|RSD|PRSD)_(r|R|I|L|m|c|IP|CRM|run|C|B|W)\b")
_E_NUMBER = re.compile(r"(?<![\w.])(-?\d+(?:\.\d+)?[eE][-+]?\d+)(?![\w.])")
# a decimal number in free text with more than 4 significant figures (-0.00822446)
_LONG_NUMBER = re.compile(r"(?<![\w.,])(-?\d+\.\d+)(?![\w.,])")


def _long_number(text: str) -> str:
    digits = text.lstrip("-").replace(".", "").lstrip("0")
    return sig(float(text), DEFAULT_SIG, keep_zeros=False) if len(digits) > DEFAULT_SIG else text


_POWER = re.compile(r"\^(−?-?\d+(?:\.\d+)?)")
_STAT_EQUALS = re.compile(r"\b(F|t|G|C|W) = (-?\d+\.\d{4,})")
# a study-file key named in a sentence ('judge_slope_ratio = false'), shown as code, not as a word
_STUDY_KEY = re.compile(r"(?<![\w.<>/])([a-z]+(?:_[a-z]+){1,}(?: = (?:true|false|\d+(?:\.\d+)?))?)(?![\w.])")
_P_EQUALS = re.compile(r"\bp = (\d\.\d{3,}(?:[eE][-+]?\d+)?)")


def free_text_html(text: str) -> str:
    """Free text of results.json (a note, a basis, a step's outcome) as HTML for the dossier: symbols
    with subscripts (s_r -> s<sub>r</sub>), powers as superscripts (C^-0.1505), numbers in e-notation
    with a power of ten at 4 significant figures (1.2e-7 -> 1.2×10⁻⁷), any longer decimal number at 4
    significant figures (-0.00822446 -> -0.008224), a test statistic after
    'F = ' to 3 significant figures and a p-value to 2, a study-file key ('judge_slope_ratio = false')
    as code. The text is escaped first; the caller marks
    the result safe."""
    from html import escape
    out = escape(str(text), quote=False)
    out = _STAT_EQUALS.sub(lambda m: f"{m.group(1)} = {sig(float(m.group(2)), STATISTIC_SIG)}", out)
    out = _P_EQUALS.sub(lambda m: f"p = {p_value(float(m.group(1)))}", out)
    out = _E_NUMBER.sub(lambda m: sig(float(m.group(1)), DEFAULT_SIG, keep_zeros=False), out)
    out = _LONG_NUMBER.sub(lambda m: _long_number(m.group(1)), out)
    out = _POWER.sub(lambda m: (superscript(int(m.group(1).replace("−", "-"))) if "." not in m.group(1)
                                else f"<sup>{m.group(1).replace('-', '−')}</sup>"), out)
    out = _SUBSCRIPTED.sub(r"\1<sub>\2</sub>", out)
    return _STUDY_KEY.sub(r"<code>\1</code>", out)


STEP_LABELS = {"weighting": "choice of weighting", "mandel": "Mandel's fitting test", "model": "choice of model"}


def step_label(step: str) -> str:
    """A step id of the automatic calibration choice ('mandel') in words."""
    return STEP_LABELS.get(step, step.replace("_", " "))


def weighting_label(weighting: str) -> str:
    """A weighting id ('1/x^2', 'none') in words with a real exponent."""
    if weighting == "none":
        return "unweighted"
    return superscripts_in(weighting)


@dataclass(frozen=True)
class CriterionDisplay:
    """How one criterion reads in the dossier: a label, the unit of its value and limit, the
    comparison its limit makes, and the rounding rule of its value (a limit is shown as declared,
    by the "value" rule)."""
    label: str
    unit: str
    comparison: str
    rule: str
    limit_rule: str = "value"


def _level_text(text: str, unit: str) -> str:
    return f"{text} {unit}".strip()


def criterion_display(criterion_id: str, description: str, concentration_unit: str) -> CriterionDisplay:
    """Label, unit, comparison and rounding of a criterion from its id (criteria.py and engine.py ids).

    An id not listed here keeps its description as the label, with no unit.
    """
    cu = concentration_unit
    fixed_ids = {
        "lack-of-fit": CriterionDisplay("Lack of fit: F test p-value", "", "≥", "p"),
        "back-calculation": CriterionDisplay("Calibrators back-calculated within tolerance (fraction)", "", "≥",
                                             "statistic"),
        "monotonic": CriterionDisplay("Monotonic calibration: end-slope ratio", "", ">", "statistic"),
        "r-squared": CriterionDisplay("Coefficient of determination R²", "", "≥", "correlation"),
        "working-range": CriterionDisplay("Working range: passing calibrator levels", "levels", "≥", "count"),
        "reference-material-bias": CriterionDisplay("Reference material: |bias| within k·u", cu, "≤", "uncertainty",
                                                    "uncertainty"),
        "loq-verification": CriterionDisplay("Largest RSD at levels up to 2 × LOQ", "%", "≤", "rsd"),
        "method-comparison-slope": CriterionDisplay("Method comparison: Passing-Bablok slope CI", "", "within",
                                                    "statistic"),
        "method-comparison-intercept": CriterionDisplay("Method comparison: Passing-Bablok intercept CI", cu,
                                                        "within", "value"),
        "slope-equivalence": CriterionDisplay("Re-validation: CI of the sensitivity change", "%", "within",
                                              "percent"),
        "residual-sd-ratio": CriterionDisplay("Re-validation: s(y/x) ratio current/previous", "", "≤", "statistic"),
        "protocol-deviation": CriterionDisplay(description, "", "", "count"),
    }
    if criterion_id in fixed_ids:
        return fixed_ids[criterion_id]
    m = re.fullmatch(r"recovery-(.+)", criterion_id)
    if m:
        return CriterionDisplay(f"Mean recovery at {_level_text(m.group(1), cu)} added", "%", "within", "percent")
    m = re.fullmatch(r"(repeatability|intermediate)-rsd-(.+)", criterion_id)
    if m:
        what = "Repeatability RSD" if m.group(1) == "repeatability" else "Intermediate precision RSD"
        return CriterionDisplay(f"{what} at {_level_text(m.group(2), cu)}", "%", "≤", "rsd")
    if criterion_id.startswith("stability-"):     # the condition is in the description only
        label = re.sub(r" at nominal ([^:\s]+):", rf" at nominal \1 {cu}:", description)
        return CriterionDisplay(label[:1].upper() + label[1:], "%", "within", "percent")
    display = _more_displays(criterion_id, cu)
    return display if display is not None else CriterionDisplay(description, "", "", "value")


# criteria ids of the later characteristics (each matched in full, with its level or condition):
# label template ({0}, {1}: the matched groups; {cu}: the concentration unit), unit, comparison, rule
_MORE_DISPLAYS = (
    (r"(repeatability|within-laboratory)-claim-(.+)", "{0} SD at {1} {cu}: at most the upper verification limit "
     "of the claimed RSD (CLSI EP15)", "cu", "≤", "uncertainty"),
    (r"accuracy-profile-(.+)", "Accuracy profile at {0} {cu}: beta-expectation tolerance interval "
     "(relative to the nominal value)", "%", "within", "percent"),
    (r"expanded-uncertainty-(.+)", "Relative expanded uncertainty at {0} {cu}", "%", "≤", "uncertainty"),
    (r"limit-of-blank", "Limit of blank (CLSI EP17)", "cu", "≤", "value"),
    (r"limit-of-detection", "Limit of detection (CLSI EP17)", "cu", "≤", "value"),
    (r"limit-of-quantitation", "Limit of quantitation (CLSI EP17)", "cu", "≤", "value"),
    (r"method-detection-limit", "Method detection limit (40 CFR 136 Appendix B)", "cu", "≤", "value"),
    (r"matrix-effect-slope-ratio", "Matrix effect: slope ratio ME", "%", "within", "percent"),
    (r"matrix-factor-cv", "CV of the IS-normalised matrix factor across lots", "%", "≤", "rsd"),
    (r"matrix-lots-(.+)", "Matrix lots meeting accuracy and CV at nominal {0} {cu}", "lots", "≥", "count"),
    (r"carry-over", "Carry-over: largest blank after the highest calibrator, % of the mean LLOQ response", "%", "≤",
     "percent"),
    (r"carry-over-internal-standard", "Carry-over of the internal standard, % of its mean response", "%", "≤",
     "percent"),
    (r"selectivity", "Selectivity: fraction of blank-matrix lots free of interference", "", "≥", "statistic"),
    (r"incurred-sample-reanalysis", "Incurred-sample reanalysis: fraction of repeats within the limit", "", "≥",
     "statistic"),
    (r"dilution-accuracy-(\d+(?:\.\d+)?)x-(.+)", "Dilution ×{0} of nominal {1} {cu}: mean bias", "%", "within",
     "percent"),
    (r"dilution-cv-(\d+(?:\.\d+)?)x-(.+)", "Dilution ×{0} of nominal {1} {cu}: CV", "%", "≤", "rsd"),
)


def _more_displays(criterion_id: str, cu: str) -> CriterionDisplay | None:
    for pattern, label, unit, comparison, rule in _MORE_DISPLAYS:
        m = re.fullmatch(pattern, criterion_id)
        # an EP15 claim's limit is a computed upper verification limit (an SD), not a declared value
        limit_rule = "uncertainty" if "-claim-" in criterion_id else "value"
        if m:
            groups = [g[:1].upper() + g[1:] if i == 0 and pattern.startswith("(repeatability") else g
                      for i, g in enumerate(m.groups())]
            return CriterionDisplay(label.format(*groups, cu=cu).replace("  ", " "), cu if unit == "cu" else unit,
                                    comparison, rule, limit_rule)
    return None


# --- a criterion's value beside its limit ----------------------------------------------------------

_RULE_DIGITS = {"uncertainty": UNCERTAINTY_SIG, "p": P_SIG, "statistic": STATISTIC_SIG,
                "value": DEFAULT_SIG, "recorded": 15, "count": DEFAULT_SIG}
_RULE_DECIMALS = {"percent": PERCENT_DECIMALS, "rsd": PERCENT_DECIMALS, "correlation": CORRELATION_DECIMALS}
# the most significant figures a float carries: beyond them more digits show nothing new
_MOST_DIGITS = 17


def _as_shown(value: float, rule: str) -> float:
    """The number a reader sees when ``value`` is written by ``rule`` (the rounding of :func:`by_rule`)."""
    if rule == "count" and float(value).is_integer():
        return float(value)
    if rule in _RULE_DECIMALS and abs(value) < 10.0 ** SCIENTIFIC_FROM:
        return float(f"{value:.{_RULE_DECIMALS[rule]}f}")
    digits = _RULE_DIGITS.get(rule, DEFAULT_SIG)
    return float(f"{value:.{digits - 1}e}")


def _shown_verdict(value: float, limit, comparison: str):
    """The verdict a reader would read from the numbers as shown (None: no comparison to read)."""
    if comparison == "≤":
        return value <= limit
    if comparison == "≥":
        return value >= limit
    if comparison == ">":
        return value > limit
    if comparison == "within" and isinstance(limit, (list, tuple)) and len(limit) == 2:
        return limit[0] <= value <= limit[1]
    return None


def criterion_value(value, limit, display: CriterionDisplay, passed) -> str:
    """A criterion's value, rounded by its display rule, with more significant figures when the rounded
    value read against the limit as printed would give the other verdict (20.0001 % beyond a limit of
    20 % is shown as 20.0001, never as 20.0 beside NOT MET). A pair (an interval) or a value without a
    verdict is shown by the rule alone."""
    if isinstance(value, (list, tuple)):       # an interval: both ends by the rule (the template's lim)
        return " to ".join(by_rule(v, display.rule) for v in value)
    text = by_rule(value, display.rule)
    if passed is None or _missing(value) or isinstance(value, bool) or not isinstance(value, (int, float)):
        return text
    if isinstance(limit, (list, tuple)):
        if any(_missing(v) or isinstance(v, bool) for v in limit):
            return text
        shown_limit = [_as_shown(float(v), display.limit_rule) for v in limit]
    elif _missing(limit) or isinstance(limit, bool) or not isinstance(limit, (int, float)):
        return text
    else:
        shown_limit = _as_shown(float(limit), display.limit_rule)
    value = float(value)
    read = _shown_verdict(_as_shown(value, display.rule), shown_limit, display.comparison)
    if read is None or read == bool(passed):
        return text
    for digits in range(_RULE_DIGITS.get(display.rule, UNCERTAINTY_SIG), _MOST_DIGITS + 1):
        if _shown_verdict(float(f"{value:.{digits - 1}e}"), shown_limit, display.comparison) == bool(passed):
            return sig(value, digits, keep_zeros=False)
    # judged by the documented tolerance on the limit: the value as printed cannot differ from it
    return text
