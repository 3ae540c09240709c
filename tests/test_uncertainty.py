"""Top-down measurement uncertainty (validator/uncertainty.py).

The worked case follows the structure of the Nordtest TR 537 (ed. 4) examples
(u(Rw) from a control sample, u(bias) from several reference materials, U = 2 u_c)
with invented numbers; every expected value is a hand computation with exact fractions.
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from validator.maths.uncertainty import (UncertaintyComponent, bias_uncertainty, combined_uncertainty,
                                   reproducibility_component)


def test_nordtest_structure_hand_computation():
    # u(Rw): intermediate precision SD 0.12 at a mean of 4.0 -> 3 % (hand computation)
    u_rw = reproducibility_component(0.12, mean=4.0)
    assert u_rw.relative and u_rw.standard_uncertainty == pytest.approx(3.0, rel=1e-15)
    # u(bias): biases of three reference materials +2 %, -1 %, +2 %; u(Cref) 1.0, 1.5, 0.5 %
    ub = bias_uncertainty([2.0, -1.0, 2.0], [1.0, 1.5, 0.5])
    rms2 = Fraction(4 + 1 + 4, 3)            # RMS_bias^2 = 3, hand computation
    uref = Fraction(1 + Fraction(3, 2) + Fraction(1, 2), 3)   # mean u(Cref) = 1
    assert ub.rms_bias ** 2 == pytest.approx(float(rms2), rel=1e-15)
    assert ub.reference_uncertainty == pytest.approx(float(uref), rel=1e-15)
    assert ub.component.standard_uncertainty == pytest.approx(2.0, rel=1e-15)   # sqrt(3 + 1) = 2
    budget = combined_uncertainty([u_rw, ub.component], coverage_factor=2, value=4.0)
    # u_c = sqrt(3^2 + 2^2) = sqrt(13) %; U = 2 sqrt(13) %; absolute at 4.0: U = 8 sqrt(13) / 100
    assert budget.combined ** 2 == pytest.approx(13.0, rel=1e-14)
    assert budget.expanded ** 2 == pytest.approx(52.0, rel=1e-14)
    assert budget.expanded_absolute ** 2 == pytest.approx(float(Fraction(64 * 13, 10000)), rel=1e-14)
    assert budget.expanded_relative == budget.expanded
    assert [c.name for c in budget.components] == ["u(Rw)", "u(bias)"]
    assert all(c.source for c in budget.components)


def test_absolute_budget_and_recovery_bias():
    # recovery 97 % and 102 % -> biases -3 and +2 %; u of the spike's reference value 0.8 % as given
    ub = bias_uncertainty([97.0 - 100, 102.0 - 100], 0.8)
    assert ub.component.standard_uncertainty ** 2 == pytest.approx((9 + 4) / 2 + 0.64, rel=1e-14)  # hand
    budget = combined_uncertainty([UncertaintyComponent("u(Rw)", 0.3, False, "control chart"),
                                   UncertaintyComponent("u(bias)", 0.4, False, "CRM")], value=10.0)
    assert budget.combined == pytest.approx(0.5, rel=1e-15)                 # 3-4-5, hand computation
    assert budget.expanded == pytest.approx(1.0, rel=1e-15)
    assert budget.expanded_relative == pytest.approx(10.0, rel=1e-15)


def test_invalid_budgets():
    with pytest.raises(ValueError, match="all relative or all absolute"):
        combined_uncertainty([UncertaintyComponent("a", 1, True, "x"), UncertaintyComponent("b", 1, False, "y")])
    with pytest.raises(ValueError, match="coverage_factor must be a finite number > 0, got 0"):
        combined_uncertainty([UncertaintyComponent("a", 1, True, "x")], coverage_factor=0)
    with pytest.raises(ValueError, match="sd must be a finite number >= 0, got -1"):
        reproducibility_component(-1)
    with pytest.raises(ValueError, match="one per bias"):
        bias_uncertainty([1.0, 2.0, 3.0], [1.0, 2.0])
