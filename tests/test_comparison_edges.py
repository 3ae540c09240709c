"""Method comparison on degenerate data: values that do not exist are None with a reason, never a pass.

Also the published Passing-Bablok values and the exact-arithmetic cusum.
"""

import itertools
import json
import math
from fractions import Fraction

import jsonschema
import numpy as np
import pytest
from bs4 import BeautifulSoup
from scipy import stats

from conftest import reference_file
from validator.cli import main
from validator.characteristics.comparison import assess_comparison
from validator.maths.method_comparison import bland_altman, deming, passing_bablok, passing_bablok_min_n
from validator.results import load_schema


def _csv(rows):
    return "sample,reference,test\n" + "".join(f"S{i},{x!r},{y!r}\n" for i, (x, y) in enumerate(rows))


@pytest.fixture
def run_comparison(make_study, outside):
    from conftest import CALIBRATION

    def run(rows, extra=""):
        study = make_study('[calibration]\ndata = "calibration.csv"\n[comparison]\ndata = "comparison.csv"\n' + extra,
                           {"calibration.csv": CALIBRATION, "comparison.csv": _csv(rows)})
        out = outside / f"out{len(list(outside.iterdir()))}"
        code = main(["run", str(study), "--out", str(out), "--format", "html,json"])
        results = json.loads((out / "results.json").read_text())
        jsonschema.validate(results, load_schema())
        return code, results["analytes"][0], (out / "dossier.html").read_text()

    return run


# --- Passing-Bablok: published values -------------------------------------------------------

def _two_columns(name):
    rows = np.genfromtxt(reference_file("method-comparison", name), delimiter=",", names=True)
    return rows[rows.dtype.names[0]], rows[rows.dtype.names[1]]


def test_sen_1968_published_passing_bablok():
    # published: slope 4, intercept 6, 93 % CI of the slope (26/7, 35/8) (SOURCES.md, section 3)
    x = [1, 2, 3, 4, 10, 12, 18]
    y = [9, 15, 19, 20, 45, 55, 78]
    res = passing_bablok(x, y, alpha=0.07)
    assert res.slope == 4 and res.intercept == 6                                    # published, exact
    assert (res.slope_ci.low, res.slope_ci.high) == (float(Fraction(26, 7)), float(Fraction(35, 8)))  # published
    assert res.slope_ci.level == pytest.approx(0.93)


def test_small_noisy_published_passing_bablok():
    # published PB (intercept, slope) = (1/8, 1.05) (SOURCES.md, section 3)
    res = passing_bablok([1, 2, 3, 4, 5, 6], [2, 1.2, 4.1, 3.5, 6.3, 3])
    assert res.slope == pytest.approx(1.05, rel=1e-12)          # published
    assert res.intercept == pytest.approx(0.125, rel=1e-12)     # published


def test_reference_files_match_the_published_values():
    # the transcribed CSVs hold the same data as above (SOURCES.md, section 3)
    x, y = _two_columns("sen_1968_pb_small.csv")
    assert passing_bablok(x, y, alpha=0.07).slope == 4                              # published
    x, y = _two_columns("pb_noise_small.csv")
    assert passing_bablok(x, y).slope == pytest.approx(1.05, rel=1e-12)             # published


# --- Passing-Bablok: the interval must exist --------------------------------------------------

def test_interval_outside_the_ranks_is_not_clamped():
    # audit reproducer: n = 4 gave "CI 0.6 to 1.4" (the extreme slopes) and a pass.
    # hand computation: N = 6, C = 1.96 sqrt(4*3*13/18) = 5.770, M1 = round(0.115) = 0 < 1
    x, y = [1, 2, 3, 4], [1.1, 1.9, 3.3, 3.9]
    res = passing_bablok(x, y)
    assert res.slope_ci is None and res.intercept_ci is None
    assert "does not exist at level 0.95" in res.ci_reason and "n = 5" in res.ci_reason
    assert res.slope == pytest.approx(float(Fraction(29, 30)), rel=1e-12)  # hand computation: mean of 14/15 and 1
    c = assess_comparison(["a", "b", "c", "d"], x, y)
    assert c.passed is None and "does not exist" in c.reason and c.basis == "Passing-Bablok: slope CI contains 1 and intercept CI contains 0"


def test_minimum_n_from_the_formula():
    # hand computation, see passing_bablok_min_n docstring: (10 - 8.0015)/2 rounds to 1 at n = 5
    assert passing_bablok_min_n(0.05) == 5
    assert passing_bablok_min_n(0.01) == 6
    rng = np.random.default_rng(3)
    for alpha in (0.05, 0.01):
        m = passing_bablok_min_n(alpha)
        x = np.arange(1.0, m + 1)
        y = x + rng.normal(0, 0.01, m)          # increasing: no ties, no slope below -1
        assert passing_bablok(x, y, alpha).slope_ci is not None
        assert passing_bablok(x[:-1], y[:-1], alpha).slope_ci is None


def test_ci_existence_agrees_with_the_rank_rule():
    # hand rule from Passing & Bablok (1983): exists iff M1 + K >= 1 and M2 + K <= N
    rng = np.random.default_rng(11)
    for _ in range(200):
        n = int(rng.integers(3, 9))
        x = rng.integers(1, 6, n).astype(float)
        y = x + rng.integers(-2, 3, n)
        if np.unique(x).size < 3:
            continue
        res = passing_bablok(x, y)
        if res.slope is None:
            continue
        C = stats.norm.ppf(0.975) * math.sqrt(n * (n - 1) * (2 * n + 5) / 18)
        N, K = res.n_slopes, res.offset_k
        M1 = round((N - C) / 2)
        exists = M1 + K >= 1 and N - M1 + 1 + K <= N
        assert (res.slope_ci is not None) == exists or (exists and "unbounded" in res.ci_reason)


# --- degenerate comparisons --------------------------------------------------------------------

@pytest.mark.parametrize("rows, why", [
    ([(5.0, 5.1), (5.0, 4.9), (5.0, 5.3), (5.0, 5.0), (5.0, 4.8), (5.0, 5.2)], "no spread"),
    ([(1.0, 1.1), (1.0, 0.9), (2.0, 2.1), (2.0, 1.9), (1.0, 1.0), (2.0, 2.2)], "only 2 distinct"),
    ([(3.0, 3.0)] * 3, "no spread"),
])
def test_no_spread_is_not_applicable_never_a_pass(rows, why):
    x, y = zip(*rows)
    pb = passing_bablok(x, y)
    assert pb.slope is None and pb.slope_ci is None and why in pb.reason
    dm = deming(x, y)
    assert dm.slope is None and dm.slope_ci is None and why in dm.reason
    c = assess_comparison([f"S{i}" for i in range(len(x))], x, y)
    assert c.passed is None and why in c.reason


def test_every_pair_identical_has_no_information(run_comparison):
    # audit reproducer: three identical pairs crashed with exit 3
    code, a, html = run_comparison([(3.0, 3.0)] * 3)
    assert code in (0, 1)
    mc = a["comparison"]
    assert mc["verdict"] == "not applicable" and "no spread" in mc["reason"]
    assert mc["passing_bablok"]["slope"] is None and mc["deming"]["slope"] is None
    assert mc["bland_altman"]["bias"] == 0 and mc["bland_altman"]["sd"] == 0   # hand computation: d = 0, 0, 0
    crits = [c for c in a["criteria"] if c["id"].startswith("method-comparison")]
    assert len(crits) == 2 and all(c["pass"] is None and "not applicable" in c["note"] for c in crits)
    assert "not applicable: the reference values have no spread" in html


def test_constant_reference_end_to_end(run_comparison):
    # audit reproducer: every slope and interval null made "CI contains 1" vacuously true
    code, a, html = run_comparison([(5.0, 5.1), (5.0, 4.9), (5.0, 5.3), (5.0, 5.0), (5.0, 4.8), (5.0, 5.2)])
    mc = a["comparison"]
    assert mc["verdict"] == "not applicable"
    assert mc["passing_bablok"]["slope_ci"] is None and mc["passing_bablok"]["reason"]
    soup = BeautifulSoup(html, "html.parser")
    assert "not applicable" in soup.get_text()


def test_n4_interval_end_to_end(run_comparison):
    code, a, html = run_comparison([(1, 1.1), (2, 1.9), (3, 3.3), (4, 3.9)])
    mc = a["comparison"]
    assert mc["verdict"] == "not applicable"
    assert mc["passing_bablok"]["slope_ci"] is None and mc["passing_bablok"]["min_n_for_ci"] == 5
    assert "does not exist at level 0.95" in mc["reason"]
    assert "does not exist" in html


def test_percentage_difference_of_a_zero_pair(run_comparison):
    # audit reproducer: a (0, 0) pair with percentage differences: JSON passed, HTML crashed
    rows = [(0.0, 0.0), (1.0, 1.1), (2.0, 1.9), (3.0, 3.2), (4.0, 3.9), (5.0, 5.2), (6.0, 5.8)]
    x, y = map(np.array, zip(*rows))
    ba = bland_altman(x, y, percentage=True)
    assert ba.excluded == (0,) and ba.n == 6 and "left out" in ba.note
    d = 100 * (y[1:] - x[1:]) / ((x[1:] + y[1:]) / 2)          # hand computation on the other 6 pairs
    assert ba.bias == pytest.approx(d.mean(), rel=1e-12)
    assert ba.sd == pytest.approx(d.std(ddof=1), rel=1e-12)
    code, a, html = run_comparison(rows, "percentage_differences = true\n")
    b = a["comparison"]["bland_altman"]
    assert b["excluded_samples"] == ["S0"] and b["n"] == 6
    assert "S0" in html and "percentage differences" in html


def test_one_percentage_difference_is_not_enough():
    ba = bland_altman([0.0, 0.0, 2.0], [0.0, 0.0, 2.5], percentage=True)
    assert ba.bias is None and ba.limits is None and "at least 2" in ba.reason


def test_deming_uncorrelated_is_not_applicable():
    # Sxy = 0 with Syy >= lambda Sxx: the slope formula divides by zero (hand computation)
    x = [1.0, 2.0, 3.0, 4.0, 5.0]
    y = [3.0, 1.0, 5.0, 1.0, 3.0]   # symmetric about x = 3: Sxy = 0, Syy = 16 > Sxx = 10
    dm = deming(x, y, 1.0)
    assert dm.slope is None and "Sxy = 0" in dm.reason


def test_comparison_level_labels_come_from_alpha(run_comparison):
    rows = [(float(i), i * 1.02 + 0.1 * (-1) ** i) for i in range(1, 13)]
    code, a, html = run_comparison(rows, "[criteria]\nalpha = 0.1\n")
    assert a["comparison"]["level"] == pytest.approx(0.9)
    assert "90 % CI" in html and "95 % CI" not in html


# --- cusum linearity test: exact signs and exact p-value -------------------------------------

def _exact_pb(x, y):
    """Passing-Bablok b and a written out in Fractions (direct from the 1983 definitions)."""
    xf, yf = [Fraction(v) for v in x], [Fraction(v) for v in y]
    slopes = []
    for i, j in itertools.combinations(range(len(xf)), 2):
        dx, dy = xf[j] - xf[i], yf[j] - yf[i]
        if dx == 0:
            continue                      # these test data have no tied reference values
        s = dy / dx
        if s != -1:
            slopes.append(s)
    slopes.sort()
    N, K = len(slopes), sum(s < -1 for s in slopes)
    b = slopes[(N + 1) // 2 + K - 1] if N % 2 else (slopes[N // 2 + K - 1] + slopes[N // 2 + K]) / 2
    r = sorted(yi - b * xi for xi, yi in zip(xf, yf))
    n = len(r)
    a = r[n // 2] if n % 2 else (r[n // 2 - 1] + r[n // 2]) / 2
    return xf, yf, a, b


def _exact_cusum(x, y):
    """H from the exact residual signs, written out in Fractions (Passing & Bablok 1983)."""
    xf, yf, a, b = _exact_pb(x, y)
    signs = [(r > 0) - (r < 0) for r in (yi - a - b * xi for xi, yi in zip(xf, yf))]
    order = sorted(range(len(xf)), key=lambda m: yf[m] + xf[m] / b)
    l, L = signs.count(1), signs.count(-1)
    cusum = top = 0.0
    for m in order:
        cusum += math.sqrt(L / l) if signs[m] > 0 else -math.sqrt(l / L) if signs[m] < 0 else 0.0
        top = max(top, abs(cusum))
    return top / math.sqrt(L + 1), signs


def test_cusum_audit_reproducer_exact():
    # audit reproducer: float residuals of +-1e-15 scored on-line points (tool gave H = 0.9428,
    # p = 0.336); exact H = 0.5774, p = 0.893
    x = [40.953, 11.762, 36.696, 15.11, 35.735, 44.187]
    y = [43.549, 12.581, 38.143, 17.681, 35.857, 46.255]
    res = passing_bablok(x, y)
    H, signs = _exact_cusum(x, y)             # exact arithmetic with fractions, see helper
    assert signs.count(0) == 2                 # the two points that define the line
    assert res.cusum_statistic == pytest.approx(H, rel=1e-12)
    assert res.cusum_statistic == pytest.approx(1 / math.sqrt(3), rel=1e-12)   # audit: exact H = 0.5774
    assert res.cusum_pvalue == pytest.approx(0.893, abs=5e-4)                   # audit: exact p = 0.893
    assert res.cusum_pvalue == pytest.approx(stats.kstwobign.sf(H), rel=1e-12)  # cross-check: scipy kstwobign
    assert res.cusum_pvalue_method == "approximate (Kolmogorov limit)"


def test_cusum_matches_exact_arithmetic_on_random_data():
    # exact arithmetic (fractions) on 3-decimal data, as in the audit's 600 random datasets
    rng = np.random.default_rng(2026)
    checked = on_line = float_noise = 0
    for _ in range(150):
        n = int(rng.integers(6, 16))
        x = np.round(rng.uniform(1, 50, n), 3)
        y = np.round(x * rng.uniform(0.9, 1.1) + rng.normal(0, 1, n), 3)
        if np.unique(x).size < n:
            continue
        res = passing_bablok(x, y)
        H, signs = _exact_cusum(x, y)
        on_line += signs.count(0) > 0
        if res.slope is not None:    # float residuals of the on-line points: the audit's +-1e-15
            r = y - (res.intercept + res.slope * x)
            float_noise += any(sg == 0 and v != 0 for sg, v in zip(signs, r))
        if res.cusum_statistic is None:
            assert signs.count(1) == 0 or signs.count(-1) == 0
            continue
        assert res.cusum_statistic == pytest.approx(H, rel=1e-12)
        checked += 1
    assert checked >= 100 and on_line >= 50      # many PB lines pass through data points
    assert float_noise >= 10                     # the data do exercise the rounding case


def test_cusum_not_applicable_when_all_points_on_one_side():
    x = np.arange(1.0, 8.0)
    res = passing_bablok(x, 2 * x + 1)          # every point on the line
    assert res.cusum_statistic is None and "on the line" in res.cusum_reason
    assert (res.slope, res.intercept) == (2.0, 1.0)


def _exact_pb_full(x, y, alpha=0.05):
    """Passing & Bablok (1983) entirely in Fractions, ties and slopes of -1 included."""
    xf, yf = [Fraction(v) for v in x], [Fraction(v) for v in y]
    finite, inf = [], []
    for i, j in itertools.combinations(range(len(xf)), 2):
        dx, dy = xf[j] - xf[i], yf[j] - yf[i]
        if dx == 0 and dy == 0:
            continue
        if dx == 0:
            inf.append(1 if dy > 0 else -1)
        elif dy / dx != -1:
            finite.append(dy / dx)
    K = sum(s < -1 for s in finite) + inf.count(-1)
    ranked = [(-1, None)] * inf.count(-1) + [(0, s) for s in sorted(finite)] + [(1, None)] * inf.count(1)
    N = len(ranked)

    def order(k):
        kind, value = ranked[k - 1]
        return value if kind == 0 else kind * math.inf

    if ((N + 1) // 2 if N % 2 else N // 2 + 1) + K > N:
        return None, None, K, N                        # the shifted median does not exist
    b = order((N + 1) // 2 + K) if N % 2 else (order(N // 2 + K) + order(N // 2 + 1 + K)) / 2
    C = stats.norm.ppf(1 - alpha / 2) * math.sqrt(len(x) * (len(x) - 1) * (2 * len(x) + 5) / 18)
    M1 = round((N - C) / 2)
    M2 = N - M1 + 1
    ci = (order(M1 + K), order(M2 + K)) if M1 + K >= 1 and M2 + K <= N else None
    return b, ci, K, N


def test_order_statistics_and_minus_one_are_exact():
    # exact arithmetic with fractions on 1-decimal data: many ties, slopes of exactly -1
    rng = np.random.default_rng(7)
    checked = minus_one = 0
    for _ in range(300):
        n = int(rng.integers(5, 12))
        x = np.round(rng.uniform(0, 3, n), 1)
        y = np.round(x * rng.choice([1.0, -1.0, 0.3]) + rng.uniform(-0.5, 0.5, n), 1)
        if np.unique(x).size < 3:
            continue
        res = passing_bablok(x, y)
        b, ci, K, N = _exact_pb_full(list(x), list(y))
        assert (res.n_slopes, res.offset_k) == (N, K)
        minus_one += any(float(Fraction(y[j]) - Fraction(y[i])) == -float(Fraction(x[j]) - Fraction(x[i]))
                         for i, j in itertools.combinations(range(n), 2) if x[i] != x[j])
        if res.slope is None:
            assert not isinstance(b, Fraction)
            continue
        assert isinstance(b, Fraction) and res.slope == float(b)
        if ci is None:
            assert res.slope_ci is None and "does not exist" in res.ci_reason
        elif res.slope_ci is not None:
            assert (res.slope_ci.low, res.slope_ci.high) == (float(ci[0]), float(ci[1]))
        else:
            assert "unbounded" in res.ci_reason and math.inf in map(abs, ci)
        checked += 1
    assert checked >= 150 and minus_one >= 20


def test_large_tied_comparison_is_fast_enough():
    # 1000 identical-method pairs: 499500 slopes, all exactly 1 (hand computation)
    import time
    x = np.arange(1.0, 1001.0)
    start = time.perf_counter()
    res = passing_bablok(x, x.copy())
    assert (res.slope, res.intercept) == (1.0, 0.0)
    assert (res.slope_ci.low, res.slope_ci.high) == (1.0, 1.0)
    assert time.perf_counter() - start < 30          # generous: 2 shared cores; about 1 s alone
