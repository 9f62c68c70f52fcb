"""The array kernels behind the characteristic values and the dynamic-stall inputs, on small
tables whose answers are worked by hand (each case says how).

These pin the documented rules (search windows, boundary angles, fallbacks, error texts) that
the smooth synthetic polars of test_characteristics.py never reach."""

from __future__ import annotations

import math

import numpy as np
import pytest

from polarsvc.aero import (
    InsufficientDataError,
    Polar,
    characteristics,
    dynamic_stall_inputs,
    extend_full_range,
    measured_range,
    separation_function,
)
from polarsvc.aero.characteristics import (
    _attached_hold,
    _dynamic_stall_arrays,
    _lift_line_arrays,
    _stall_angle_arrays,
    _zero_lift_estimate,
)


def test_zero_lift_estimate_by_hand() -> None:
    # Angles and three rows of cl chosen so each rule decides one row (by hand):
    # row 0 crosses zero between -16 and -14 (at -15) and between 2 and 4: linear
    #   interpolation 2 - (-0.1) * (4 - 2) / (0.3 - (-0.1)) = 2.5, the crossing nearest 0;
    # row 1 never crosses; the smallest |cl| within -20..20 deg is 0.05 at -20 (the search
    #   window includes its end), although |cl| = 0.01 at -30 lies outside;
    # row 2 changes sign only between 20 and 25 (a pair not wholly inside the window), so the
    #   fallback, the smallest |cl| inside, gives its end +20.
    alpha = np.array([-30.0, -20.0, -16.0, -14.0, -1.0, 2.0, 4.0, 20.0, 25.0])
    cl = np.array([
        [0.5, 0.4, 0.2, -0.2, -0.3, -0.1, 0.3, 1.0, 1.1],
        [0.01, 0.05, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8],
        [0.9, 0.8, 0.7, 0.6, 0.5, 0.4, 0.3, 0.02, -0.5],
    ])
    np.testing.assert_allclose(_zero_lift_estimate(alpha, cl), [2.5, -20.0, 20.0],
                               rtol=0.0, atol=1e-12)


def test_lift_line_from_exactly_two_points() -> None:
    # Two angles within the reach of the fit (-25..25 deg) and within +-5 deg of alpha0 suffice
    # for a straight line: cl = 0.1 alpha through (-2, -0.2) and (2, 0.2) gives slope 0.1 /deg
    # and alpha0 = 0 (by hand); the points at +-40 deg lie outside the fit.
    slope, alpha0 = _lift_line_arrays(np.array([-40.0, -2.0, 2.0, 40.0]),
                                      np.array([[-1.0, -0.2, 0.2, 1.0]]))
    assert slope[0] == pytest.approx(0.1, abs=1e-12)
    assert alpha0[0] == pytest.approx(0.0, abs=1e-12)


def test_lift_line_errors_name_what_is_missing() -> None:
    with pytest.raises(InsufficientDataError,
                       match=r"^fewer than 2 angles within -25\.\.25 deg: cannot fit the "
                             r"attached-flow lift line$"):
        _lift_line_arrays(np.array([-40.0, 3.0, 40.0]), np.array([[-1.0, 0.1, 1.0]]))
    with pytest.raises(InsufficientDataError,
                       match=r"^fewer than 2 points within \+-5 deg of the zero-lift angle: "
                             r"cannot fit the attached-flow lift line$"):
        _lift_line_arrays(np.array([-20.0, 0.5, 20.0]), np.array([[-1.0, 0.1, 1.0]]))


def _table_with_peaks_outside_the_windows() -> Polar:
    # cl = 0.1 alpha on -35..35 deg, larger |cl| just outside the search windows (cl(-36) = -5,
    # cl(40) = 5) that the windows must ignore; cd = 0.01 + 1e-4 alpha^2.
    alpha = np.arange(-36.0, 41.0)
    cl = 0.1 * alpha
    cl[0] = -5.0
    cl[alpha > 35.0] = 3.0
    cl[-1] = 5.0
    return Polar(alpha, cl, 0.01 + 1e-4 * alpha**2)


def test_characteristic_windows_include_their_ends() -> None:
    # By hand on the table above: cl_max is sought over -10..35 deg -> 3.5 at 35 (the window's
    # end); cl_min over -35..10 deg -> -3.5 at -35; cd_min 0.01 at 0; cl/cd = 0.1 a /
    # (0.01 + 1e-4 a^2) peaks where 0.01 = 1e-4 a^2, a = 10 deg, at 0.1*10/0.02 = 50.
    found = characteristics(_table_with_peaks_outside_the_windows())
    assert (found.cl_max, found.alpha_cl_max_deg) == (pytest.approx(3.5), 35.0)
    assert (found.cl_min, found.alpha_cl_min_deg) == (pytest.approx(-3.5), -35.0)
    assert (found.cd_min, found.alpha_cd_min_deg) == (pytest.approx(0.01), 0.0)
    assert (found.ld_max, found.alpha_ld_max_deg) == (pytest.approx(50.0), 10.0)


def test_characteristics_search_the_whole_table_when_a_window_is_empty() -> None:
    # Angles -24..-12 deg only: the cl_max window (-10..35 deg) holds none of them, so the whole
    # table is searched: cl = 0.1 (alpha + 18) peaks at -12 deg with 0.6 (by hand).
    alpha = np.arange(-24.0, -11.0)
    found = characteristics(Polar(alpha, 0.1 * (alpha + 18.0), 0.02 + 0.0 * alpha))
    assert (found.cl_max, found.alpha_cl_max_deg) == (pytest.approx(0.6), -12.0)
    assert found.alpha0_deg == pytest.approx(-18.0, abs=1e-9)


def test_measured_range_of_a_table_without_history_is_its_own() -> None:
    assert measured_range(_table_with_peaks_outside_the_windows()) == (-36.0, 40.0)


def test_characteristics_of_an_extended_table_keep_the_measured_ends_and_cm() -> None:
    # A measured table on -10..20 deg whose lift is lowest at its first row and highest at its
    # last (cl = 0.08 alpha + 0.1), with cm = -0.05 throughout: after the full-range extension
    # the characteristic values still come from the measured rows, ends included (by hand:
    # cl_min 0.08*-10 + 0.1 = -0.7 at -10, cl_max 1.7 at 20, alpha0 = -1.25, cm0 = -0.05).
    alpha = np.arange(-10.0, 20.5, 0.5)
    measured = Polar(alpha, 0.08 * alpha + 0.1, 0.01 + 0.0 * alpha, -0.05 + 0.0 * alpha)
    found = characteristics(extend_full_range(measured))
    assert (found.cl_min, found.alpha_cl_min_deg) == (pytest.approx(-0.7), -10.0)
    assert (found.cl_max, found.alpha_cl_max_deg) == (pytest.approx(1.7), 20.0)
    assert found.alpha0_deg == pytest.approx(-1.25, abs=1e-9)
    assert found.cm0 == pytest.approx(-0.05)


def test_characteristics_of_an_extended_narrow_table() -> None:
    # Measured rows within +-3.5 deg look like radians to the table check; the measured rows of
    # an extended table are known to be degrees. cl = 0.1 (alpha + 1): alpha0 -1 deg (by hand).
    alpha = np.arange(-3.0, 3.5, 0.5)
    extended = extend_full_range(Polar(alpha, 0.1 * (alpha + 1.0), 0.01 + 0.0 * alpha,
                                       assume_degrees=True))
    found = characteristics(extended)
    assert found.alpha0_deg == pytest.approx(-1.0, abs=1e-9)
    assert (found.cl_max, found.alpha_cl_max_deg) == (pytest.approx(0.4), 3.0)


def test_attached_hold_by_hand() -> None:
    # Angles -12..14 deg, alpha0 = 0, onsets at +10 and -8 deg for both rows.
    # Row 0: f = 1 from -6 to 8 deg, f = 1 - 1e-9 (within the tolerance) at -7, f = 1 exactly
    # at both onset angles (which are not "before" the onset), 0.9 at 9, 0.5 elsewhere: the
    # attached range is -7..8 deg (by hand).
    # Row 1: f = 1 only on -1..2 deg: the range is widened to the fit window alpha0 +- 5 deg.
    alpha = np.arange(-12.0, 15.0)
    row0 = np.full(alpha.size, 0.5)
    row0[(alpha >= -6.0) & (alpha <= 8.0)] = 1.0
    row0[alpha == -7.0] = 1.0 - 1e-9
    row0[alpha == -8.0] = 1.0
    row0[alpha == 9.0] = 0.9
    row0[alpha == 10.0] = 1.0
    row1 = np.where((alpha >= -1.0) & (alpha <= 2.0), 1.0, 0.5)
    mask = _attached_hold(alpha, np.vstack([row0, row1]), np.zeros(2),
                          np.full(2, 10.0), np.full(2, -8.0))
    np.testing.assert_array_equal(alpha[mask[0]], np.arange(-7.0, 9.0))
    np.testing.assert_array_equal(alpha[mask[1]], np.arange(-5.0, 6.0))


def _line_with_separated_points(separated_at: tuple[float, ...]) -> np.ndarray:
    # cl on the line 0.1 alpha except a quarter of it at the given angles: cl / cl_lin = 0.25,
    # sqrt = 0.5, f = (2 * 0.5 - 1)^2 = 0 (Kirchhoff inversion, by hand).
    alpha = np.arange(-10.0, 11.0)
    cl = 0.1 * alpha
    for angle in separated_at:
        cl[alpha == angle] *= 0.25
    return cl


def test_stall_onset_lies_beyond_the_fit_window() -> None:
    # Separated points at +-5 deg (the edge of the fit window alpha0 +- 5) and +-6 deg: the
    # onset is the first separated angle strictly beyond the window, +6 and -6 deg. A table that
    # never separates has its onsets at its ends, +10 and -10 deg.
    alpha = np.arange(-10.0, 11.0)
    rows = np.vstack([_line_with_separated_points((-6.0, -5.0, 5.0, 6.0)),
                      _line_with_separated_points(())])
    found = _dynamic_stall_arrays(alpha, rows, np.full(2, 0.1), np.zeros(2))
    np.testing.assert_array_equal(found.stall_onset_deg, [6.0, 10.0])
    np.testing.assert_array_equal(found.stall_onset_neg_deg, [-6.0, -10.0])


def test_dynamic_stall_inputs_raise_no_floating_point_warning() -> None:
    # At alpha0 the line is zero while the measured lift is not (0.01): the kernel handles the
    # division itself; under numpy's strictest error state nothing may be raised.
    alpha = np.arange(-10.0, 11.0)
    cl = 0.1 * alpha
    cl[alpha == 0.0] = 0.01
    with np.errstate(all="raise"):
        found = _dynamic_stall_arrays(alpha, cl[None, :], np.array([0.1]), np.array([0.0]))
    assert np.all(np.isfinite(found.f_separation))


def test_cylinder_has_no_onset_on_either_side() -> None:
    alpha = np.arange(-180.0, 181.0, 5.0)
    found = dynamic_stall_inputs(alpha, 0.0 * alpha)
    assert np.isnan(found.stall_onset_deg[0]) and np.isnan(found.stall_onset_neg_deg[0])


def test_separation_function_takes_the_given_zero_lift_angle() -> None:
    # cl = 0.1 (alpha + 2) with the line given as slope 0.1 /deg through alpha0 = -4 deg:
    # at alpha = 4, cl / cl_lin = 0.6 / 0.8 = 0.75, f = (2 sqrt(0.75) - 1)^2 = 0.535898384862
    # (by hand; Kirchhoff inversion as in dynamic_stall_inputs).
    alpha = np.arange(-10.0, 11.0)
    polar = Polar(alpha, 0.1 * (alpha + 2.0), 0.01 + 0.0 * alpha)
    f, _ = separation_function(polar, cl_alpha_per_rad=math.degrees(0.1), alpha0_deg=-4.0)
    assert f[alpha == 4.0][0] == pytest.approx((2.0 * math.sqrt(0.75) - 1.0) ** 2, abs=1e-12)


def test_separation_function_can_hold_the_attached_range() -> None:
    # The lift at 2 deg sits 10 % under the line cl = 0.1 alpha (f = (2 sqrt 0.9 - 1)^2 =
    # 0.8947, by hand); held, f is 1 there because 2 deg lies within alpha0 +- 5 deg.
    alpha = np.arange(-10.0, 11.0)
    cl = 0.1 * alpha
    cl[alpha == 2.0] *= 0.9
    polar = Polar(alpha, cl, 0.01 + 0.0 * alpha)
    loose, _ = separation_function(polar, cl_alpha_per_rad=math.degrees(0.1), alpha0_deg=0.0)
    held, _ = separation_function(polar, cl_alpha_per_rad=math.degrees(0.1), alpha0_deg=0.0,
                                  hold_attached=True)
    assert loose[alpha == 2.0][0] == pytest.approx((2.0 * math.sqrt(0.9) - 1.0) ** 2, abs=1e-12)
    assert held[alpha == 2.0][0] == 1.0


def test_lift_line_from_two_close_points() -> None:
    # Points 0.8 deg apart: n sum(x^2) - (sum x)^2 = 2 * 0.32 = 0.64 is small but positive, and
    # the line through them is still cl = 0.1 alpha (by hand).
    slope, alpha0 = _lift_line_arrays(np.array([-40.0, -0.4, 0.4, 40.0]),
                                      np.array([[-1.0, -0.04, 0.04, 1.0]]))
    assert slope[0] == pytest.approx(0.1, abs=1e-12)
    assert alpha0[0] == pytest.approx(0.0, abs=1e-12)


def test_lift_line_keeps_alpha0_within_the_search_range() -> None:
    # cl = 0.1 (alpha + 22) crosses zero at -22 deg, outside -20..20 deg: alpha0 is held at
    # -20 deg (documented); mirrored, +20 deg. Slope 0.1 /deg either way (by hand).
    alpha = np.arange(-30.0, 31.0)
    slope, alpha0 = _lift_line_arrays(alpha, np.vstack([0.1 * (alpha + 22.0),
                                                        0.1 * (alpha - 22.0)]))
    np.testing.assert_allclose(slope, [0.1, 0.1], atol=1e-12)
    np.testing.assert_array_equal(alpha0, [-20.0, 20.0])


def test_lift_line_of_tables_without_rising_lift() -> None:
    # Falling lift (cl = -0.1 alpha) and constant lift (0.3) have no attached-flow line: (0, 0),
    # computed without any floating-point warning (the constant row divides by a zero slope).
    alpha = np.arange(-10.0, 11.0)
    with np.errstate(all="raise"):
        slope, alpha0 = _lift_line_arrays(alpha, np.vstack([-0.1 * alpha, 0.3 + 0.0 * alpha]))
    np.testing.assert_array_equal(slope, [0.0, 0.0])
    np.testing.assert_array_equal(alpha0, [0.0, 0.0])


STALL_GRID_DEG = np.array([-40.0, -30.0, -20.0, -10.0, -1.0, 0.0, 1.0, 10.0, 20.0, 30.0, 40.0])


def test_positive_stall_angle_by_hand() -> None:
    # Rows of cl on STALL_GRID_DEG with their measured ranges; the stall angle is the angle of
    # the largest cl over (0, 30] deg among the measured angles (by hand):
    # 0: measured -40..40; the largest cl at 0 and 40 deg lie outside (0, 30]: 30 deg;
    # 1: measured -40..20: 20 deg (30 deg, larger, is not measured);
    # 2: measured 35..40: no measured angle in the window, the measured side gives 40 deg;
    # 3: measured -40..-10: no measured positive angle: the measured end -10 deg;
    # 4: measured -40..10, largest at 1 deg.
    cl = np.array([
        [0, 0, 0, 0, 0, 5, 0.5, 1, 2, 3, 4],
        [0, 0, 0, 0, 0, 0, 0.5, 1, 2, 9, 0],
        [0, 0, 0, 0, 0, 0, 0.5, 1, 2, 3, 1],
        [0, 0, 0, 0, 0, 0, 0.5, 1, 2, 3, 4],
        [0, 0, 0, 0, 0, 0, 3.0, 2, 0, 0, 0],
    ], dtype=float)
    low = np.array([-40.0, -40.0, 35.0, -40.0, -40.0])
    high = np.array([40.0, 20.0, 40.0, -10.0, 10.0])
    np.testing.assert_array_equal(_stall_angle_arrays(STALL_GRID_DEG, cl, low, high),
                                  [30.0, 20.0, 40.0, -10.0, 1.0])


def test_negative_stall_angle_by_hand() -> None:
    # The smallest cl over [-30, 0) deg among the measured angles (by hand):
    # 0: measured -40..40; smaller cl at -40 and 0 deg lie outside [-30, 0): -30 deg;
    # 1: measured -20..40: -20 deg (-30 deg, smaller, is not measured);
    # 2: measured 10..40: no measured negative angle: the measured end 10 deg;
    # 3: measured -10..40, smallest at -1 deg.
    cl = np.array([
        [-4, -3, -2, -1, -0.5, -5, 0, 0, 0, 0, 0],
        [0, -9, -2, -1, -0.5, 0, 0, 0, 0, 0, 0],
        [-4, -3, -2, -1, -0.5, 0, 0, 0, 0, 0, 0],
        [0, 0, 0, -2, -3.0, 0, 0, 0, 0, 0, 0],
    ], dtype=float)
    low = np.array([-40.0, -20.0, 10.0, -10.0])
    high = np.array([40.0, 40.0, 40.0, 40.0])
    np.testing.assert_array_equal(
        _stall_angle_arrays(STALL_GRID_DEG, cl, low, high, positive=False),
        [-30.0, -20.0, 10.0, -1.0])
