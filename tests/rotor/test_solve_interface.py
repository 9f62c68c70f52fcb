"""The public interface of the solver: shapes, units, switches and typed errors."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import optimize

from polarsvc.aero.errors import ParameterError
from polarsvc.rotor import RotorGeometry, cp_surface, solve
from tests.rotor.demo import demo_geometry, demo_tables


def test_shapes_follow_the_operating_points():
    alpha, cl, cd = demo_tables()
    g = demo_geometry()
    one = solve(g, alpha, cl, cd, 8.0)
    assert one.cp.shape == () and one.ct.shape == ()
    assert one.axial_induction.shape == (1, g.size)
    many = solve(g, alpha, cl, cd, np.array([4.0, 8.0, 12.0]), np.array([0.0, 1.0, 2.0]))
    assert many.cp.shape == (3,)
    assert many.alpha_deg.shape == (3, g.size)
    np.testing.assert_allclose(many.cq, many.cp / many.tip_speed_ratio, rtol=1e-14)
    # the angle of attack is phi - twist - pitch (the convention of RotorGeometry)
    np.testing.assert_allclose(
        many.alpha_deg, many.inflow_angle_deg - g.twist_deg - many.pitch_deg[:, None],
        atol=1e-12,
    )


def test_forces_in_newton_per_metre_with_a_wind_speed():
    alpha, cl, cd = demo_tables()
    g = demo_geometry()
    per_q = solve(g, alpha, cl, cd, [6.0, 9.0])
    dimensional = solve(g, alpha, cl, cd, [6.0, 9.0], wind_speed_m_s=[8.0, 10.0],
                        rho_kg_m3=1.2)
    q = 0.5 * 1.2 * np.array([8.0, 10.0]) ** 2
    assert per_q.force_basis == "per unit dynamic pressure"
    assert dimensional.force_basis == "N/m"
    np.testing.assert_allclose(dimensional.normal_force_n_per_m,
                               per_q.normal_force_n_per_m * q[:, None], rtol=1e-14)
    np.testing.assert_allclose(dimensional.root_flap_moment, per_q.root_flap_moment * q,
                               rtol=1e-14)
    # thrust from the normal forces: T = B int F_N dr = Ct q pi R^2 (trapezoid, numpy)
    thrust = g.blade_count * np.trapezoid(dimensional.normal_force_n_per_m, g.radius_m, axis=1)
    np.testing.assert_allclose(thrust, dimensional.ct * q * math.pi * g.rotor_radius_m**2,
                               rtol=1e-12)
    # flapwise root moment about the hub radius (trapezoid, numpy)
    arm = g.radius_m - g.hub_radius_m
    flap = np.trapezoid(dimensional.normal_force_n_per_m * arm, g.radius_m, axis=1)
    np.testing.assert_allclose(dimensional.root_flap_moment, flap, rtol=1e-12)


def test_switches():
    alpha, cl, cd = demo_tables()
    g = demo_geometry()
    plain = solve(g, alpha, cl, cd, 7.0, tip_loss=False, hub_loss=False,
                  tangential_induction=False)
    assert np.all(plain.loss_factor == 1.0)
    assert np.all(plain.tangential_induction == 0.0)
    assert plain.options == {"tip_loss": False, "hub_loss": False,
                             "tangential_induction": False, "high_thrust": True}
    assert any("neglected" in text for text in plain.assumptions)
    assert "screening check" in plain.caution
    losses = solve(g, alpha, cl, cd, 7.0)
    assert np.all(losses.loss_factor[0, 1:] < 1.0)
    assert float(losses.cp) < float(plain.cp)


@pytest.mark.parametrize(
    ("kwargs", "parameter", "text"),
    [
        ({"radius_m": [1.0, 3.0, 2.0]}, "radius_m", "station 2"),
        ({"chord_m": [1.0, 0.0, 1.0]}, "chord_m", "station 1"),
        ({"chord_m": [1.0, 1.0]}, "chord_m", "2 values"),
        ({"radius_m": [1.0, 2.0, 6.0]}, "radius_m", "beyond the rotor radius"),
        ({"hub_radius_m": 1.5}, "radius_m", "inside the hub"),
        ({"blade_count": 0}, "blade_count", ">= 1"),
        ({"twist_deg": [0.0, float("nan"), 0.0]}, "twist_deg", "station 1"),
    ],
)
def test_geometry_errors_name_the_field(kwargs, parameter, text):
    base = {"radius_m": [1.0, 2.0, 3.0], "chord_m": [1.0, 1.0, 1.0],
            "twist_deg": [0.0, 0.0, 0.0], "blade_count": 3, "rotor_radius_m": 5.0,
            "hub_radius_m": 0.5}
    with pytest.raises(ParameterError) as info:
        RotorGeometry(**{**base, **kwargs})
    assert info.value.parameter == parameter
    assert text in str(info.value)


def test_table_and_operating_point_errors():
    g = demo_geometry()
    grid = np.linspace(-180, 180, 11)
    good = np.zeros((g.size, grid.size))
    with pytest.raises(ParameterError, match="shape"):
        solve(g, grid, good[:3], good, 7.0)
    bad = good.copy()
    bad[4, 2] = np.nan
    with pytest.raises(ParameterError, match="station 4"):
        solve(g, grid, good, bad, 7.0)
    with pytest.raises(ParameterError, match="operating point 1"):
        solve(g, grid, good, good, [7.0, -1.0])
    with pytest.raises(ParameterError, match="ascending"):
        solve(g, grid[::-1], good, good, 7.0)


@settings(max_examples=25, deadline=None, database=None)
@given(st.lists(st.tuples(st.floats(1.0, 15.0), st.floats(-5.0, 30.0)), min_size=1,
                max_size=6))
def test_operating_points_are_independent(points):
    # solving several operating points together equals solving each alone
    alpha, cl, cd = demo_tables()
    g = demo_geometry()
    tsr = np.array([p[0] for p in points])
    pitch = np.array([p[1] for p in points])
    together = solve(g, alpha, cl, cd, tsr, pitch)
    for i, (lam, beta) in enumerate(points):
        alone = solve(g, alpha, cl, cd, lam, beta)
        assert float(alone.cp) == pytest.approx(float(together.cp[i]), abs=1e-12)


def test_surface_maximum_agrees_with_scipy_minimize():
    alpha, cl, cd = demo_tables()
    g = demo_geometry()
    surface = cp_surface(g, alpha, cl, cd, pitch_deg=np.arange(-4.0, 6.01, 1.0))
    assert surface.cp.shape == (57, 11)
    assert surface.cp_max >= surface.cp.max()
    # reference: Nelder-Mead of scipy on the solver from the grid maximum
    i, j = np.unravel_index(np.argmax(surface.cp), surface.cp.shape)
    found = optimize.minimize(
        lambda x: -float(solve(g, alpha, cl, cd, x[0], x[1]).cp),
        [surface.tip_speed_ratio[i], surface.pitch_deg[j]], method="Nelder-Mead",
        options={"xatol": 1e-5, "fatol": 1e-12},
    )
    assert surface.cp_max == pytest.approx(-found.fun, abs=2e-6)
    assert surface.best_tip_speed_ratio == pytest.approx(found.x[0], abs=0.05)
    assert surface.best_pitch_deg == pytest.approx(found.x[1], abs=0.1)
