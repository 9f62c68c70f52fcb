"""Magnitude, spike, row-count and lift-line flags pinned whole (code, level, message, field,
row, angle, value).

Every table here is a straight lift line cl = 0.1 alpha [deg] with constant drag 0.01 on
-10..10 deg in 1 deg steps (21 rows, zero-lift angle 0, slope 0.1 per deg = 5.73 per rad =
0.91 x 2 pi, inside the warning band): it carries no flag (checked first), so each flag below
comes from the one value changed. The bounds are those of polarsvc/aero/quality.py's
docstring (|cl| 2.5 / 4.5, cd 1.5 / 3.0, |cm| 1.5, absurd 1000 / 100 000, spike floor cl 0.15,
cd 0.02, cm 0.05 with 10 x the median residual, 5 / 10 rows, liftless at t/c 0.6 or |cl| 0.05;
common practice or the sources named there). Residuals of the spike check are worked by hand:
a value raised by d on a straight line stands d off the line through its neighbours, and each
neighbour -d/2 off its own.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from polarsvc.aero import Polar
from polarsvc.aero.quality import QualityFlag, table_flags

ALPHA = np.arange(-10.0, 10.5, 1.0)


def _table(cl=None, cd=None, cm=None, thickness=None) -> Polar:
    return Polar(
        ALPHA,
        0.1 * ALPHA if cl is None else np.asarray(cl, dtype=float),
        np.full(ALPHA.size, 0.01) if cd is None else np.asarray(cd, dtype=float),
        None if cm is None else np.asarray(cm, dtype=float),
        thickness=thickness,
    )


def _changed(column: str, row: int, value: float) -> dict[str, np.ndarray]:
    base = {"cl": 0.1 * ALPHA, "cd": np.full(ALPHA.size, 0.01), "cm": np.zeros(ALPHA.size)}
    changed = base[column].copy()
    changed[row] = value
    return {column: changed}


def test_the_straight_line_carries_no_flag() -> None:
    assert table_flags(_table()) == []
    assert table_flags(_table(cm=np.zeros(ALPHA.size))) == []


@pytest.mark.parametrize(
    ("column", "row", "value", "expected"),
    [
        # cl 3.0 at 10 deg (the last row, outside the +-5 deg fit window): above 2.5
        ("cl", 20, 3.0, QualityFlag(
            "cl-magnitude", "warning",
            "|cl| = 3 exceeds 2.5, above single-element 2D sections",
            field="cl", row=20, alpha_deg=10.0, value=3.0)),
        # cl -5.0 at -10 deg: |cl| above 4.5; the value is reported with its sign
        ("cl", 0, -5.0, QualityFlag(
            "cl-magnitude", "error",
            "|cl| = 5 exceeds 4.5, beyond what a 2D section reaches",
            field="cl", row=0, alpha_deg=-10.0, value=-5.0)),
        # cd 3.5 at 10 deg: above 3.0
        ("cd", 20, 3.5, QualityFlag(
            "cd-magnitude", "error",
            "cd = 3.5 exceeds 3 (a flat plate normal to the flow has about 2.0)",
            field="cd", row=20, alpha_deg=10.0, value=3.5)),
        # cm -2.0 at -10 deg: |cm| above 1.5, reported with its sign
        ("cm", 0, -2.0, QualityFlag(
            "cm-magnitude", "error",
            "|cm| = 2 exceeds 1.5 (normal force 2.0 at 0.75 chord from the quarter chord)",
            field="cm", row=0, alpha_deg=-10.0, value=-2.0)),
        # cm 2000 at 10 deg: beyond the absurd bound 1000; nothing else is checked
        ("cm", 20, 2000.0, QualityFlag(
            "absurd-magnitude", "error",
            "cm = 2000 is beyond 1000: not a coefficient of any section",
            field="cm", row=20, alpha_deg=10.0, value=2000.0)),
        # cd 2e5 at -10 deg: beyond 100 000 (flat plate drag in counts is 20 000)
        ("cd", 0, 2e5, QualityFlag(
            "absurd-magnitude", "error",
            "cd = 200000 is beyond 100000: not a coefficient of any section",
            field="cd", row=0, alpha_deg=-10.0, value=2e5)),
    ],
)
def test_one_value_out_of_bounds(column: str, row: int, value: float,
                                 expected: QualityFlag) -> None:
    columns = {"cm": np.zeros(ALPHA.size), **_changed(column, row, value)}
    assert table_flags(_table(**columns)) == [expected]


def test_magnitudes_at_their_bounds_are_accepted() -> None:
    # the bounds themselves are plausible: |cl| = 2.5, cd = 3.0, |cm| = 1.5, cm = 1000
    for column, value in (("cl", 2.5), ("cl", -2.5), ("cd", 3.0), ("cm", 1.5), ("cm", -1.5)):
        columns = {"cm": np.zeros(ALPHA.size), **_changed(column, 20, value)}
        assert table_flags(_table(**columns)) == []
    flags = table_flags(_table(**_changed("cm", 20, 1000.0)))
    assert [f.code for f in flags] == ["cm-magnitude"]
    flags = table_flags(_table(**_changed("cl", 20, 4.5)))
    assert [(f.code, f.level) for f in flags] == [("cl-magnitude", "warning")]


def test_absurd_lift_and_drag_are_both_named_and_stop_the_checks() -> None:
    cl = 0.1 * ALPHA
    cl[3] = -1e300
    cd = np.full(ALPHA.size, 0.01)
    cd[4] = 3e5
    flags = table_flags(_table(cl=cl, cd=cd))
    assert flags == [
        QualityFlag("absurd-magnitude", "error",
                    "cl = -1e+300 is beyond 1000: not a coefficient of any section",
                    field="cl", row=3, alpha_deg=-7.0, value=-1e300),
        QualityFlag("absurd-magnitude", "error",
                    "cd = 300000 is beyond 100000: not a coefficient of any section",
                    field="cd", row=4, alpha_deg=-6.0, value=3e5),
    ]
    assert [f.overridable for f in flags] == [False, False]


def test_drag_in_counts_names_the_smallest_value_and_its_spike() -> None:
    # 100 counts everywhere but 80 at -7 deg (row 3): the smallest cd is 80; row 3 stands
    # 80 - 100 = -20 off the line through its neighbours, each of them +10 off theirs
    cd = np.full(ALPHA.size, 100.0)
    cd[3] = 80.0
    assert table_flags(_table(cd=cd)) == [
        QualityFlag("cd-counts", "error",
                    "the smallest cd is 80: the column looks like drag counts (1 count = "
                    "0.0001) or a percentage, not coefficients",
                    field="cd", row=3, alpha_deg=-7.0, value=80.0),
        QualityFlag("spike", "warning",
                    "cd = 80 stands -20 off the line through its neighbours (an isolated "
                    "outlier)", field="cd", row=3, alpha_deg=-7.0, value=80.0),
    ]
    assert table_flags(_table(cd=np.full(ALPHA.size, 1.5))) == []  # 1.5 itself is not counts


@pytest.mark.parametrize("row", [1, 19])
def test_spikes_next_to_the_table_ends_are_found(row: int) -> None:
    # the first and last interior rows have one neighbour residual only; the end row counts
    # as deviating the other way. cd 0.51 against 0.01: +0.5 off the line.
    cd = np.full(ALPHA.size, 0.01)
    cd[row] = 0.51
    assert table_flags(_table(cd=cd)) == [QualityFlag(
        "spike", "warning",
        "cd = 0.51 stands +0.5 off the line through its neighbours (an isolated outlier)",
        field="cd", row=row, alpha_deg=float(ALPHA[row]), value=0.51)]


def test_spike_floor_and_the_moment_column() -> None:
    # cm raised by 0.06 (above the cm floor 0.05) is a spike, by 0.04 it is not; the median
    # residual of a straight line is 0, so the floor decides
    cm = np.zeros(ALPHA.size)
    cm[10] = 0.06
    assert table_flags(_table(cm=cm)) == [QualityFlag(
        "spike", "warning",
        "cm = 0.06 stands +0.06 off the line through its neighbours (an isolated outlier)",
        field="cm", row=10, alpha_deg=0.0, value=0.06)]
    cm[10] = 0.04
    assert table_flags(_table(cm=cm)) == []
    # cd raised by 0.019 stays under the cd floor 0.02 at 5 deg
    cd = np.full(ALPHA.size, 0.01)
    cd[15] = 0.029
    assert table_flags(_table(cd=cd)) == []


def test_a_neighbour_pair_is_a_step_not_a_spike() -> None:
    # two adjacent rows raised together: each stands +0.25 off its line, with one neighbour
    # residual of the same sign, so neither is isolated
    cd = np.full(ALPHA.size, 0.01)
    cd[[12, 13]] = 0.51
    assert table_flags(_table(cd=cd)) == []


def test_five_rows_are_checked_for_spikes_and_four_are_too_few() -> None:
    # With five rows there are three residuals; drag 0.52, 1, 1.5, 1, 0.52 gives -0.01, +0.5,
    # -0.01 (by hand: 1 - (0.52 + 1.5) / 2 and 1.5 - (1 + 1) / 2): median 0.01, threshold
    # max(10 x 0.01, 0.02) = 0.1, so the middle row is an isolated outlier.
    alpha = np.array([-2.0, -1.0, 0.0, 1.0, 2.0])
    cd = np.array([0.52, 1.0, 1.5, 1.0, 0.52])
    assert table_flags(Polar(alpha, 0.1 * alpha, cd, assume_degrees=True)) == [
        QualityFlag("few-rows", "warning", "only 5 rows", field="alpha_deg", value=5.0),
        QualityFlag("spike", "warning",
                    "cd = 1.5 stands +0.5 off the line through its neighbours (an isolated "
                    "outlier)", field="cd", row=2, alpha_deg=0.0, value=1.5),
    ]
    four = Polar(alpha[:4], 0.1 * alpha[:4], cd[:4], assume_degrees=True)
    assert table_flags(four) == [QualityFlag(
        "too-few-rows", "error",
        "4 rows; at least 5 are needed to fit the lift line and extend the table",
        field="alpha_deg", value=4.0)]
    nine = Polar(ALPHA[:9] + 4.0, 0.1 * (ALPHA[:9] + 4.0), np.full(9, 0.01))
    assert table_flags(nine) == [
        QualityFlag("few-rows", "warning", "only 9 rows", field="alpha_deg", value=9.0)]


def test_no_lift_line_without_two_rows_near_zero_lift() -> None:
    # one row within the zero-lift search window -20..20 deg (characteristics.py)
    alpha = np.array([-40.0, -35.0, -30.0, -25.0, 0.0, 25.0, 30.0, 35.0, 40.0])
    polar = Polar(alpha, 0.01 * alpha, np.full(alpha.size, 0.01))
    assert table_flags(polar) == [
        QualityFlag("few-rows", "warning", "only 9 rows", field="alpha_deg", value=9.0),
        QualityFlag("lift-slope", "error",
                    "fewer than 2 rows within -20..20 deg: no lift line can be fitted",
                    field="alpha_deg"),
    ]


def test_no_lift_line_without_rows_near_the_zero_lift_angle() -> None:
    # two rows in the search window, but none within 5 deg of the crossing at 0 deg
    alpha = np.array([-40.0, -30.0, -15.0, 15.0, 30.0, 40.0])
    polar = Polar(alpha, 0.01 * alpha, np.full(alpha.size, 0.01))
    flags = table_flags(polar)
    assert [(f.code, f.level, f.field) for f in flags] == [
        ("few-rows", "warning", "alpha_deg"), ("lift-slope", "error", "cl")]
    assert flags[1].message.startswith("no lift line can be fitted: ")


def test_falling_lift_and_a_slope_below_the_error_band() -> None:
    # a line that never rises has no attached lift line: its slope is reported as 0 (the
    # convention of characteristics.attached_lift_line for tables without lift)
    falling = table_flags(_table(cl=-0.1 * ALPHA))
    assert falling == [QualityFlag(
        "lift-slope", "error",
        "cl does not rise with the angle of attack near the zero-lift angle (is the sign of "
        "cl or of the angles reversed?)", field="cl", value=0.0)]
    # 0.02 per deg = 1.146 per rad = 0.18 x 2 pi, below 0.25 x 2 pi
    slope = 0.02 * 180.0 / math.pi
    assert table_flags(_table(cl=0.02 * ALPHA)) == [QualityFlag(
        "lift-slope", "error",
        "lift slope 1.15 per rad (0.18 x 2 pi) lies outside 0.25..2 x 2 pi", field="cl",
        value=pytest.approx(slope))]


def test_radians_under_a_degree_header_message() -> None:
    # cl = 0.1 per deg written against angles in radians: read as degrees the slope is
    # 0.1 (180/pi)^2 = 328.28 per rad = 52.25 x 2 pi; read as radians 5.73 per rad = 0.91 x
    # 2 pi (by hand)
    radians = np.radians(ALPHA)
    polar = Polar(radians, 0.1 * ALPHA, np.full(ALPHA.size, 0.01))
    slope = 0.1 * (180.0 / math.pi) ** 2
    assert table_flags(polar) == [QualityFlag(
        "angles-radians", "error",
        "the lift slope is 328 per rad (52.25 x 2 pi) when the angles are read as degrees, "
        "0.91 x 2 pi when read as radians: the angle column holds radians; name it "
        "'alpha_rad' or state 'angle_unit: rad'", field="alpha_deg",
        value=pytest.approx(slope))]


def test_liftless_sections_skip_the_lift_checks_at_their_bounds() -> None:
    # t/c 0.6 or more, or |cl| never above 0.05: a falling lift is not checked
    assert table_flags(_table(cl=-0.1 * ALPHA, thickness=0.6)) == []
    assert [f.code for f in table_flags(_table(cl=-0.1 * ALPHA, thickness=0.59))] == [
        "lift-slope"]
    assert table_flags(_table(cl=-0.005 * ALPHA)) == []  # |cl| at most 0.05
    assert [f.code for f in table_flags(_table(cl=-0.00501 * ALPHA))] == ["lift-slope"]


def test_flag_as_dict() -> None:
    flag = QualityFlag("spike", "warning", "m", field="cd", row=3, alpha_deg=-7.0, value=0.5)
    assert flag.as_dict() == {"code": "spike", "level": "warning", "message": "m",
                              "field": "cd", "row": 3, "alpha_deg": -7.0, "value": 0.5}
    assert not flag.overridable
    assert QualityFlag("cd-counts", "error", "m").overridable


def test_errors_of_keeps_the_error_level_only() -> None:
    from polarsvc.aero.quality import errors_of

    error = QualityFlag("cd-counts", "error", "m")
    warning = QualityFlag("few-rows", "warning", "m")
    assert errors_of([warning, error, warning]) == [error]
    assert errors_of([warning]) == []


def _rows(alpha: list[float], cl_per_deg: float = 0.01, alpha0: float = 0.0) -> Polar:
    angles = np.asarray(alpha, dtype=float)
    return Polar(angles, cl_per_deg * (angles - alpha0), np.full(angles.size, 0.01),
                 assume_degrees=True)


@pytest.mark.parametrize("alpha", [[-40.0, -30.0, -20.0, 5.0, 30.0, 40.0],
                                   [-40.0, -30.0, -5.0, 20.0, 30.0, 40.0]])
def test_the_search_window_includes_its_ends(alpha: list[float]) -> None:
    # two rows within -20..20 deg, ends included: the lift line is attempted, and fails for
    # want of rows within 5 deg of the crossing at 0 deg
    flags = table_flags(_rows(alpha))
    assert [(f.code, f.level, f.field) for f in flags] == [
        ("few-rows", "warning", "alpha_deg"), ("lift-slope", "error", "cl")]
    assert flags[1].message.startswith("no lift line can be fitted: ")


def test_without_a_lift_line_the_sides_are_counted_about_zero() -> None:
    # one row within the search window (0.5 deg); about 0 deg one row lies below
    flags = table_flags(_rows([-40.0, 0.5, 25.0, 30.0, 35.0, 40.0]))
    assert flags[1:] == [
        QualityFlag("lift-slope", "error",
                    "fewer than 2 rows within -20..20 deg: no lift line can be fitted",
                    field="alpha_deg"),
        QualityFlag("one-sided", "warning",
                    "1 rows below the zero-lift angle 0.00 deg (table spans -40..40 deg): the "
                    "negative-stall side rests on one row", field="alpha_deg"),
    ]


def test_sides_of_the_zero_lift_angle_and_of_zero() -> None:
    # alpha0 = -2 deg on -2..7 deg: nothing below it although the table spans 0 deg
    assert table_flags(_rows([-2.0 + k for k in range(10)], 0.1, -2.0)) == [QualityFlag(
        "one-sided", "error",
        "0 rows below the zero-lift angle -2.00 deg (table spans -2..7 deg): the table cannot "
        "be extended to -180..180 deg", field="alpha_deg")]
    # alpha0 = 2.5 deg on 0..9 deg: three rows below it, but no data below 0 deg
    assert table_flags(_rows([float(k) for k in range(10)], 0.1, 2.5)) == [QualityFlag(
        "one-sided", "error",
        "3 rows below the zero-lift angle 2.50 deg (table spans 0..9 deg): the table cannot "
        "be extended to -180..180 deg", field="alpha_deg")]
    # alpha0 = -2.5 deg on -9..0 deg: three rows above it, no data above 0 deg
    assert table_flags(_rows([-9.0 + k for k in range(10)], 0.1, -2.5)) == [QualityFlag(
        "one-sided", "error",
        "3 rows above the zero-lift angle -2.50 deg (table spans -9..0 deg): the table cannot "
        "be extended to -180..180 deg", field="alpha_deg")]
    # -8..1 deg around alpha0 = -3 deg: five rows each side and data on both sides of 0
    assert table_flags(_rows([-8.0 + k for k in range(10)], 0.1, -3.0)) == []


def test_zero_lift_angle_in_messages_to_two_decimals() -> None:
    # 1.234 deg is shown as 1.23; -0.004 deg as 0.00 (not -0.00)
    one_row_below = [-1.0 + k for k in range(10)]
    for alpha0, shown in ((1.234, "1.23"), (-0.004, "0.00")):
        rows = [a + alpha0 + 0.5 for a in one_row_below]
        (flag,) = table_flags(_rows(rows, 0.1, alpha0))
        assert flag.message.startswith(f"1 rows below the zero-lift angle {shown} deg")


def test_a_shallow_rising_slope_is_outside_the_band() -> None:
    # 0.01 per deg = 0.573 per rad = 0.09 x 2 pi: rising, but below 0.25 x 2 pi
    slope = 0.01 * 180.0 / math.pi
    assert table_flags(_table(cl=0.01 * ALPHA)) == [QualityFlag(
        "lift-slope", "error",
        "lift slope 0.573 per rad (0.09 x 2 pi) lies outside 0.25..2 x 2 pi", field="cl",
        value=pytest.approx(slope))]


def test_a_step_next_to_the_table_end_is_not_a_spike() -> None:
    # rows 18 and 19 raised together: +0.25 each off their lines, neither isolated
    cd = np.full(ALPHA.size, 0.01)
    cd[[18, 19]] = 0.51
    assert table_flags(_table(cd=cd)) == []


def test_mach_difference_in_the_message() -> None:
    # Mach 0.6 against 0: 1 / sqrt(1 - 0.36) = 1.25, a difference of 25.0 % (by hand)
    from polarsvc.aero.quality import context_flags

    member = Polar(ALPHA, 0.1 * ALPHA, np.full(ALPHA.size, 0.01), mach=0.6, reynolds=1e6)
    (flag,) = context_flags(member, in_family=True, family_machs=[0.0])
    assert flag.message == ("Mach 0.6 against 0 in the family: the compressibility factors "
                            "differ by 25.0 % (more than 2 %)")
