"""Every public function refuses bad parameters with a typed error naming the parameter, and
no message ever carries the text 'nan' (common practice, no source)."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.aero import (
    AeroError,
    ParameterError,
    augment_rotation,
    extend_full_range,
    interpolate_reynolds,
    interpolate_thickness,
    resample,
    uniform_grid,
    viterna_cd_max,
)

from .synthetic import kirchhoff_polar

BASE = kirchhoff_polar()
FULL = extend_full_range(BASE)

CALLS = {
    "cd_max": lambda v: extend_full_range(BASE, cd_max=v),
    "aspect_ratio": lambda v: viterna_cd_max(v),
    "alpha_stall_pos_deg": lambda v: extend_full_range(BASE, alpha_stall_pos_deg=v),
    "alpha_stall_neg_deg": lambda v: extend_full_range(BASE, alpha_stall_neg_deg=v),
    "trailing_edge_lift_factor": lambda v: extend_full_range(BASE, trailing_edge_lift_factor=v),
    "step_deg": lambda v: resample(BASE, step_deg=v),
    "chord_over_r": lambda v: augment_rotation(FULL, r_over_R=0.3, chord_over_r=v),
    "r_over_R": lambda v: augment_rotation(FULL, r_over_R=v, chord_over_r=0.1),
    "tip_speed_ratio": lambda v: augment_rotation(
        FULL, "du-selig", r_over_R=0.3, chord_over_r=0.1, tip_speed_ratio=v
    ),
    "fade_end_deg": lambda v: augment_rotation(
        FULL, r_over_R=0.3, chord_over_r=0.1, fade_end_deg=v
    ),
    "reynolds": lambda v: interpolate_reynolds(
        [BASE, kirchhoff_polar(reynolds=6e6)], v
    ),
    "thickness": lambda v: interpolate_thickness(
        [BASE, kirchhoff_polar(thickness=0.3)], v
    ),
}

bad_values = st.one_of(
    st.just(math.nan), st.just(math.inf), st.just(-math.inf), st.just(-1.0), st.just(500.0)
)


@settings(max_examples=60, deadline=None, database=None)
@given(parameter=st.sampled_from(sorted(CALLS)), value=bad_values)
def test_property_bad_parameters_typed(parameter: str, value: float) -> None:
    try:
        CALLS[parameter](value)
    except AeroError as error:
        assert "nan" not in str(error).lower()
        if isinstance(error, ParameterError):
            assert error.parameter == parameter
    # a few values are valid for some parameters (e.g. tip_speed_ratio=500): no error is fine


@pytest.mark.parametrize("parameter", sorted(CALLS))
def test_nan_always_refused(parameter: str) -> None:
    with pytest.raises(AeroError) as info:
        CALLS[parameter](math.nan)
    assert "nan" not in str(info.value).lower()


def test_grid_errors() -> None:
    with pytest.raises(ParameterError) as info:
        uniform_grid(math.nan)
    assert "nan" not in str(info.value).lower()


def test_error_texts_pinned() -> None:
    # The exact wording of each typed error (what an API client and a curator read).
    from polarsvc.aero import OutOfRangeError, PolarValidationError, UnknownMethodError
    from polarsvc.aero.errors import show_value

    assert show_value("abc") == "a non-numeric value"
    assert show_value(math.nan) == "undefined (not a number)"
    assert show_value(2.5e6) == "2.5e+06"
    both = PolarValidationError("bad", row=3, field="cd")
    assert (str(both), both.detail, both.row, both.field) == ("row 3, field 'cd': bad", "bad",
                                                              3, "cd")
    assert str(PolarValidationError("bad", row=3)) == "row 3: bad"
    assert str(PolarValidationError("bad", field="cd")) == "field 'cd': bad"
    assert str(PolarValidationError("bad")) == "bad"
    named = UnknownMethodError("model", "sideways", ("snel", "du-selig"))
    assert (named.parameter, named.value, named.valid) == ("model", "sideways",
                                                           ("snel", "du-selig"))
    assert str(named) == "model='sideways' is not known; valid names: snel, du-selig"
    assert str(UnknownMethodError("model", 3.0, ("snel",))) == (
        "model='3' is not known; valid names: snel")
    outside = OutOfRangeError("reynolds", 9e6, 1e6, 3e6, subject="airfoil 'skua-210'")
    assert (outside.value, outside.low, outside.high) == (9e6, 1e6, 3e6)
    assert str(outside) == (
        "reynolds=9e+06 lies outside the data range of airfoil 'skua-210' [1e+06, 3e+06]; "
        "pass clamp=True to use the nearest member (the result records the clamp)")
    assert str(OutOfRangeError("thickness", 0.5, 0.2, 0.4)).startswith(
        "thickness=0.5 lies outside the data range [0.2, 0.4]; ")
    with pytest.raises(ParameterError) as raised:
        resample(BASE, step_deg="fine")  # type: ignore[arg-type]
    assert str(raised.value) == "parameter 'step_deg': must be a number"
