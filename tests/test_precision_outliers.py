"""Cochran's and Grubbs' outlier tests (ISO 5725-2 sec. 7.3) against published tables, exact
arithmetic and seeded simulation (each simulation states its seed, draws and standard error)."""

from fractions import Fraction

import jsonschema
import numpy as np
import pytest
from scipy import optimize

from validator.characteristics.precision import assess_precision_level
from validator.maths.outliers import (MONTE_CARLO_DRAWS, cochran_c, cochran_critical_value, cochran_null_sample,
                                      grubbs_critical_value, grubbs_double, grubbs_double_null_sample,
                                      grubbs_within_series)
from validator.results import Serialiser, load_schema


def _series_with_variances(variances, sizes):
    """Values and labels of series with exactly these sample variances (unit-variance pattern, scaled)."""
    values, labels = [], []
    for j, (v, n) in enumerate(zip(variances, sizes)):
        pattern = np.arange(n, dtype=float)
        pattern = (pattern - pattern.mean()) / np.std(pattern, ddof=1)
        values += list(10.0 + np.sqrt(v) * pattern)
        labels += [f"s{j}"] * n
    return np.array(values), labels


# ---------------------------------------------------------------- Cochran, equal sizes

# UK NMS table "Critical values for the Cochran test (95% confidence level)", SOURCES.md sec. 5:
# (number of series l, results per series n) -> C_crit
NMS_COCHRAN_5PCT = {(2, 2): 0.998, (3, 2): 0.967, (5, 2): 0.841, (10, 2): 0.602, (20, 2): 0.389,
                    (4, 3): 0.768, (10, 3): 0.445, (10, 4): 0.373, (10, 5): 0.331, (15, 5): 0.242}


@pytest.mark.parametrize("design", sorted(NMS_COCHRAN_5PCT))
def test_cochran_critical_value_reproduces_published_table(design):
    l, n = design
    assert round(cochran_critical_value(l, n, 0.05), 3) == NMS_COCHRAN_5PCT[design]  # NMS table, SOURCES.md sec. 5


@pytest.mark.parametrize("design", [d for d in sorted(NMS_COCHRAN_5PCT) if NMS_COCHRAN_5PCT[d] >= 0.5])
def test_cochran_pvalue_is_alpha_at_the_critical_value(design):
    # equal sizes and C >= 1/2: the closed form is exact, so p(C_crit) = 0.05 (hand derivation, see docstring)
    l, n = design
    c = cochran_critical_value(l, n, 0.05)
    y, g = _series_with_variances([c * (l - 1) / (1 - c)] + [1.0] * (l - 1), [n] * l)
    res = cochran_c(y, g)
    assert res.statistic == pytest.approx(c, rel=1e-9)
    assert res.pvalue == pytest.approx(0.05, rel=1e-6)
    assert "exact" in res.basis and res.pvalue_se is None and res.df == (l, n)


def test_cochran_below_half_is_called_a_bound():
    # 20 series of 2 at the published C_crit 0.389 < 1/2: Bonferroni bound, said so in the basis
    c = cochran_critical_value(20, 2, 0.05)
    y, g = _series_with_variances([c * 19 / (1 - c)] + [1.0] * 19, [2] * 20)
    res = cochran_c(y, g)
    assert res.pvalue == pytest.approx(0.05, rel=1e-6)
    assert "upper bound" in res.basis and "conservative" in res.basis


def test_cochran_simulation_agrees_with_the_published_balanced_value():
    # the Monte Carlo null of C (seed and 100 000 draws fixed in the module) at the published
    # C_crit(4 series, n = 3) = 0.768 (NMS table) gives a tail probability near 0.05;
    # SE = sqrt(0.05 * 0.95 / 100000) = 0.00069, tolerance 3 SE plus the table's 3-dp rounding (0.0005 in C)
    null = cochran_null_sample((3, 3, 3, 3))
    assert null.size == MONTE_CARLO_DRAWS
    tail = [np.mean(null >= c) for c in (0.7675, 0.7685)]
    assert tail[1] - 3 * 0.00069 <= 0.05 <= tail[0] + 3 * 0.00069


# ---------------------------------------------------------------- Cochran, unequal sizes

AUDIT_EXAMPLE = [(10.00, 10.05), (10.02, 10.01), (9.99, 10.00),
                 (10.00, 10.02, 9.99, 10.01, 10.03, 9.98, 10.00, 10.02)]


def test_cochran_unequal_sizes_audit_example():
    y = np.concatenate([np.array(s) for s in AUDIT_EXAMPLE])
    g = [f"d{j}" for j, s in enumerate(AUDIT_EXAMPLE) for _ in s]
    res = cochran_c(y, g)
    var = [np.var(s, ddof=1) for s in AUDIT_EXAMPLE]
    assert res.statistic == pytest.approx(max(var) / sum(var), rel=1e-12)   # hand computation, definition
    assert res.statistic == pytest.approx(0.7650, abs=5e-5)                 # value quoted in the audit
    # audit: the p-value for these sizes is about 0.11 (not 0.0137); seeded simulation,
    # its own SE sqrt(p(1 - p)/100000) = 0.001 is reported and below 0.002
    assert res.pvalue_se is not None and res.pvalue_se < 0.002
    assert res.pvalue == pytest.approx(0.11, abs=0.01)
    assert res.pvalue > 0.05
    assert "Monte Carlo" in res.basis and res.sizes == (2, 2, 2, 8)
    assert res.suspect == "series d0"
    assert cochran_c(y, g).pvalue == res.pvalue                           # seeded: reproducible


@pytest.mark.parametrize("sizes", [(2, 2, 2, 8), (2, 2, 2, 2, 8), (3, 4, 2, 5), (6, 6, 6, 2)])
def test_cochran_size_under_the_null_for_unbalanced_designs(sizes):
    # Seeded simulation (seed 7, 20 000 data sets of normal results, independent of the module's
    # chi-square reference sample): the rejection rate at nominal 5 % must lie within 3 SE of 0.05.
    # SE = sqrt(0.05*0.95/20000 + 0.05*0.95/100000) = 0.0017 (this simulation plus the reference sample's).
    # The audit measured 22 %, 13 %, 11 % and 9 % with the old mean-n closed form.
    draws = 20_000
    rng = np.random.default_rng(7)
    var = np.column_stack([np.var(rng.standard_normal((draws, n)), axis=1, ddof=1) for n in sizes])
    c = var.max(axis=1) / var.sum(axis=1)
    null = cochran_null_sample(tuple(sorted(sizes)))
    p = (null.size - np.searchsorted(null, c, side="left") + 1) / (null.size + 1)
    rate = np.mean(p <= 0.05)
    se = np.sqrt(0.05 * 0.95 / draws + 0.05 * 0.95 / null.size)
    assert abs(rate - 0.05) <= 3 * se, rate


def test_cochran_not_applicable_reasons():
    for y, g in (([1.0, 2.0, 3.0], ["a", "a", "b"]), ([1.0, 1.0, 2.0, 2.0], ["a", "a", "b", "b"]),
                 ([1.0, 1.0, 2.0, 2.0, 3.0, 3.4], ["a", "a", "b", "b", "c", "c"])):   # last: C = 1 by ties
        res = cochran_c(y, g)
        assert res.statistic is None and res.pvalue is None and res.reason


def test_simulated_pvalues_are_bounded_in_size():
    # 501 series of unequal sizes: refused with a reason instead of an unbounded simulation
    sizes = np.resize([2, 3], 501)
    g = np.repeat(np.arange(501), sizes)
    y = np.random.default_rng(2).standard_normal(g.size)
    for res in (cochran_c(y, g), grubbs_double(y, g)):
        assert not res.applicable and "at most 500 series" in res.reason


# ---------------------------------------------------------------- Grubbs single

# third-party table of one-sided Grubbs critical values (SOURCES.md sec. 5): n -> (alpha 0.05, 0.025, 0.01)
GRUBBS_TABLE = {3: (1.15, 1.15, 1.15), 5: (1.67, 1.71, 1.75), 10: (2.18, 2.29, 2.41), 20: (2.56, 2.71, 2.88)}


@pytest.mark.parametrize("n", sorted(GRUBBS_TABLE))
def test_grubbs_critical_value_reproduces_published_table(n):
    # to 2 dp: within half a unit of the last printed digit; n = 5, alpha = 0.025 computes to 1.71504,
    # on the rounding boundary of the printed 1.71 (the table seems to truncate there), hence 0.0051
    for alpha, published in zip((0.05, 0.025, 0.01), GRUBBS_TABLE[n]):
        assert abs(grubbs_critical_value(n, alpha) - published) <= 0.0051   # Grubbs table, SOURCES.md sec. 5


def _values_with_g(G, n):
    """n values: n - 1 evenly spaced in [-1, 1] and one more solved so that Grubbs' G equals G."""
    base = list(np.linspace(-1.0, 1.0, n - 1))

    def excess(d):
        x = np.array(base + [d])
        return np.max(np.abs(x - x.mean())) / np.std(x, ddof=1) - G
    return np.array(base + [optimize.brentq(excess, 1.0, 1e6, xtol=1e-14)])


@pytest.mark.parametrize("n", [5, 10, 20])
def test_grubbs_within_series_pvalue_at_the_published_critical_value(n):
    # two-sided p at the one-sided 2.5 % critical value is 5 %; exact when G > sqrt((n - 1)/2)
    # (hand derivation in validator.maths.outliers._grubbs_single), else the same value as an upper bound
    G = grubbs_critical_value(n, 0.025)
    x = _values_with_g(G, n)
    res, = grubbs_within_series(x, ["a"] * n)
    assert res.statistic == pytest.approx(G, rel=1e-9)
    assert res.pvalue == pytest.approx(0.05, rel=1e-6)
    assert res.series == "a" and res.suspect == f"result {x[-1]:.12g}"
    assert ("exact" in res.basis) == (G > np.sqrt((n - 1) / 2))


def test_grubbs_within_series_flags_the_extreme_result_per_series():
    y = [5.0, 5.1, 4.9, 5.0, 5.05, 6.5, 5.0, 5.1, 4.95, 5.02, 5.0, 5.1]
    g = ["a"] * 6 + ["b"] * 4 + ["c"] * 2
    a, b, c = grubbs_within_series(y, g)
    assert a.suspect == "result 6.5" and a.pvalue < 0.01
    xa = np.array(y[:6])
    assert a.statistic == pytest.approx(np.max(np.abs(xa - xa.mean())) / np.std(xa, ddof=1))  # definition
    assert b.applicable and b.pvalue > 0.05
    assert not c.applicable and "at least 3" in c.reason and c.series == "c"


def test_grubbs_ties_at_the_bound_are_not_judged():
    # two of three results identical: G = 2/sqrt(3), its largest possible value (hand derivation), so the
    # continuous-data p-value 0 would judge the rounding; reported not applicable with the reason
    x = np.array([0.5009, 0.5009, 0.5206])
    dev = x - x.mean()
    assert np.max(np.abs(dev)) / np.std(x, ddof=1) == pytest.approx(2 / np.sqrt(3), rel=1e-9)
    res, = grubbs_within_series(x, ["day-3"] * 3)
    assert not res.applicable and "ties" in res.reason
    # the suspect is shown in the data's own units when the values were centred before the analysis
    lv = assess_precision_level(0.5, [v - 0.5 for v in [0.49, 0.4931, 0.486, 0.5, 0.51, 0.503]],
                                ["a"] * 3 + ["b"] * 3, offset=0.5)
    assert lv.grubbs_within[0].suspect == "result 0.486"


# ---------------------------------------------------------------- Grubbs double

def test_grubbs_double_statistic_by_exact_arithmetic():
    means = [Fraction(v) for v in ("10.0", "10.1", "9.9", "10.05", "11.2", "11.4")]

    def ss(v):
        m = sum(v) / len(v)
        return sum((x - m) ** 2 for x in v)
    s = sorted(means)
    expected = min(ss(s[:-2]) / ss(s), ss(s[2:]) / ss(s))       # exact arithmetic with fractions
    y = np.repeat([float(m) for m in means], 2)
    g = np.repeat([f"d{j}" for j in range(6)], 2)
    res = grubbs_double(y, g)
    assert res.statistic == pytest.approx(float(expected), rel=1e-12)
    assert res.suspect == "two largest: series d4, d5"
    assert res.pvalue < 0.01 and res.pvalue_se < 0.002 and "Monte Carlo" in res.basis


def test_grubbs_double_pvalue_against_an_independent_simulation():
    # independent seeded simulation (seed 11, 40 000 draws of 8 normal means) of the same null;
    # SEs sqrt(p(1-p)/N) for both simulations combined, tolerance 4 SE
    rng = np.random.default_rng(11)
    y = np.repeat([0.1, -0.3, 0.2, 0.0, 0.25, -0.1, 1.1, 1.3], 3)
    g = np.repeat(list("abcdefgh"), 3)
    res = grubbs_double(y, g)
    z = np.sort(rng.standard_normal((40_000, 8)), axis=1)
    tot = np.var(z, axis=1) * 8
    hi = np.var(z[:, :-2], axis=1) * 6 / tot
    lo = np.var(z[:, 2:], axis=1) * 6 / tot
    p_ind = np.mean(np.minimum(hi, lo) <= res.statistic)
    se = np.sqrt(p_ind * (1 - p_ind) / 40_000 + res.pvalue_se**2)
    assert abs(res.pvalue - p_ind) <= 4 * se
    assert 0.0 < res.pvalue < 0.2


def test_grubbs_double_size_under_the_null():
    # seeded (seed 3, 20 000 null sets of 6 means): P(p <= 0.05) within 3 SE (0.0017) of 0.05
    null = grubbs_double_null_sample(6)
    z = np.sort(np.random.default_rng(3).standard_normal((20_000, 6)), axis=1)
    tot = np.var(z, axis=1) * 6
    stat = np.minimum(np.var(z[:, :-2], axis=1) * 4 / tot, np.var(z[:, 2:], axis=1) * 4 / tot)
    p = (np.searchsorted(null, stat, side="right") + 1) / (null.size + 1)
    assert abs(np.mean(p <= 0.05) - 0.05) <= 3 * np.sqrt(0.05 * 0.95 * (1 / 20_000 + 1 / null.size))


def test_grubbs_double_needs_four_series():
    res = grubbs_double([1.0, 2.0, 3.0], ["a", "b", "c"])
    assert not res.applicable and "at least 4" in res.reason


# ---------------------------------------------------------------- results.json

def test_outlier_tests_serialised_with_basis_and_reasons():
    y = [10.0, 10.05, 10.02, 10.01, 9.99, 10.0, 10.0, 10.02, 9.99, 10.01, 10.03, 9.98, 10.0, 10.02]
    g = ["d0"] * 2 + ["d1"] * 2 + ["d2"] * 2 + ["d3"] * 8
    lv = assess_precision_level(10.0, y, g, unit="mg/kg")
    out = {"levels": Serialiser()((lv,), "precision.levels")}
    schema = load_schema()
    jsonschema.validate(out, {"$defs": schema["$defs"], **schema["$defs"]["precision"]},
                        cls=jsonschema.Draft202012Validator)
    entry = out["levels"][0]
    assert entry["cochran"]["series_sizes"] == [2, 2, 2, 8] and entry["cochran"]["p_value_se"] < 0.002
    assert "Monte Carlo" in entry["cochran"]["p_value_basis"]
    assert entry["grubbs_double"]["statistic"] is not None
    assert len(entry["grubbs_within_series"]) == 4
    for t in [entry["cochran"], entry["grubbs"], entry["grubbs_double"], *entry["grubbs_within_series"]]:
        assert (t["statistic"] is None) == (t["p_value"] is None)
        if t["statistic"] is None:
            assert t["reason"]                                        # not shown is not passed, with a reason
