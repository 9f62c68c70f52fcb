"""Quality flags pinned whole (code, level, message, field, value): curators read these
messages at upload, so their wording and numbers are part of the contract. Each expected
message is worked out by hand from the rule in polarsvc/aero/quality.py's docstring."""

from __future__ import annotations

import math

import numpy as np
import pytest

from polarsvc.aero import ParameterError, Polar, PolarValidationError
from polarsvc.aero.quality import QualityFlag, context_flags, table_flags


def _line(low: float, high: float, slope_per_deg: float) -> Polar:
    alpha = np.arange(low, high + 0.5, 1.0)
    return Polar(alpha, slope_per_deg * alpha, 0.01 + 0.0 * alpha)


def test_one_row_below_the_zero_lift_angle_is_a_warning() -> None:
    # cl = 0.1 alpha on -1..8 deg: alpha0 = 0, one row (-1 deg) below it
    assert table_flags(_line(-1.0, 8.0, 0.1)) == [QualityFlag(
        "one-sided", "warning",
        "1 rows below the zero-lift angle 0.00 deg (table spans -1..8 deg): the "
        "negative-stall side rests on one row", field="alpha_deg")]


def test_two_rows_below_the_zero_lift_angle_are_enough() -> None:
    assert table_flags(_line(-2.0, 7.0, 0.1)) == []


def test_nothing_below_the_zero_lift_angle_is_an_error() -> None:
    assert table_flags(_line(0.0, 9.0, 0.1)) == [QualityFlag(
        "one-sided", "error",
        "0 rows below the zero-lift angle 0.00 deg (table spans 0..9 deg): the table cannot "
        "be extended to -180..180 deg", field="alpha_deg")]


def test_nothing_above_the_zero_lift_angle_names_that_side() -> None:
    assert table_flags(_line(-9.0, 0.0, 0.1)) == [QualityFlag(
        "one-sided", "error",
        "0 rows above the zero-lift angle 0.00 deg (table spans -9..0 deg): the table cannot "
        "be extended to -180..180 deg", field="alpha_deg")]


def test_steep_lift_slope_warning() -> None:
    # 0.2 /deg = 11.459 /rad = 1.82 x 2 pi, outside the warning band 0.55..1.25 x 2 pi
    slope = 0.2 * 180.0 / math.pi
    assert table_flags(_line(-4.0, 5.0, 0.2)) == [QualityFlag(
        "lift-slope", "warning",
        f"lift slope {slope:.3g} per rad ({slope / (2 * math.pi):.3g} x 2 pi) lies outside "
        "0.55..1.25 x 2 pi", field="cl", value=pytest.approx(slope))]


def _pg(mach: float) -> float:
    # Prandtl-Glauert factor 1 / sqrt(1 - M^2) (Glauert 1928, Proc. R. Soc. A 118)
    return 1.0 / math.sqrt(1.0 - mach * mach)


def test_context_flags_of_a_family_member() -> None:
    # Mach 0.6 against 0.1 and 0.55: the nearest compressibility factor is that of 0.55
    # (1.197 against 1.25), differing by |1.25 / 1.1974 - 1| = 4.4 % > 2 %.
    member = _line(-4.0, 5.0, 0.1)
    member = Polar(member.alpha_deg, member.cl, member.cd, mach=0.6)
    difference = abs(_pg(0.6) / _pg(0.55) - 1.0)
    assert context_flags(member, in_family=True, mach_stated=False,
                         family_machs=[0.55, 0.1]) == [
        QualityFlag(
            "reynolds-missing", "error",
            "no Reynolds number: a family member without one cannot be interpolated to a "
            "station's Reynolds number; state it ('# reynolds: 3e6')", field="reynolds"),
        QualityFlag("mach-not-stated", "warning",
                    "no Mach number stated; stored as 0 (incompressible)", field="mach",
                    value=0.0),
        QualityFlag(
            "mach-inconsistent", "error",
            f"Mach 0.6 against 0.1, 0.55 in the family: the compressibility factors differ "
            f"by {100 * difference:.1f} % (more than 2 %)", field="mach", value=0.6),
    ]
    assert f"{100 * difference:.1f}" == "4.4"


@pytest.mark.parametrize(
    ("arrays", "field", "message"),
    [
        (([0.0, 1.0], [0.0, 0.1], [[0.01, 0.01]]), "cd",
         "expected a one-dimensional column, got shape (1, 2)"),
        (([0.0, 1.0], [0.0, 0.1], [0.01, 0.01], [[0.0, 0.0]]), "cm",
         "expected a one-dimensional column, got shape (1, 2)"),
        (([0.0], [0.0], [0.01]), "alpha_deg", "a polar needs at least 2 rows, got 1"),
        (([1.0, 1.0], [0.0, 0.0], [0.01, 0.01]), "alpha_deg",
         "a polar needs at least 2 distinct angles"),
    ],
)
def test_table_refusals_name_their_field(arrays: tuple, field: str, message: str) -> None:
    with pytest.raises(PolarValidationError) as raised:
        Polar(*[np.asarray(a, dtype=float) for a in arrays], assume_degrees=True)
    assert raised.value.field == field
    assert raised.value.detail == message


def test_reynolds_number_must_be_positive() -> None:
    alpha = np.array([-1.0, 0.0, 1.0])
    with pytest.raises(ParameterError) as raised:
        Polar(alpha, 0.1 * alpha, 0.01 + 0 * alpha, reynolds=0.0, assume_degrees=True)
    assert str(raised.value) == "parameter 'reynolds': must be a positive finite number, got 0"
    assert Polar(alpha, 0.1 * alpha, 0.01 + 0 * alpha, reynolds=0.5,
                 assume_degrees=True).reynolds == 0.5
