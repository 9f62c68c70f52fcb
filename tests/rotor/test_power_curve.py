"""Power curve of the demo rotor and annual energy."""

from __future__ import annotations

import functools
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, stats

from polarsvc.aero.errors import ParameterError
from polarsvc.rotor import (
    HOURS_PER_YEAR,
    ConstantWind,
    TurbineData,
    Weibull,
    annual_energy,
    iec_class_distributions,
    mean_power,
    power_curve,
    rayleigh,
)
from polarsvc.rotor.power import MODE_RATED
from tests.rotor.demo import demo_geometry, demo_tables, demo_turbine


@functools.cache
def demo_curve():
    alpha, cl, cd = demo_tables()
    return power_curve(demo_geometry(), alpha, cl, cd, demo_turbine())


def test_power_rises_to_rated_then_stays_flat():
    curve = demo_curve()
    turbine = demo_turbine()
    speed, power = curve.wind_speed_m_s, curve.electrical_power_w
    rated = curve.rated_wind_speed_m_s
    assert rated is not None and rated in speed
    below = speed <= rated
    assert np.all(np.diff(power[below]) > 0.0)
    # flat at rated within 0.1 % above the rated wind speed (requirement of the check)
    np.testing.assert_allclose(power[~below], turbine.rated_power_w, rtol=1e-3)
    assert power[speed == rated][0] == pytest.approx(turbine.rated_power_w, rel=1e-9)
    assert all(m == MODE_RATED for m, s in zip(curve.states.mode, speed, strict=True)
               if s > rated)
    # pitch to feather grows with the wind above rated
    assert np.all(np.diff(curve.states.pitch_deg[speed >= rated]) > 0.0)
    # rotor speed within its limits
    rpm = curve.states.rotor_speed_rpm
    assert rpm.min() >= turbine.min_rotor_speed_rpm - 1e-9
    assert rpm.max() <= turbine.max_rotor_speed_rpm + 1e-9
    assert speed[0] == turbine.cut_in_m_s and speed[-1] == turbine.cut_out_m_s


def test_power_from_the_rotor_balance():
    # P = eta Cp 1/2 rho U^3 pi R^2 and torque x Omega = aerodynamic power (definitions;
    # Burton et al., Wind Energy Handbook, sec. 3.2)
    curve = demo_curve()
    t = demo_turbine()
    s = curve.states
    R = demo_geometry().rotor_radius_m
    wind_power = 0.5 * t.rho_kg_m3 * s.wind_speed_m_s**3 * math.pi * R**2
    np.testing.assert_allclose(s.electrical_power_w, t.efficiency * s.bem.cp * wind_power,
                               rtol=1e-12)
    omega = s.rotor_speed_rpm * 2 * math.pi / 60
    np.testing.assert_allclose(s.torque_n_m * omega, s.aero_power_w, rtol=1e-12)
    np.testing.assert_allclose(s.tip_speed_ratio, omega * R / s.wind_speed_m_s, rtol=1e-12)


@pytest.mark.parametrize("index", [0, 5, 17, 30, -1])
def test_constant_wind_energy_is_hours_times_power(index):
    # a wind blowing at u0 all year gives 8766 h x P(u0) (8766 h = 365.25 d)
    curve = demo_curve()
    u0 = float(curve.wind_speed_m_s[index])
    energy = annual_energy(curve.wind_speed_m_s, curve.electrical_power_w, ConstantWind(u0))
    assert energy.energy_wh == pytest.approx(8766.0 * curve.electrical_power_w[index],
                                             rel=1e-12)


def test_constant_wind_between_curve_points_and_outside():
    curve = demo_curve()
    u, p = curve.wind_speed_m_s, curve.electrical_power_w
    for u0 in (4.3, 11.9, 16.26):
        energy = annual_energy(u, p, ConstantWind(u0)).energy_wh
        assert energy == pytest.approx(HOURS_PER_YEAR * np.interp(u0, u, p), rel=1e-12)
    assert annual_energy(u, p, ConstantWind(2.0)).energy_wh == 0.0
    assert annual_energy(u, p, ConstantWind(30.0)).energy_wh == 0.0


@pytest.mark.parametrize("distribution", iec_class_distributions(),
                         ids=lambda d: d.label.split(":")[0])
def test_rayleigh_energy_against_scipy_quadrature(distribution):
    # reference: scipy.stats.rayleigh (scale = V_ave sqrt(2/pi), IEC 61400-1 sec. 6.3.1;
    # Manwell et al., sec. 2.4) times the power curve (numpy.interp), by scipy.integrate.quad
    curve = demo_curve()
    u, p = curve.wind_speed_m_s, curve.electrical_power_w
    mean = float(distribution.label.split("mean ")[1].split(" ")[0])
    pdf = stats.rayleigh(scale=mean * math.sqrt(2.0 / math.pi)).pdf
    reference, _ = integrate.quad(lambda x: np.interp(x, u, p) * pdf(x), u[0], u[-1],
                                  points=list(u[1:-1]), limit=400, epsrel=1e-11)
    energy = annual_energy(u, p, distribution, rated_power_w=3.0e6)
    assert energy.mean_power_w == pytest.approx(reference, rel=1e-9)
    assert energy.energy_wh == pytest.approx(8766.0 * reference, rel=1e-9)
    assert energy.capacity_factor == pytest.approx(reference / 3.0e6, rel=1e-9)


def test_iec_class_mean_speeds():
    # IEC 61400-1 Table 1: V_ave = 10, 8.5, 7.5 m/s for classes I, II, III (from memory)
    means = [d.mean_m_s for d in iec_class_distributions()]
    assert means == pytest.approx([10.0, 8.5, 7.5], rel=1e-14)
    # scipy's Weibull with the same parameters has the same mean
    w = Weibull(2.3, 9.1)
    assert w.mean_m_s == pytest.approx(stats.weibull_min(2.3, scale=9.1).mean(), rel=1e-12)
    assert rayleigh(8.5).shape_k == 2.0


@settings(max_examples=30, deadline=None, database=None)
@given(k=st.floats(1.2, 4.0), scale=st.floats(3.0, 15.0))
def test_weibull_energy_properties(k, scale):
    curve = demo_curve()
    u, p = curve.wind_speed_m_s, curve.electrical_power_w
    weibull = Weibull(k, scale)
    energy = annual_energy(u, p, weibull, rated_power_w=3.0e6)
    assert 0.0 <= energy.capacity_factor <= 1.0
    # bounds from the CDF of scipy.stats.weibull_min: no more than rated power while
    # producing, no less than rated power in the flat region
    dist = stats.weibull_min(k, scale=scale)
    rated = curve.rated_wind_speed_m_s
    producing = dist.cdf(u[-1]) - dist.cdf(u[0])
    flat = dist.cdf(u[-1]) - dist.cdf(rated)
    assert energy.mean_power_w <= 3.0e6 * producing * (1 + 1e-9)
    assert energy.mean_power_w >= 3.0e6 * flat * (1 - 1e-3)


def test_mean_power_input_errors():
    with pytest.raises(ParameterError, match="ascending"):
        mean_power([5.0, 4.0], [1.0, 2.0], ConstantWind(4.5))
    with pytest.raises(ParameterError, match="one value per wind speed"):
        mean_power([4.0, 5.0], [1.0], ConstantWind(4.5))


@pytest.mark.parametrize(
    ("change", "parameter"),
    [
        ({"efficiency": 1.2}, "efficiency"),
        ({"min_rotor_speed_rpm": 20.0}, "min_rotor_speed_rpm"),
        ({"cut_in_m_s": 30.0}, "cut_in_m_s"),
        ({"rated_power_w": -1.0}, "rated_power_w"),
        # below a watt the power scale overflows (common practice, no source: no turbine
        # is rated below a watt)
        ({"rated_power_w": 5e-324}, "rated_power_w"),
        ({"rated_power_w": 0.5}, "rated_power_w"),
        ({"rho_kg_m3": float("nan")}, "rho_kg_m3"),
    ],
)
def test_turbine_data_errors(change, parameter):
    base = demo_turbine().as_dict()
    with pytest.raises(ParameterError) as info:
        TurbineData(**{**base, **change})
    assert info.value.parameter == parameter
