"""Reportable numbers: the rounding rules of validator/report/numbers.py, case by case."""

import pytest

from validator.report import numbers as N


@pytest.mark.parametrize("value, uncertainty, shown_value, shown_uncertainty", [
    # from memory: GUM (JCGM 100:2008) 7.2.2, m_S = 100.021 47 g with u_c = 0.35 mg
    (100.02147, 0.00035, "100.02147", "0.00035"),
    # from memory: GUM 7.2.6, y = 10.057 62 Ω with u_c(y) = 27 mΩ is rounded to 10.058 Ω
    (10.05762, 0.027, "10.058", "0.027"),
    # hand computation: u rounds up to a new decade (0.0996 -> 0.10), the value follows it
    (12.345, 0.0996, "12.35", "0.10"),
    # hand computation: the calibration slope of the demo with its standard error
    (0.18694, 0.0011428, "0.1869", "0.0011"),
    # hand computation: an uncertainty larger than the value
    (0.0031427, 0.0013129, "0.0031", "0.0013"),
    (-0.001, 0.5, "0.00", "0.50"),          # hand computation: no "-0.00"
    (99.09418, 3.3, "99.1", "3.3"),          # hand computation
    (123456.7, 2345.0, "123500", "2300"),   # hand computation: rounding to hundreds
    # hand computation: beyond 10^6 one power of ten, that of the larger of value and uncertainty
    (1234567.0, 2345.0, "1.2346×10⁶", "2300"),
    (2.5e-9, 1.234e-10, "2.50×10⁻⁹", "1.2×10⁻¹⁰"),
    (5, 0.25, "5.00", "0.25"),               # hand computation: an integer value is rounded too
    (3.14159, None, "3.142", "n/a"),         # common practice, no published source: no u, 4 sig. figures
    (3.14159, 0.0, "3.142", "0"),
    (None, 0.1, "n/a", "0.10"),
])
def test_value_with_its_uncertainty(value, uncertainty, shown_value, shown_uncertainty):
    assert N.matched(value, uncertainty) == shown_value
    assert N.uncertainty(uncertainty) == shown_uncertainty


@pytest.mark.parametrize("low, high, shown", [
    (92.15249843534122, 103.54416823132547, ("92.2", "103.5")),   # hand computation: half-width 5.7
    (0.184551, 0.18933, ("0.1846", "0.1893")),                    # hand computation: half-width 0.0024
    (-0.0023, 0.0058, ("-0.0023", "0.0058")),                      # hand computation: half-width 0.0041
    (None, 1.0, ("n/a", "1")),
])
def test_interval_ends_follow_the_half_width(low, high, shown):
    assert N.interval(low, high) == shown


@pytest.mark.parametrize("p, shown", [      # hand computation: two significant figures
    (0.35725, "0.36"), (0.05, "0.050"), (0.000327, "0.00033"), (2.19e-31, "2.2×10⁻³¹"),
    (0.99999, "1.0"), (1.0, "1.0"), (0.0, "0"), (None, "n/a"), (float("nan"), "n/a"),
])
def test_p_values(p, shown):
    assert N.p_value(p) == shown


@pytest.mark.parametrize("value, rule, shown", [    # hand computation, rules as listed in numbers.RULES
    (1.5154359515275635, "rsd", "1.5"), (12.04, "rsd", "12.0"), (2.0, "rsd", "2.0"), (15, "rsd", "15.0"), (2.307, "rsd", "2.3"),
    (97.84833, "percent", "97.8"), (-1.5079, "percent", "-1.5"), (-0.02, "percent", "0.0"),
    (1.2036, "statistic", "1.20"), (163.58, "statistic", "164"),
    (0.9992904860511326, "correlation", "0.9993"),
    (0.035669, "uncertainty", "0.036"), (0.0046437, "uncertainty", "0.0046"),
    (0.5, "value", "0.5"), (0.51136, "value", "0.5114"), (40.0, "value", "40"), (7, "count", "7"),
    (None, "value", "n/a"), (True, "value", "yes"),
])
def test_rules(value, rule, shown):
    assert N.by_rule(value, rule) == shown


def test_unknown_rule_names_the_allowed_ones():
    with pytest.raises(ValueError, match="'uncertainty'"):
        N.by_rule(1.0, "nonsense")


@pytest.mark.parametrize("path, rule", [
    ("analytes.0.calibration.lack_of_fit.p_value", "p"),
    ("analytes.0.precision.levels.1.repeatability_rsd_pct", "rsd"),
    ("analytes.0.recovery.levels.0.ci_pct.0", "percent"),
    ("analytes.0.recovery.levels.0.mean_pct", "percent"),
    ("analytes.0.calibration.residual_sd", "uncertainty"),
    ("analytes.0.detection.estimates.0.lod", "uncertainty"),
    ("analytes.0.calibration.r_squared", "correlation"),
    ("analytes.0.calibration.lack_of_fit.statistic", "statistic"),
    ("analytes.0.calibration.back_calculated.3.found", "value"),
])
def test_rule_for_path(path, rule):
    assert N.rule_for_path(path) == rule


def test_superscripts_and_labels():
    assert N.superscript(-31) == "⁻³¹"
    assert N.weighting_label("1/x^2") == "1/x²"
    assert N.weighting_label("none") == "unweighted"
    assert N.basis_label("ich-residual-sd") == "ICH Q2, residual SD of the calibration"
    assert N.characteristic_label("working_range") == "working range"
    d = N.criterion_display("recovery-2", "mean recovery at added 2 within 90 to 110 %", "mg/L")
    assert (d.label, d.unit, d.comparison) == ("Mean recovery at 2 mg/L added", "%", "within")
    d = N.criterion_display("repeatability-rsd-0.5", "", "mg/L")
    assert (d.label, d.unit, d.comparison) == ("Repeatability RSD at 0.5 mg/L", "%", "≤")
    assert N.criterion_display("new-thing", "a new rule", "mg/L").label == "a new rule"


def test_negative_scientific_and_negative_zero():
    assert N.matched(-5.53e-5, 1.2e-6) == "-5.53×10⁻⁵"      # hand computation: u = 0.0000012 sets 7 decimals
    assert N.by_rule(-0.0004, "percent") == "0.0"


@pytest.mark.parametrize("criterion_id, characteristic", [    # ids from criteria.py and the characteristic packages
    ("lack-of-fit", "calibration"), ("recovery-0.5", "recovery"), ("repeatability-rsd-10", "precision"),
    ("loq-verification", "detection"), ("working-range", "working_range"), ("carry-over", "carry_over"),
    ("dilution-cv-10x", "dilution_integrity"), ("matrix-lots-5", "matrix_effect"), ("unknown-thing", "other"),
])
def test_criterion_characteristic(criterion_id, characteristic):
    from validator.report.summary import criterion_characteristic
    assert criterion_characteristic(criterion_id) == characteristic
