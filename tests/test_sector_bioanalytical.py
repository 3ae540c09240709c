"""ICH M10 carry-over, selectivity, stability, dilution integrity and incurred-sample reanalysis
(validator/sector/bioanalytical.py).

Expected values: hand computations (exact arithmetic with ``fractions`` where the formula allows),
statsmodels' t interval of a mean, the Fieller pivot evaluated by hand, and a seeded coverage
simulation with its standard error stated.
"""

import math
import warnings
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.weightstats import DescrStatsW

from validator.sector.bioanalytical import (carry_over, dilution_integrity, incurred_sample_reanalysis,
                                            reanalysis_sample_count, selectivity, stability)


@pytest.fixture(autouse=True)
def _no_warnings():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        yield


# ----------------------------------------------------------------------------- carry-over
def test_carry_over_by_hand():
    res = carry_over([150.0, 90.0], [1000.0, 1040.0, 960.0], blank_internal_standard=[120.0, 300.0],
                     internal_standard_response=[50000.0, 52000.0, 48000.0])
    # hand computation: 150 / 1000 = 15 %, 90 / 1000 = 9 %; IS 120 / 50000 = 0.24 %, 300 / 50000 = 0.6 %
    assert res.analyte_percent == pytest.approx((15.0, 9.0), rel=1e-14)
    assert res.internal_standard_percent == pytest.approx((0.24, 0.6), rel=1e-14)
    assert res.max_analyte_percent == pytest.approx(15.0) and res.passed is True
    assert carry_over([210.0], [1000.0]).passed is False            # hand: 21 % > 20 %
    assert carry_over([200.0], [1000.0]).passed is True             # hand: exactly 20 % meets "<= 20 %"
    assert carry_over([100.0], [1000.0], blank_internal_standard=[3000.0],
                      internal_standard_response=[50000.0]).passed is False   # hand: IS 6 % > 5 %


def test_carry_over_invalid_arguments():
    with pytest.raises(ValueError, match="give both or neither"):
        carry_over([1.0], [10.0], blank_internal_standard=[1.0])
    with pytest.raises(ValueError, match="lloq_response: expected responses with a positive mean of at least 1e-100, got mean 0.0"):
        carry_over([1.0], [0.0])
    with pytest.raises(ValueError, match="analyte_limit_percent must be a finite number > 0, got -20"):
        carry_over([1.0], [10.0], analyte_limit_percent=-20)


# ----------------------------------------------------------------------------- selectivity
def test_selectivity_per_lot_and_fraction():
    blanks = [50.0, 80.0, 120.0, 10.0, 230.0, 0.0, 40.0]
    lots = ["1", "1", "2", "3", "4", "5", "6"]
    res = selectivity(blanks, lots, [1000.0])
    # hand computation: worst blank per lot / 1000 -> 8, 12, 1, 23, 0, 4 %; lot 4 fails
    assert [r.analyte_percent for r in res.lots] == pytest.approx([8.0, 12.0, 1.0, 23.0, 0.0, 4.0])
    assert (res.n_lots, res.n_lots_passed) == (6, 5)
    assert res.fraction_passed == pytest.approx(5 / 6) and res.passed is False      # default: every lot
    assert selectivity(blanks, lots, [1000.0], min_fraction=0.8).passed is True      # hand: 5/6 >= 0.8


def test_selectivity_too_few_lots_and_internal_standard():
    res = selectivity([1.0] * 5, list("abcde"), [1000.0])
    assert res.passed is None and "5 blank-matrix lots, at least 6" in res.reason
    is_res = selectivity([1.0] * 6, list("abcdef"), [1000.0], blank_internal_standard=[0, 0, 0, 0, 0, 3000.0],
                         internal_standard_response=[50000.0])
    # hand computation: lot f IS 3000 / 50000 = 6 % > 5 %
    assert is_res.lots[-1].internal_standard_percent == pytest.approx(6.0) and is_res.passed is False


# ----------------------------------------------------------------------------- stability
STORED = [9.2, 9.6, 9.0, 9.4, 9.5]


def test_stability_against_nominal_matches_statsmodels_t_interval():
    res = stability(STORED, nominal=10.0, condition="freeze-thaw x3")
    low, high = DescrStatsW(np.array(STORED)).tconfint_mean(alpha=0.05)
    mean = sum(Fraction(repr(v)) for v in STORED) / 5
    # hand computation (exact mean): deviation = 100 (mean / nominal - 1) = -6.6 %
    assert res.deviation_percent == pytest.approx(float(100 * (mean / 10 - 1)), rel=1e-13)
    # cross-check: statsmodels DescrStatsW.tconfint_mean, scaled to % deviation
    assert res.interval.low == pytest.approx(100 * (low / 10 - 1), rel=1e-10)
    assert res.interval.high == pytest.approx(100 * (high / 10 - 1), rel=1e-10)
    assert res.passed is True and res.df == 4
    strict = stability(STORED, nominal=10.0, limit_percent=7.0, judged_on="interval")
    assert strict.passed is (strict.interval.low >= -7.0)       # the interval's lower end is about -10.3 %
    assert strict.passed is False


def test_stability_against_fresh_fieller_pivot_by_hand():
    fresh = [10.1, 9.9, 10.3, 10.0, 9.8, 10.2]
    res = stability(STORED, fresh=fresh, level=0.90)
    m1, s1 = np.mean(STORED), np.std(STORED, ddof=1)
    m2, s2 = np.mean(fresh), np.std(fresh, ddof=1)
    v1, v2 = s1 ** 2 / 5, s2 ** 2 / 6
    assert res.deviation_percent == pytest.approx(100 * (m1 / m2 - 1), rel=1e-13)
    t_crit = stats.t.isf(0.05, res.df)
    for end in (res.interval.low, res.interval.high):
        r = 1 + end / 100
        # hand computation: at Fieller's limits (m1 - R m2) / sqrt(v1 + R^2 v2) = +/- t
        assert abs(m1 - r * m2) / math.sqrt(v1 + r * r * v2) == pytest.approx(t_crit, rel=1e-9)
    r = m1 / m2
    # hand computation: Welch-Satterthwaite df of m1 - R m2
    assert res.df == pytest.approx((v1 + r * r * v2) ** 2 / (v1 ** 2 / 4 + r ** 4 * v2 ** 2 / 5), rel=1e-12)


def test_stability_fresh_interval_coverage_by_simulation():
    # seeded simulation: true ratio 0.9, n = 6 and 6, CV 5 %; 2000 data sets
    rng = np.random.default_rng(10)
    n_sim, hits = 2000, 0
    for _ in range(n_sim):
        res = stability(rng.normal(9.0, 0.45, 6), fresh=rng.normal(10.0, 0.5, 6))
        hits += res.interval.contains(-10.0)
    se = math.sqrt(0.95 * 0.05 / n_sim)          # about 0.0049
    assert abs(hits / n_sim - 0.95) < 3 * se


def test_stability_degenerate_and_invalid():
    assert stability([9.0], nominal=10.0).passed is None
    few = stability([9.0, 9.2], nominal=10.0)
    assert few.passed is None and "at least 3" in few.reason and few.deviation_percent is not None
    with pytest.raises(ValueError, match="exactly one of nominal and fresh"):
        stability(STORED)
    with pytest.raises(ValueError, match="judged_on must be one of"):
        stability(STORED, nominal=10.0, judged_on="mean")
    unbounded = stability(STORED, fresh=[0.1, 5.0, 0.2], level=0.99)
    assert unbounded.interval is None and "unbounded" in unbounded.reason


# ----------------------------------------------------------------------------- dilution integrity
def test_dilution_integrity_by_hand():
    measured = [49.0, 51.5, 50.2, 48.8, 50.9]
    res = dilution_integrity(measured, 10, 500.0)
    q = [Fraction(repr(v)) * 10 for v in measured]
    mean = sum(q) / 5
    sd = math.sqrt(sum((v - mean) ** 2 for v in q) / 4)
    # hand computation (exact): back-calculated = measured x 10; accuracy = 100 mean / 500
    assert res.accuracy_percent == pytest.approx(float(mean / 5), rel=1e-14)
    assert res.cv_percent == pytest.approx(100 * sd / float(mean), rel=1e-12)
    assert res.passed is True
    assert dilution_integrity(measured[:4], 10, 500.0).passed is None
    assert dilution_integrity(measured, 10, 400.0).passed is False          # hand: accuracy 125 %
    with pytest.raises(ValueError, match="dilution_factor must be >= 1, got 0.5"):
        dilution_integrity(measured, 0.5, 500.0)


# ----------------------------------------------------------------------------- incurred-sample reanalysis
def test_isr_percent_difference_by_hand():
    res = incurred_sample_reanalysis([100.0, 50.0, 10.0], [110.0, 70.0, 10.0])
    # hand computation: 10/105 = 9.52 %, 20/60 = 33.3 %, 0 %
    assert [s.difference_percent for s in res.samples] == pytest.approx([1000 / 105, 2000 / 60, 0.0], rel=1e-14)
    assert res.n_within == 2 and res.passed is True        # 2/3 >= 2/3 exactly
    assert incurred_sample_reanalysis([100.0, 50.0, 10.0], [110.0, 70.0, 10.0], min_fraction=0.67).passed is False


def test_isr_two_thirds_boundary_is_exact():
    original = [100.0] * 30
    repeat = [105.0] * 20 + [150.0] * 10                   # hand: 20 of 30 within +/-20 %
    assert incurred_sample_reanalysis(original, repeat).passed is True
    repeat = [105.0] * 19 + [150.0] * 11
    assert incurred_sample_reanalysis(original, repeat).passed is False
    lba = incurred_sample_reanalysis([100.0] * 3, [128.0, 128.0, 140.0], limit_percent=30.0)
    assert lba.n_within == 2                               # hand: 28/114 = 24.6 %, 40/120 = 33.3 %


def test_isr_pair_of_zeros_is_not_judged_and_left_out_of_the_fraction():
    res = incurred_sample_reanalysis([0.0, 100.0, 100.0], [0.0, 101.0, 99.0], sample=["Z", "A", "B"])
    zero = res.samples[0]
    assert zero.difference_percent is None and zero.within is None and "both 0" in zero.reason
    # hand computation: 2 judged pairs (1/100.5 and -1/99.5, both within), fraction 2/2 = 1
    assert (res.n, res.n_judged, res.n_within, res.n_undefined) == (3, 2, 2, 1)
    assert res.fraction_within == 1.0 and res.passed is True
    assert any("left out of the fraction: Z" in n for n in res.notes)
    # different results with a mean not above zero cannot be shown to agree: not within (hand: mean 0)
    apart = incurred_sample_reanalysis([-1.0, 100.0, 100.0], [1.0, 101.0, 99.0])
    assert apart.samples[0].within is False and apart.n_judged == 3 and apart.n_within == 2
    only_zeros = incurred_sample_reanalysis([0.0, 0.0], [0.0, 0.0])
    assert only_zeros.passed is None and only_zeros.fraction_within is None and "can be judged" in only_zeros.reason


def test_isr_few_samples_are_stated_beside_the_verdict():
    from validator.characteristics.reanalysis.analysis import reanalysis_criteria
    res = incurred_sample_reanalysis([100.0, 50.0], [105.0, 52.0])
    # hand computation: 5/102.5 = 4.9 %, 2/51 = 3.9 %: 2 of 2 within, passed; one sample moves the fraction 50 points
    assert res.passed is True and res.n_judged == 2
    assert any("rests on 2 reanalysed sample(s), fewer than 20" in n and "50 percentage points" in n
               for n in res.notes)
    (crit,) = reanalysis_criteria(res)
    assert crit.passed is True and crit.note.startswith("note: the fraction rests on 2")
    # 20 judged samples: no such note (threshold: this tool's choice, no published source)
    assert incurred_sample_reanalysis([100.0] * 20, [101.0] * 20).notes == ()
    with pytest.raises(ValueError, match="must pair up"):
        incurred_sample_reanalysis([1.0], [1.0, 2.0])
    with pytest.raises(ValueError, match=r"min_fraction must lie in \(0.0, 1.0\], got 1.5"):
        incurred_sample_reanalysis([1.0], [1.0], min_fraction=1.5)


@pytest.mark.parametrize("n, expected", [(0, 0), (50, 5), (1000, 100), (1001, 101), (1500, 125), (2000, 150)])
def test_reanalysis_sample_count(n, expected):
    # hand computation: 10 % of the first 1000 plus 5 % beyond, rounded up
    assert reanalysis_sample_count(n) == expected


def test_stability_checks_its_reference_even_with_one_result():
    with pytest.raises(ValueError, match="nominal must be a finite number > 0, got -1"):
        stability([9.0], nominal=-1)
    with pytest.raises(ValueError, match="fresh: value inf at position 0"):
        stability([9.0], fresh=[float("inf")])
    unbounded = stability(STORED, fresh=[0.1, 5.0, 0.2], level=0.99, judged_on="interval")
    assert unbounded.passed is None and "unbounded" in unbounded.reason
