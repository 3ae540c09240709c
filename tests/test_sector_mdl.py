"""Method detection limit, 40 CFR Part 136 Appendix B Rev. 2 (validator/sector/mdl.py).

Expected values: hand computation with scipy's t quantile and exact mean/variance
(``fractions``); the rule's printed t values for the spot checks.
"""

import math
import warnings
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from validator.sector.mdl import method_detection_limit

NAN = float("nan")
SPIKED = [1.52, 1.38, 1.61, 1.45, 1.57, 1.41, 1.49]


@pytest.fixture(autouse=True)
def _no_warnings():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        yield


def _exact_mean_sd(values):
    q = [Fraction(repr(float(v))) for v in values]
    mean = sum(q) / len(q)
    return float(mean), math.sqrt(sum((v - mean) ** 2 for v in q) / (len(q) - 1))


@pytest.mark.parametrize("n, printed", [(7, 3.143), (8, 2.998), (10, 2.821), (16, 2.602), (31, 2.457), (61, 2.390)])
def test_t_quantile_matches_the_rules_table(n, printed):
    # 40 CFR 136 App. B table of one-sided 99 % t values, as reproduced in Wis. Admin. Code NR 252.0365
    spiked = np.linspace(1.0, 2.0, n)
    res = method_detection_limit(spiked, [NAN] * 7)
    assert round(res.spiked_t, 3) == printed


def test_mdl_s_by_hand_and_blanks_without_numerical_results():
    res = method_detection_limit(SPIKED, [NAN] * 7)
    _, sd = _exact_mean_sd(SPIKED)
    # hand computation: MDL_s = t(6, 0.99) S_s, scipy's t quantile
    assert res.spiked == pytest.approx(float(stats.t.ppf(0.99, 6)) * sd, rel=1e-14)
    assert res.blank is None and res.blank_rule == "none numerical"      # App. B: MDL_b does not apply
    assert res.value == res.spiked and res.reason == "" and res.notes == ()


def test_some_blanks_numerical_gives_the_highest_blank():
    blanks = [NAN, 0.21, NAN, -0.05, 0.93, NAN, 0.40]
    res = method_detection_limit(SPIKED, blanks)
    # App. B Rev. 2: some but not all numerical, n <= 100 -> the highest method blank result
    assert res.blank_rule == "highest blank" and res.blank == 0.93 and res.n_blanks_numerical == 4
    assert res.value == max(res.spiked, 0.93)
    assert res.value == 0.93                      # hand: MDL_s = 3.143 x 0.0835 = 0.262 < 0.93


def test_all_blanks_numerical_mean_plus_t_s():
    blanks = [0.11, 0.05, 0.14, 0.08, 0.02, 0.09, 0.12, 0.07]
    res = method_detection_limit(SPIKED, blanks)
    mean, sd = _exact_mean_sd(blanks)
    # hand computation: MDL_b = X_b + t(7, 0.99) S_b with scipy's t quantile
    assert res.blank_rule == "mean + t s"
    assert res.blank == pytest.approx(mean + float(stats.t.ppf(0.99, 7)) * sd, rel=1e-14)
    assert res.value == pytest.approx(max(res.spiked, res.blank), rel=0)


def test_negative_blank_mean_is_taken_as_zero():
    blanks = [-0.30, -0.10, 0.05, -0.20, -0.15, 0.02, -0.08]
    res = method_detection_limit(SPIKED, blanks)
    mean, sd = _exact_mean_sd(blanks)
    assert mean < 0
    # App. B Rev. 2: "if the mean is less than zero, use zero as the mean"; hand computation
    assert res.blank == pytest.approx(float(stats.t.ppf(0.99, 6)) * sd, rel=1e-14)
    assert res.blank_mean == pytest.approx(mean, rel=1e-14)


def test_more_than_100_blanks_uses_rank_of_99th_percentile():
    # from memory: the rule illustrates with 164 blanks; 164 x 0.99 = 162.36 -> rank 162
    rng = np.random.default_rng(5)
    numerical = rng.normal(0.5, 0.3, 150)
    blanks = np.concatenate([numerical, [NAN] * 14])
    rng.shuffle(blanks)
    res = method_detection_limit(SPIKED, blanks)
    ordered = np.sort(numerical)                  # the 14 blanks without a result rank lowest
    assert res.blank_rule == "ranked blank" and res.blank_rank == 162
    assert res.blank == ordered[162 - 14 - 1]     # hand computation: the 162nd of 164 in ascending order


def test_exactly_100_blanks_still_uses_the_highest():
    blanks = np.concatenate([np.linspace(0.0, 0.99, 99), [NAN]])
    res = method_detection_limit(SPIKED, blanks)
    assert res.blank_rule == "highest blank" and res.blank == pytest.approx(0.99)


def test_fewer_than_seven_spiked_samples_give_no_mdl():
    res = method_detection_limit(SPIKED[:6], [NAN] * 7)
    assert res.value is None and "6 spiked samples, fewer than the 7" in res.reason


def test_notes_for_few_blanks_and_non_positive_spikes():
    res = method_detection_limit([0.0] + SPIKED[1:], [0.1, 0.2])
    assert any("2 method blanks" in n for n in res.notes)
    # from memory: 40 CFR 136 App. B Rev. 2, II(2): a spiked result not above zero means respiking: no MDL
    assert res.value is None and "1 of 7 spiked results are not above zero" in res.reason


def test_constant_spiked_results_are_degenerate_not_a_crash():
    res = method_detection_limit([1.0] * 7, [NAN] * 7)
    assert res.value is None and "no spread" in res.reason


@pytest.mark.parametrize("kwargs, match", [
    ({"confidence": 1.0}, r"confidence must lie in \(0.5, 1.0\), got 1.0"),
    ({"confidence": "0.99"}, "confidence must be a finite number, got '0.99'"),
])
def test_invalid_parameters(kwargs, match):
    with pytest.raises(ValueError, match=match):
        method_detection_limit(SPIKED, [NAN] * 7, **kwargs)


def test_nan_spiked_result_is_refused():
    with pytest.raises(ValueError, match="spiked_results: value nan at position 0"):
        method_detection_limit([NAN] + SPIKED, [NAN] * 7)


def test_batch_count_note():
    res = method_detection_limit(SPIKED, [NAN] * 7, spiked_batches=list("aabbaab"),
                                 blank_batches=list("abcabca"))
    assert res.notes == ("spiked samples from 2 batch(es), fewer than the 3 Appendix B asks for",)
    with pytest.raises(ValueError, match="spiked_batches: expected 7 labels"):
        method_detection_limit(SPIKED, [NAN] * 7, spiked_batches=["a"])


def test_exactly_100_blanks_states_the_reading_used_and_the_other_value():
    # 100 blanks, 2 without a numerical result (ranked lowest), 98 numerical 0.01 .. 0.98
    blanks = np.concatenate([[NAN, NAN], np.arange(1, 99) / 100])
    res = method_detection_limit(SPIKED, blanks)
    # hand computation: "more than 100" reading -> the highest blank 0.98; the "100 or more" reading
    # -> rank round(0.99 x 100) = 99 of 100 ascending = the 97th numerical blank, 0.97
    assert res.blank_rule == "highest blank" and res.blank == pytest.approx(0.98)
    assert "more than 100 method blanks" in res.blank_rule_reading
    assert "exactly 100 method blanks" in res.blank_rule_reading and "rank 99, 0.97)" in res.blank_rule_reading
    # 99 blanks: both readings agree, only the reading is stated (hand: highest 0.98)
    fewer = method_detection_limit(SPIKED, blanks[1:])
    assert fewer.blank == pytest.approx(0.98) and "exactly" not in fewer.blank_rule_reading
    # all blanks numerical: the threshold does not apply, nothing to state
    assert method_detection_limit(SPIKED, np.arange(1, 11) / 100).blank_rule_reading == ""
