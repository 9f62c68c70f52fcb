"""Station Reynolds numbers met over the power curve against those the tables were
prepared for."""

from __future__ import annotations

import functools

import numpy as np
import pytest

from polarsvc import performance, recipes
from polarsvc.aero.errors import ParameterError
from tests.rotor.demo import demo_blade, demo_tables


def test_reynolds_number_by_hand():
    # U = 8 m/s, lambda = 6, r/R = 0.5 (lambda_r = 3), a = 0.25, a' = 0.02, c = 2 m:
    # W = 8 sqrt(0.75^2 + (3 x 1.02)^2) = 8 sqrt(0.5625 + 9.3636) = 25.20457 m/s,
    # nu = 1.789e-5 / 1.225 = 1.460408e-5 m^2/s (ISA sea level, ISO 2533, from memory),
    # Re = 25.20457 x 2 / 1.460408e-5 = 3.45172e6 (hand calculation)
    re = performance.reynolds_met(
        np.array([8.0]), np.array([6.0]), np.array([10.0]), 20.0, np.array([2.0]),
        np.array([[0.25]]), np.array([[0.02]]),
    )
    assert re.shape == (1, 1)
    assert re[0, 0] == pytest.approx(3.45172e6, rel=1e-5)


def test_kinematic_viscosity_of_the_standard_atmosphere():
    # U.S. Standard Atmosphere 1976, sea level: 1.4607e-5 m^2/s (from memory); ISA
    # rho / mu = 1.225 / 1.7894e-5 = 1.4607e-5 (ISO 2533, from memory)
    nu = performance.KINEMATIC_VISCOSITY_M2_S
    assert nu == pytest.approx(1.4607e-5, rel=1e-3)


@functools.cache
def demo_result():
    alpha, cl, cd = demo_tables()
    blade = demo_blade()
    prepared = recipes.blade_stations(blade, recipes.blade_set_params(blade)).reynolds
    return performance.compute_performance(alpha, cl, cd, blade,
                                           performance.rotor_params(blade),
                                           prepared_reynolds=prepared)


def test_demo_hub_station_by_hand():
    arrays, _ = demo_result()
    # the hub station (r = 1.6 m, c = 3.5 m) carries no load (Prandtl hub factor 0), so
    # W = sqrt(U^2 + (Omega r)^2). Lowest at cut-in, 3 m/s, at the minimum rotor speed
    # 6 rpm (the optimum would ask 5.5 rpm): Omega r = 0.62832 x 1.6 = 1.00531 m/s,
    # W = sqrt(9 + 1.01065) = 3.16396 m/s, Re = 3.16396 x 3.5 / 1.460408e-5 = 7.5827e5
    assert arrays["rotor_speed_rpm"][0] == pytest.approx(6.0)
    assert arrays["reynolds_min"][0] == pytest.approx(7.5827e5, rel=1e-4)
    # prepared at the blade's operating point, 10 m/s and 13 rpm, ISA rho 1.225 kg/m^3,
    # mu 1.789e-5 Pa s: W = sqrt(100 + 2.17817^2) = 10.23447 m/s,
    # Re = 1.225 x 10.23447 x 3.5 / 1.789e-5 = 2.45278e6 (hand calculation)
    assert arrays["reynolds_prepared"][0] == pytest.approx(2.45278e6, rel=1e-5)


def test_stations_beyond_a_factor_of_two_are_listed():
    arrays, reports = demo_result()
    report = reports["reynolds"]
    assert report["factor_limit"] == 2.0
    assert report["factor_limit_source"] == "common practice, no source"
    listed = [s["station"] for s in report["stations_outside"]]
    low, high, prepared = (arrays[k] for k in ("reynolds_min", "reynolds_max",
                                               "reynolds_prepared"))
    expected = [i for i in range(prepared.size)
                if high[i] > 2.0 * prepared[i] or low[i] < prepared[i] / 2.0]
    assert listed == expected
    # the demo turbine runs from 6 rpm at 3 m/s to 16.5 rpm: every station meets less
    # than half its prepared Reynolds number at cut-in
    assert listed == list(range(prepared.size))
    assert len(reports["warnings"]) == len(listed)
    assert all(w in reports["assumptions"] for w in reports["warnings"])
    assert "station 0 (r = 1.6 m)" in reports["warnings"][0]
    assert np.all(arrays["reynolds_min"] <= arrays["reynolds_max"])


def test_without_prepared_numbers_nothing_is_listed():
    alpha, cl, cd = demo_tables()
    blade = demo_blade()
    arrays, reports = performance.compute_performance(alpha, cl, cd, blade,
                                                      performance.rotor_params(blade))
    assert np.all(np.isnan(arrays["reynolds_prepared"]))
    assert reports["reynolds"]["stations_outside"] == []
    with pytest.raises(ParameterError, match="prepared_reynolds"):
        performance.compute_performance(alpha, cl, cd, blade,
                                        performance.rotor_params(blade),
                                        prepared_reynolds=[1e6, 2e6])
