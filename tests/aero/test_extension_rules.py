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
        _arc_offset(angles, -20.0, 120.0, 1.7, -0.6, zero_at_deg=(90.0, -90.0)),
        [1.36, 0.68, 0.0, -0.6 * 40.0 / 70.0], rtol=0.0, atol=1e-12)
    # the same ends without the zero knots (a cylinder): linear over 220 deg, s = 110 -> 0.55
    np.testing.assert_allclose(
        _arc_offset(np.array([-130.0]), -20.0, 120.0, 1.7, -0.6, zero_at_deg=()),
        [0.55], rtol=0.0, atol=1e-12)
    # data -120..20: -90 lies in the data, +90 (s = 70) gets zero: at 55 deg (s = 35) 0.85
    np.testing.assert_allclose(
        _arc_offset(np.array([55.0]), -120.0, 20.0, 1.7, -0.6, zero_at_deg=(90.0, -90.0)),
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


def _table(low: float, high: float) -> Polar:
    # plausible drag up to broadside (about 1.9 at 90 deg), so that tables reaching past 90 deg
    # meet the reverse-flow drag without a large offset
    alpha = np.arange(low, high + 0.5, 1.0)
    return Polar(alpha, 0.01 * alpha, 0.01 + 1.9 * np.sin(np.radians(alpha)) ** 2)


@pytest.mark.parametrize(
    ("low", "high", "keyword", "value", "allowed"),
    [
        # positive stall angle: (0, min(data end, 89)] deg
        (-10.0, 20.0, "alpha_stall_pos_deg", 0.0, "(0, 20]"),
        (-10.0, 20.0, "alpha_stall_pos_deg", 20.5, "(0, 20]"),
        (-10.0, 100.0, "alpha_stall_pos_deg", 89.5, "(0, 89]"),
        # negative stall angle: [max(data end, -89), 0) deg
        (-100.0, 20.0, "alpha_stall_neg_deg", -89.5, "[-89, 0)"),
        (-100.0, 20.0, "alpha_stall_neg_deg", 0.0, "[-89, 0)"),
        (-100.0, 20.0, "alpha_stall_neg_deg", 0.5, "[-89, 0)"),
        (-10.0, 20.0, "alpha_stall_neg_deg", -10.5, "[-10, 0)"),
        # drag at 90 deg: (0, 3]
        (-10.0, 20.0, "cd_max", 0.0, "(0, 3]"),
        (-10.0, 20.0, "cd_max", -1.0, "(0, 3]"),
        (-10.0, 20.0, "cd_max", 3.5, "(0, 3]"),
        # aspect ratio: positive
        (-10.0, 20.0, "aspect_ratio", 0.0, "positive"),
    ],
)
def test_extension_parameters_refused_with_their_range(
    low: float, high: float, keyword: str, value: float, allowed: str
) -> None:
    if keyword.startswith("alpha_stall"):
        message = f"must lie in {allowed} deg (within the data), got {value:g}"
    elif allowed == "positive":
        message = f"must be positive, got {value:g}"
    else:
        message = f"must lie in {allowed}, got {value:g}"
    with pytest.raises(ParameterError) as raised:
        extend_full_range(_table(low, high), **{keyword: value})
    assert raised.value.parameter == keyword
    assert str(raised.value) == f"parameter '{keyword}': {message}"


@pytest.mark.parametrize(
    ("low", "high", "keyword", "value"),
    [
        (-10.0, 20.0, "alpha_stall_pos_deg", 0.5),
        (-10.0, 20.0, "alpha_stall_pos_deg", 20.0),
        (-10.0, 100.0, "alpha_stall_pos_deg", 89.0),
        (-100.0, 20.0, "alpha_stall_neg_deg", -89.0),
        (-10.0, 20.0, "alpha_stall_neg_deg", -0.5),
        (-10.0, 20.0, "cd_max", 0.5),
        (-10.0, 20.0, "cd_max", 3.0),
        (-10.0, 20.0, "aspect_ratio", 0.5),
    ],
)
def test_extension_parameters_accepted_at_their_range_ends(
    low: float, high: float, keyword: str, value: float
) -> None:
    extended = extend_full_range(_table(low, high), **{keyword: value})
    assert extended.covers_full_range


def test_cd_max_and_aspect_ratio_are_exclusive() -> None:
    with pytest.raises(ParameterError) as raised:
        extend_full_range(_table(-10.0, 20.0), cd_max=1.5, aspect_ratio=10.0)
    assert str(raised.value) == (
        "parameter 'cd_max': give either aspect_ratio or cd_max, not both")


def test_recorded_slope_jumps_are_those_of_the_served_rows() -> None:
    # The history's slope jump at each join is the one-sided difference quotient on the
    # extension side (to the next extension row, 2 deg away on a 2 deg grid) minus that on the
    # data side (0.5 deg rows), both read off the served table (difference quotients by hand).
    alpha = np.arange(-10.0, 20.5, 0.5)
    cl = 0.1 * alpha + 0.002 * alpha**2
    table = extend_full_range(Polar(alpha, cl, 0.01 + 0.0 * alpha), cd_max=2.0, step_deg=2.0)
    above, _ = _value_at(table, 22.0)
    below, _ = _value_at(table, -12.0)
    joins = {join["side"]: join for join in table.history[-1]["joins"]}
    expected_hi = (above - cl[-1]) / 2.0 - (cl[-1] - cl[-2]) / 0.5
    expected_lo = (cl[0] - below) / 2.0 - (cl[1] - cl[0]) / 0.5
    assert joins["positive"]["cl_slope_jump_per_deg"] == pytest.approx(expected_hi, abs=1e-12)
    assert joins["negative"]["cl_slope_jump_per_deg"] == pytest.approx(expected_lo, abs=1e-12)


def test_join_neighbour_across_180_deg() -> None:
    # Data up to 179.5 deg: the next row along the circle is -180 deg, 0.5 deg away.
    alpha = np.array([-20.0, 0.0, 20.0, 179.5])
    first, gap_hi, _, _ = _join_neighbours(alpha, np.array([-180.0, -90.0, -30.0]))
    assert (first, gap_hi) == (0, pytest.approx(0.5))


@pytest.mark.parametrize("low, high", [(-10.0, 100.0), (-100.0, 20.0)])
def test_tables_reaching_past_right_angles_keep_positive_drag(low: float, high: float) -> None:
    # Measured to 100 deg with a plausible broadside drag (cd = 0.01 + 1.9 sin^2 a: 1.853 at
    # 100 deg) against the default cd_max 2.01: the drag offset at the data end (about -0.1)
    # must not carry the drag below zero on the way round. The drag at 180 deg is the
    # reverse-flow value max(0.05, cd(0)) = 0.05 (module docstring, step 2), which the offset
    # does not move when 180 deg lies outside the data.
    table = extend_full_range(_table(low, high))
    assert table.cd.min() > 0.0
    assert _value_at(table, 180.0)[1] == pytest.approx(0.05, abs=1e-12)
    assert _value_at(table, -180.0)[1] == pytest.approx(0.05, abs=1e-12)


def test_extension_drag_held_at_the_smallest_measured_drag() -> None:
    # Measured -10..120 deg with cd = 0.5 at 120 deg, far under the reverse-flow model there
    # (2.01 sin^2 120 + 0.05 cos^2 120 = 1.52): the offset of about -1.0 decays to zero at
    # 180 deg, and at 175 deg model + offset = 0.065 - 1.02 x 5/60 < 0 (by hand). The drag
    # is held at the smallest measured drag (0.01) there, and the history names the angles.
    alpha = np.arange(-10.0, 121.0)
    cd = np.where(alpha <= 20.0, 0.01, 0.01 + 0.49 * (alpha - 20.0) / 100.0)
    table = extend_full_range(Polar(alpha, 0.01 * alpha, cd))
    floor = table.history[-1]["drag_floor"]
    assert floor["cd"] == 0.01
    assert 175.0 in floor["angles_deg"] and 179.0 not in floor["angles_deg"]
    assert _value_at(table, 175.0)[1] == 0.01
    assert _value_at(table, 180.0)[1] == pytest.approx(0.05, abs=1e-12)
    assert table.cd.min() == 0.01
