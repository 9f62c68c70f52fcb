"""Validation of the section table type (the rules are common practice, no source)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.aero import AeroError, ParameterError, Polar, PolarValidationError

ALPHA = [-4.0, 0.0, 4.0, 8.0]
CL = [-0.2, 0.2, 0.6, 1.0]
CD = [0.01, 0.008, 0.01, 0.015]


def test_valid_polar_sorted_and_immutable() -> None:
    p = Polar([8.0, -4.0, 4.0, 0.0], [1.0, -0.2, 0.6, 0.2], [0.015, 0.01, 0.01, 0.008])
    np.testing.assert_array_equal(p.alpha_deg, ALPHA)
    np.testing.assert_array_equal(p.cl, CL)
    np.testing.assert_array_equal(p.cd, CD)
    with pytest.raises(ValueError):
        p.cl[0] = 5.0


@pytest.mark.parametrize(
    ("column", "bad"), [("alpha_deg", math.nan), ("cl", math.inf), ("cd", math.nan)]
)
def test_non_finite_names_row_and_field(column: str, bad: float) -> None:
    data = {"alpha_deg": list(ALPHA), "cl": list(CL), "cd": list(CD)}
    data[column][2] = bad
    with pytest.raises(PolarValidationError) as info:
        Polar(**data)
    assert info.value.row == 2 and info.value.field == column
    assert "nan" not in str(info.value).lower()


def test_non_finite_cm() -> None:
    with pytest.raises(PolarValidationError) as info:
        Polar(ALPHA, CL, CD, cm=[0.0, math.nan, 0.0, 0.0])
    assert (info.value.row, info.value.field) == (1, "cm")
    assert "nan" not in str(info.value).lower()


def test_duplicate_angle_with_different_values_refused() -> None:
    with pytest.raises(PolarValidationError) as info:
        Polar([0.0, 4.0, 4.0, 8.0], [0.2, 0.6, 0.7, 1.0], CD)
    assert info.value.field == "cl" and info.value.row == 2


def test_identical_duplicate_merged() -> None:
    p = Polar([0.0, 4.0, 4.0, 8.0], [0.2, 0.6, 0.6, 1.0], [0.01, 0.01, 0.01, 0.02])
    np.testing.assert_array_equal(p.alpha_deg, [0.0, 4.0, 8.0])
    assert p.size == 3


@pytest.mark.parametrize("bad", [0.0, -0.01])
def test_non_positive_drag_refused(bad: float) -> None:
    cd = list(CD)
    cd[3] = bad
    with pytest.raises(PolarValidationError) as info:
        Polar(ALPHA, CL, cd)
    assert (info.value.row, info.value.field) == (3, "cd")


def test_angle_outside_range_refused() -> None:
    with pytest.raises(PolarValidationError) as info:
        Polar([-4.0, 0.0, 4.0, 181.0], CL, CD)
    assert (info.value.row, info.value.field) == (3, "alpha_deg")


def test_radians_looking_angles_refused() -> None:
    radians = np.radians(np.arange(-30.0, 41.0, 5.0))
    with pytest.raises(PolarValidationError) as info:
        Polar(radians, 2 * np.pi * radians, 0.01 + 0 * radians)
    assert info.value.field == "alpha_deg" and "radians" in str(info.value)
    # an explicit statement that the numbers are degrees is honoured
    Polar(radians, 2 * np.pi * radians, 0.01 + 0 * radians, assume_degrees=True)


def test_unequal_lengths_refused() -> None:
    with pytest.raises(PolarValidationError) as info:
        Polar(ALPHA, CL[:3], CD)
    assert info.value.field == "cl"
    with pytest.raises(PolarValidationError) as info:
        Polar(ALPHA, CL, CD, cm=[0.0, 0.0])
    assert info.value.field == "cm"


def test_too_few_rows_refused() -> None:
    with pytest.raises(PolarValidationError):
        Polar([1.0], [0.1], [0.01])
    with pytest.raises(PolarValidationError):
        Polar([1.0, 1.0], [0.1, 0.1], [0.01, 0.01])


def test_not_numbers_refused_without_echo() -> None:
    with pytest.raises(PolarValidationError) as info:
        Polar(["banana", 1.0], [0.1, 0.2], [0.01, 0.01])
    assert info.value.field == "alpha_deg"
    assert "nan" not in str(info.value).lower()


@pytest.mark.parametrize(
    ("conditions", "parameter"),
    [
        ({"reynolds": -1.0}, "reynolds"),
        ({"reynolds": math.nan}, "reynolds"),
        ({"mach": 1.2}, "mach"),
        ({"mach": math.nan}, "mach"),
        ({"thickness": 21.0}, "thickness"),
        ({"thickness": math.nan}, "thickness"),
        ({"surface": "wet"}, "surface"),
    ],
)
def test_bad_conditions(conditions: dict, parameter: str) -> None:
    with pytest.raises(ParameterError) as info:
        Polar(ALPHA, CL, CD, **conditions)
    assert info.value.parameter == parameter
    assert "nan" not in str(info.value).lower()


def test_with_table_appends_history() -> None:
    p = Polar(ALPHA, CL, CD, reynolds=1e6)
    q = p.with_table(ALPHA, CL, CD, None, step={"step": "x"}, reynolds=2e6)
    assert q.history == ({"step": "x"},) and q.reynolds == 2e6 and p.history == ()
    assert p.table_equal(Polar(ALPHA, CL, CD))


finite_or_not = st.one_of(
    st.floats(-200, 200, allow_nan=False), st.just(math.nan), st.just(math.inf)
)


@settings(max_examples=60, deadline=None, database=None)
@given(
    alpha=st.lists(finite_or_not, min_size=0, max_size=8),
    cl=st.lists(finite_or_not, min_size=0, max_size=8),
    cd=st.lists(st.one_of(st.floats(-1, 2), st.just(math.nan)), min_size=0, max_size=8),
)
def test_property_errors_typed_and_never_say_nan(alpha, cl, cd) -> None:
    """Whatever the input, construction succeeds or raises an AeroError whose message never
    carries the text 'nan' (common practice, no source)."""
    try:
        p = Polar(alpha, cl, cd)
    except AeroError as error:
        assert "nan" not in str(error).lower()
    else:
        assert np.all(np.diff(p.alpha_deg) > 0) and np.all(p.cd > 0)
