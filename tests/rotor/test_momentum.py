"""Momentum relations: Buhl's high-thrust relation and Prandtl's loss factor."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import optimize

from polarsvc.rotor import (
    buhl_axial_induction,
    buhl_thrust_coefficient,
    momentum_axial_induction,
    prandtl_factor,
)


def test_buhl_thrust_coefficient_published_properties():
    # Buhl 2005, NREL/TP-500-36834: CT(a=1) = 2 for any F; at a = 0.4 equal to momentum
    # theory 4 a F (1 - a) in value and slope (the construction of the relation)
    for F in (0.3, 0.7, 1.0):
        assert buhl_thrust_coefficient(1.0, F) == pytest.approx(2.0, abs=1e-14)
        assert buhl_thrust_coefficient(0.4, F) == pytest.approx(4 * 0.4 * F * 0.6, abs=1e-14)
        slope = (buhl_thrust_coefficient(0.4 + 1e-7, F) - buhl_thrust_coefficient(0.4 - 1e-7, F))
        assert slope / 2e-7 == pytest.approx(4 * F * (1 - 2 * 0.4), abs=1e-6)


@settings(max_examples=200, deadline=None, database=None)
@given(k=st.floats(2.0 / 3.0 + 1e-9, 1e4), F=st.floats(0.02, 1.0))
def test_buhl_induction_solves_the_thrust_balance(k, F):
    # Ning 2014 eq. 15: 4 F k (1 - a)^2 = CT_Buhl(a), root in [0.4, 1) found by brentq
    def balance(a):
        return 4 * F * k * (1 - a) ** 2 - (
            8 / 9 + (4 * F - 40 / 9) * a + (50 / 9 - 4 * F) * a**2
        )

    expected = optimize.brentq(balance, 0.4 - 1e-12, 1.0, xtol=1e-15)
    assert float(buhl_axial_induction(k, F)) == pytest.approx(expected, abs=1e-11)


def test_buhl_induction_at_ning_switch_and_removable_points():
    # g3 = 0 at 2 F k = 25/9 - 2 F (Ning switches form there); 2 F k = 4/9 with F < 1/3 is
    # where the other form is 0/0: both continuous (values by brentq as above)
    for F, k in ((5.0 / 6.0, 2.0 / 3.0), (0.9, (25 / 9 - 1.8) / 1.8), (0.2, 4 / 9 / 0.4)):
        near = momentum_axial_induction(np.array([k * (1 - 1e-9), k, k * (1 + 1e-9)]), F)
        assert np.ptp(near) < 1e-7
    assert float(momentum_axial_induction(2.0 / 3.0, 0.5)) == pytest.approx(0.4)


def test_momentum_induction_below_the_switch():
    # a = k / (1 + k) (Ning 2014 eq. 14): k = 0.25 gives 0.2 (by hand)
    assert float(momentum_axial_induction(0.25, 1.0)) == pytest.approx(0.2, abs=1e-15)
    assert float(momentum_axial_induction(3.0, 1.0, high_thrust=False)) == pytest.approx(0.75)


def test_prandtl_factor_values():
    # F = (2/pi) arccos(exp(-f)) (Glauert 1935, Prandtl's tip loss); f = 1 evaluated with
    # Python's math module: 0.76016782
    assert float(prandtl_factor(1.0)) == pytest.approx(0.76016782, abs=1e-8)
    assert float(prandtl_factor(0.0)) == 0.0
    assert float(prandtl_factor(50.0)) == pytest.approx(1.0, abs=1e-15)
    assert math.isclose(float(prandtl_factor(np.inf)), 1.0)
