"""Printed strings of the rounding rules per kind (value ± uncertainty, interval of an estimate,
percentage statistics, a column of like values) and of the dossier cells the QA review named."""

import re
from pathlib import Path

import pytest

from validator.report import numbers as N

ROOT = Path(__file__).resolve().parents[1]


@pytest.mark.parametrize("value, u, shown", [
    # hand computation, GUM (JCGM 100:2008) 7.2.6: U to 2 significant figures, the value to its place
    (3.093, 0.1637, "3.09 ± 0.16"),
    (0.016970, 0.0001446, "0.01697 ± 0.00014"),
    (-0.1885, 0.32, "-0.19 ± 0.32"),
    (12.312, None, "12.31 ± n/a"),
])
def test_plus_minus(value, u, shown):
    assert N.plus_minus(value, u) == shown


@pytest.mark.parametrize("low, high, value, rule, shown", [
    # hand computation: the interval at the decimal place of its estimate as printed (s_r 0.0075)
    (0.005213, 0.01321, 0.007512, "uncertainty", ("0.0052", "0.0132")),
    (0.08834, 0.3541, 0.1463, "uncertainty", ("0.09", "0.35")),     # s 0.15
    (-8.97, 0.5689, -4.22, "percent", ("-9.0", "0.6")),
    (1.0, 2.0, None, "uncertainty", ("1.00", "2.00")),     # no estimate: the interval rule
])
def test_interval_at_the_estimate(low, high, value, rule, shown):
    assert N.interval_at(low, high, value, rule) == shown


@pytest.mark.parametrize("value, path, shown", [
    # hand computation, rules of numbers.RULES by results.json path
    (0.013934, "analytes.0.uncertainty.levels.0.combined", "0.014"),
    (0.0046350, "analytes.0.uncertainty.levels.0.expanded", "0.0046"),
    (0.021283, "analytes.0.precision.levels.0.claims.1.upper_verification_limit", "0.021"),
    (2.3071, "analytes.0.matrix_effect.lots.0.lots.0.cv_percent", "2.3"),
    (-6.2533, "analytes.0.stability.conditions.0.result.deviation_percent", "-6.3"),
    (22.478, "analytes.0.reanalysis.samples.0.difference_percent", "22.5"),
    (98.81, "analytes.0.matrix_effect.lots.0.lots.0.accuracy_percent", "98.8"),
    (103.0, "analytes.0.matrix_effect.lots.0.lots.1.accuracy_percent", "103.0"),
    (0.0001446, "analytes.0.matrix_effect.slope_ratio.se_slope_solvent", "0.00014"),
    (15.0, "analytes.0.stability.conditions.0.result.limit_percent", "15"),     # declared, as declared
    (15.0, "analytes.0.dilution_integrity.max_bias_percent", "15"),
])
def test_rule_by_path(value, path, shown):
    assert N.by_rule(value, N.rule_for_path(path)) == shown


@pytest.mark.parametrize("values, rule, shown", [
    # hand computation: common decimals, those of the largest value by its rule
    ([2.964, 3.09, 3.154], "value", ["2.964", "3.090", "3.154"]),
    ([103.0, 98.81], "value", ["103.0", "98.8"]),
    ([0.2, 0.0078], "uncertainty", ["0.2000", "0.0078"]),    # 2 s.f. of the smallest kept
    ([None, 1.5], "value", ["n/a", "1.500"]),
])
def test_column(values, rule, shown):
    assert N.column(values, rule) == shown


@pytest.mark.parametrize("text, shown", [
    ("result 0.048417", "result 0.04842"),     # hand computation: the flagged-results table's 4 s.f.
    ("series day-2", "series day-2"),
])
def test_suspect_label(text, shown):
    assert N.suspect_label(text) == shown


def test_rounding_page_states_each_kind():
    names = {r.name for r in N.RULES}
    assert {"plus-minus", "interval-of-estimate", "percent", "rsd", "column"} <= names
    assert next(r for r in N.RULES if r.name == "rsd").how == "1 decimal"


@pytest.mark.parametrize("text, html", [
    # the QA review's free-text cases: subscripts, powers, e-notation, statistics, study keys
    ("PRSD_R from the Horwitz function, here 2 C^-0.1505 % (mass fraction 1.2e-7 to 0.138)",
     "PRSD<sub>R</sub> from the Horwitz function, here 2 C<sup>−0.1505</sup> % (mass fraction 1.2×10⁻⁷ to 0.138)"),
    ("u_m = s/√n", "u<sub>m</sub> = s/√n"),
    ("Mandel's test (weighting 1/x^2): F = 0.228635, p = 0.638", "Mandel's test (weighting 1/x²): F = 0.229, p = 0.64"),
    ("negative (-9.33317e-05); set to 0", "negative (-9.333×10⁻⁵); set to 0"),
    ("reported, not judged (judge_slope_ratio = false)", "reported, not judged (<code>judge_slope_ratio = false</code>)"),
    ("series run_1 & <b>", "series run_1 &amp; &lt;b&gt;"),      # escaped; a series name is no symbol
])
def test_free_text_html(text, html):
    assert N.free_text_html(text) == html


@pytest.mark.parametrize("value, shown", [
    (False, "false"), (["spiked"], '["spiked"]'), (None, "not set"), ("", "empty (not given)"), (100.0, "100.0"), (0.05, "0.05"), (3, "3"),
    ("ich-residual-sd", "ich-residual-sd"),
])
def test_setting_value_as_toml_writes_it(value, shown):
    assert N.setting_value(value) == shown


@pytest.mark.parametrize("role, shown", [
    ("matrix_effect.solvent_data", "matrix effect, solvent data"), ("working_range", "working range"),
])
def test_data_role_labels(role, shown):
    assert N.characteristic_label(role) == shown


@pytest.mark.parametrize("text, html", [
    # hand computation: a long decimal in a note at 4 significant figures; short ones and ids unchanged
    ("the ANOVA estimate of the 'day' variance is negative (-0.00822446); set to 0",
     "the ANOVA estimate of the 'day' variance is negative (-0.008224); set to 0"),
    ("mass fraction 0.138, version 1.2.3, lot 12345", "mass fraction 0.138, version 1.2.3, lot 12345"),
])
def test_free_text_long_numbers(text, html):
    assert N.free_text_html(text) == html
