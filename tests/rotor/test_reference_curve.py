"""The power curve, optimum and annual energy of the demo blade against a slow reference
computed here, one operating point at a time: every station by scipy's brentq on Ning's
residual (``reference_station``), Cp by scipy's trapezoid, the optimum by scipy's
Nelder-Mead, the rated wind speed and the pitch above rated by brentq, the energy by
scipy's quad over a Rayleigh density."""

from __future__ import annotations

import functools
import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from polarsvc import performance
from tests.rotor.demo import demo_blade, demo_geometry, demo_tables
from tests.rotor.test_convergence import reference_station


def reference_cp(tsr: float, pitch: float) -> float:
    alpha, cl, cd = demo_tables()
    g = demo_geometry()
    R = g.rotor_radius_m
    torque = [0.0]  # station 0 sits at the hub radius: no load
    for j in range(1, g.size):
        r = g.radius_m[j]
        lam_r = tsr * r / R
        _phi, a, a_t, _cn, ct = reference_station(
            (1e-6, math.pi / 2), lam_r, g.solidity[j], math.radians(g.twist_deg[j] + pitch),
            r, R, g.hub_radius_m, g.blade_count, alpha, cl[j], cd[j],
        )
        torque.append(g.chord_m[j] * ct * ((1 - a) ** 2 + (lam_r * (1 + a_t)) ** 2) * r)
    # Cp = B lambda / (pi R^3) int r F_T / q dr (Burton et al. 2011, ch. 3)
    return g.blade_count * tsr * integrate.trapezoid(torque, g.radius_m) / (math.pi * R**3)


@functools.cache
def served():
    alpha, cl, cd = demo_tables()
    blade = demo_blade()
    return performance.compute_performance(alpha, cl, cd, blade,
                                           performance.rotor_params(blade))[0]


def schedule(turbine: dict, best_tsr: float, speed: float) -> tuple[float, float]:
    """Rotor speed [rad/s] clipped to its limits and tip speed ratio (variable speed)."""
    R = demo_geometry().rotor_radius_m
    omega = min(max(best_tsr * speed / R, turbine["min_rotor_speed_rpm"] * math.pi / 30),
                turbine["max_rotor_speed_rpm"] * math.pi / 30)
    return omega, omega * R / speed


def electrical_power(turbine: dict, cp: float, speed: float) -> float:
    R = demo_geometry().rotor_radius_m
    return turbine["efficiency"] * cp * 0.5 * turbine["rho_kg_m3"] * math.pi * R**2 * speed**3


def test_optimum_against_nelder_mead():
    arrays = served()
    best_tsr, fine_pitch, cp_max = arrays["optimum"]
    # reference: Nelder-Mead on the brentq rotor from a start of our choosing
    found = optimize.minimize(lambda x: -reference_cp(x[0], x[1]), [8.0, 0.0],
                              method="Nelder-Mead",
                              options={"xatol": 1e-5, "fatol": 1e-12, "maxfev": 400})
    # tolerance: the search stops at a 128th of a grid cell (0.004 in lambda, 0.04 deg in
    # pitch); a quadratic maximum gives away less than 1e-6 in Cp there
    assert cp_max == pytest.approx(-found.fun, abs=1e-6)
    assert cp_max <= -found.fun + 1e-9
    assert reference_cp(best_tsr, fine_pitch) == pytest.approx(cp_max, abs=1e-9)


def test_power_curve_and_energy_against_the_reference():
    arrays = served()
    turbine = performance.rotor_params(demo_blade())["turbine"]
    best_tsr, fine_pitch, _ = arrays["optimum"]
    rated_power = turbine["rated_power_w"]

    def excess(speed: float) -> float:
        _, tsr = schedule(turbine, best_tsr, speed)
        return electrical_power(turbine, reference_cp(tsr, fine_pitch), speed) / rated_power - 1

    # power at fine pitch rises through rated between 12 and 13 m/s (and falls again by
    # 20 m/s as the rotor stalls): the lowest crossing lies in [10, 13]
    assert excess(10.0) < 0.0 < excess(13.0)
    rated = optimize.brentq(excess, 10.0, 13.0, xtol=1e-12)
    assert float(arrays["rated_wind_speed_m_s"][0]) == pytest.approx(rated, abs=1e-8)

    speed, power = arrays["wind_speed_m_s"], arrays["power_w"]
    below = speed <= rated + 1e-9
    reference = []
    for u in speed[below]:
        _, tsr = schedule(turbine, best_tsr, float(u))
        reference.append(electrical_power(turbine, reference_cp(tsr, fine_pitch), float(u)))
    np.testing.assert_allclose(power[below], reference, rtol=1e-8)
    # above rated the pitch holds rated power: the pitch at three speeds by brentq, in the
    # step where a 3 deg scan of the reference power (from -2 deg) first falls through
    # rated (at 25 m/s the stalled rotor first gains power when pitched)
    for u, low, high in ((13.0, 1.0, 4.0), (18.0, 10.0, 13.0), (25.0, 19.0, 22.0)):
        row = int(np.flatnonzero(speed == u)[0])
        _, tsr = schedule(turbine, best_tsr, u)

        def pitch_excess(b: float, t: float = tsr, v: float = u) -> float:
            return electrical_power(turbine, reference_cp(t, b), v) / rated_power - 1

        assert pitch_excess(low) > 0.0 > pitch_excess(high)
        pitch = optimize.brentq(pitch_excess, low, high, xtol=1e-10)
        assert arrays["curve_pitch_deg"][row] == pytest.approx(pitch, abs=1e-6)
    reference_curve = np.where(below, 0.0, rated_power)
    reference_curve[below] = reference
    np.testing.assert_allclose(power, reference_curve, rtol=1e-8)

    # energy: Rayleigh densities of the IEC class mean speeds (IEC 61400-1 sec. 6.3.1:
    # 10, 8.5, 7.5 m/s, from memory) times the reference curve, scipy quad, 8766 h
    for index, mean in enumerate((10.0, 8.5, 7.5)):
        pdf = stats.rayleigh(scale=mean * math.sqrt(2.0 / math.pi)).pdf
        mean_power, _ = integrate.quad(lambda x, p=pdf: np.interp(x, speed, reference_curve)
                                       * p(x),
                                       speed[0], speed[-1], points=list(speed[1:-1]),
                                       limit=400, epsrel=1e-11)
        assert arrays["annual_energy_wh"][index] == pytest.approx(8766.0 * mean_power,
                                                                  rel=1e-8)
