"""Rules of the full-range extension worked by hand on small cases: the flat-plate model with
its decaying offset, the mirror about +-90 deg, the arc offset of tables reaching past 90 deg,
the join neighbours, the moment rule and the parameter checks. Each expected value is computed
in the test from the published formula with ``math`` (no project function), as noted."""

from __future__ import annotations

import math

import numpy as np
import pytest

from polarsvc.aero import ParameterError, Polar, extend_full_range
from polarsvc.aero.extension import (
    _arc_offset,
    _join_neighbours,
    centre_of_pressure_moment,
    viterna_corrigan,
)


def _value_at(polar: Polar, angle: float) -> tuple[float, float]:
    row = int(np.flatnonzero(polar.alpha_deg == angle)[0])
    return float(polar.cl[row]), float(polar.cd[row])


def _flat_plate_normal(angle_deg: float, cd90: float) -> float:
    # cn = cd90 sin a / (0.56 + 0.44 |sin a|) (Lindenburg, ECN, about 2000; from memory)
    s = math.sin(math.radians(angle_deg))
    return cd90 * s / (0.56 + 0.44 * abs(s))


def _linear_table() -> Polar:
    # measured -10..20 deg: cl = 0.1 alpha, cd = 0.01 (data ends: cl -1.0 and 2.0)
    alpha = np.arange(-10.0, 21.0)
    return Polar(alpha, 0.1 * alpha, 0.01 + 0.0 * alpha)


def test_flat_plate_extension_by_hand() -> None:
    # Module docstring, step 1: model + (data end - model at the end) x decay, the decay
    # linear to zero at +-90 deg. Flat plate: cl = cn cos a, cd = cn sin a, cd90 = 2.0.
    # At +60: decay (90 - 60) / (90 - 20) = 3/7; at -60: (-60 + 90) / (-10 + 90) = 3/8.
    table = extend_full_range(_linear_table(), "flat-plate", cd_max=2.0)
    c = math.cos
    r = math.radians
    n60, n20, n10 = (_flat_plate_normal(a, 2.0) for a in (60.0, 20.0, -10.0))
    cl_60 = n60 * c(r(60)) + (2.0 - n20 * c(r(20))) * 3 / 7
    cd_60 = n60 * math.sin(r(60)) + (0.01 - n20 * math.sin(r(20))) * 3 / 7
    cl_m60 = -n60 * c(r(60)) + (-1.0 - n10 * c(r(10))) * 3 / 8
    cd_m60 = n60 * math.sin(r(60)) + (0.01 - n10 * math.sin(r(-10))) * 3 / 8
    assert _value_at(table, 60.0) == pytest.approx((cl_60, cd_60), abs=1e-12)
    assert _value_at(table, -60.0) == pytest.approx((cl_m60, cd_m60), abs=1e-12)


def test_mirror_starts_just_past_right_angles() -> None:
    # Module docstring, step 2, on a 0.5 deg grid: at +-90.5 deg the lift is -k times the inner
    # lift at +-89.5 deg (k = 0.7) and the drag follows the reverse-flow rule
    # cd_max sin^2 a + max(0.05, cd(0)) cos^2 a = 2 sin^2 a + 0.05 cos^2 a.
    table = extend_full_range(_linear_table(), cd_max=2.0, step_deg=0.5)
    for outside, inside in ((90.5, 89.5), (-90.5, -89.5)):
        cl_out, cd_out = _value_at(table, outside)
        cl_in, _ = _value_at(table, inside)
        a = math.radians(outside)
        assert cl_out == pytest.approx(-0.7 * cl_in, abs=1e-12)
        assert cd_out == pytest.approx(2.0 * math.sin(a) ** 2 + 0.05 * math.cos(a) ** 2,
                                       abs=1e-12)


def test_arc_offset_by_hand() -> None:
    # Offsets along the circle outside the data (module docstring, step 3), arc length s from
    # the upper data end; knots by hand:
    # data -20..120: length 360 - 140 = 220; +90 lies in the data, -90 at s = 150 gets zero.
    #   s = 30 (150 deg): 1.7 (1 - 30/150) = 1.36; s = 90 (-150 deg): 0.68; s = 150 (-90 deg):
    #   0; s = 190 (-50 deg): -0.6 x 40/70.
    angles = np.array([150.0, -150.0, -90.0, -50.0])
    np.testing.assert_allclose(
        _arc_offset(angles, -20.0, 120.0, 1.7, -0.6, zero_at_right_angles=True),
        [1.36, 0.68, 0.0, -0.6 * 40.0 / 70.0], rtol=0.0, atol=1e-12)
    # the same ends without the zero knots (a cylinder): linear over 220 deg, s = 110 -> 0.55
    np.testing.assert_allclose(
        _arc_offset(np.array([-130.0]), -20.0, 120.0, 1.7, -0.6, zero_at_right_angles=False),
        [0.55], rtol=0.0, atol=1e-12)
    # data -120..20: -90 lies in the data, +90 (s = 70) gets zero: at 55 deg (s = 35) 0.85
    np.testing.assert_allclose(
        _arc_offset(np.array([55.0]), -120.0, 20.0, 1.7, -0.6, zero_at_right_angles=True),
        [0.85], rtol=0.0, atol=1e-12)


def test_join_neighbours_by_hand() -> None:
    # Data -10.3..20.2 deg; extension rows at -180, -11, 21, 180 deg. Along the circle the row
    # next to the upper end is 21 deg (0.8 deg away), next to the lower end -11 deg (0.7 deg).
    alpha = np.array([-10.3, -5.0, 0.0, 5.0, 20.2])
    first, gap_hi, last, gap_lo = _join_neighbours(alpha, np.array([-180.0, -11.0, 21.0, 180.0]))
    assert (first, last) == (2, 1)
    assert (gap_hi, gap_lo) == (pytest.approx(0.8), pytest.approx(0.7))


def test_centre_of_pressure_moment_by_hand() -> None:
    # cm = -(cl cos a + cd sin a) x 0.25 (1 - cos a) (Hoerner 1965, from memory) at 60 deg with
    # cl = cd = 1: -(0.5 + 0.8660254038) x 0.125 = -0.1707531755
    assert centre_of_pressure_moment(np.array([60.0]), np.array([1.0]), np.array([1.0]))[0] == \
        pytest.approx(-(0.5 + math.sqrt(3.0) / 2.0) * 0.125, abs=1e-12)


@pytest.mark.parametrize("stall_deg", [0.0, 90.0, 95.0, -5.0])
def test_viterna_corrigan_refuses_stall_angles_outside_0_to_90(stall_deg: float) -> None:
    with pytest.raises(ParameterError) as raised:
        viterna_corrigan(np.array([45.0]), stall_deg, 1.0, 0.05, 2.0)
    assert raised.value.parameter == "alpha_stall_deg"
    assert str(raised.value) == (
        f"parameter 'alpha_stall_deg': must lie in (0, 90) deg, got {stall_deg:g}")
