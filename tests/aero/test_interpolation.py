"""Reynolds and thickness interpolation and the bracketing weights."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.aero import (
    AeroError,
    OutOfRangeError,
    ParameterError,
    Polar,
    UnknownMethodError,
    bracket_weights,
    extend_full_range,
    interpolate_reynolds,
    interpolate_thickness,
    resample,
)

from .synthetic import cylinder, kirchhoff_polar


def re_members():
    return [
        kirchhoff_polar(reynolds=re, alpha_sep_deg=sep)
        for re, sep in ((1e6, 11.0), (3e6, 13.0), (9e6, 15.0))
    ]


def family(with_cylinder: bool = True):
    members = [
        resample(extend_full_range(kirchhoff_polar(thickness=t, alpha_sep_deg=18 - 20 * t,
                                                   slope_per_rad=6.5 - 3 * t)), step_deg=1.0)
        for t in (0.18, 0.25, 0.30, 0.40)
    ]
    if with_cylinder:
        members.append(resample(cylinder(), step_deg=1.0))
    return members


def test_reynolds_linear_in_log10() -> None:
    members = re_members()
    # log10(3e6 * sqrt 3) lies halfway between log10 3e6 and log10 9e6 (arithmetic)
    q = interpolate_reynolds(members, 3e6 * math.sqrt(3.0))
    np.testing.assert_allclose(q.cl, 0.5 * (members[1].cl + members[2].cl), rtol=1e-12)
    np.testing.assert_allclose(q.cd, 0.5 * (members[1].cd + members[2].cd), rtol=1e-12)
    assert q.reynolds == pytest.approx(3e6 * math.sqrt(3.0))
    step = q.history[-1]
    assert step["step"] == "interpolate_reynolds" and step["clamped"] is False


def test_reynolds_member_unchanged() -> None:
    members = re_members()
    q = interpolate_reynolds(members[::-1], 3e6)
    assert q.table_equal(members[1])


def test_reynolds_out_of_range_and_clamp() -> None:
    members = re_members()
    with pytest.raises(OutOfRangeError) as info:
        interpolate_reynolds(members, 2e7)
    assert info.value.parameter == "reynolds"
    q = interpolate_reynolds(members, 2e7, clamp=True)
    assert q.table_equal(members[2])
    step = q.history[-1]
    assert step["clamped"] is True and step["requested"] == 2e7 and step["used"] == 9e6


def test_reynolds_mixed_inputs_refused() -> None:
    members = re_members()
    with pytest.raises(ParameterError):
        interpolate_reynolds([members[0], kirchhoff_polar(reynolds=2e6, surface="rough")], 1.5e6)
    with pytest.raises(ParameterError):
        interpolate_reynolds([members[0], members[0]], 1e6)
    with pytest.raises(ParameterError) as info:
        interpolate_reynolds(members, math.nan)
    assert "nan" not in str(info.value).lower()


def test_reynolds_different_grids_on_common_range() -> None:
    a = kirchhoff_polar(reynolds=1e6, low=-20, high=25)
    b = kirchhoff_polar(reynolds=4e6, low=-15, high=20, step=0.5)
    q = interpolate_reynolds([a, b], 2e6)
    assert q.alpha_deg[0] == -15.0 and q.alpha_deg[-1] == 20.0


def test_thickness_linear_between_neighbours() -> None:
    members = family()
    q = interpolate_thickness(members, 0.27)
    w = (0.27 - 0.25) / (0.30 - 0.25)  # linear in t/c (common practice, no source)
    np.testing.assert_allclose(q.cl, (1 - w) * members[1].cl + w * members[2].cl, rtol=1e-12)
    assert q.thickness == 0.27


@pytest.mark.parametrize("method", ["linear", "pchip"])
def test_thickness_member_unchanged(method: str) -> None:
    members = family()
    for member in members:
        q = interpolate_thickness(members, member.thickness, method=method)
        assert q.table_equal(member)


def test_thickness_pchip_worked_by_hand() -> None:
    # three members with constant drag 1.0, 2.0, 2.5 at t/c 0.2, 0.3, 0.5. PCHIP (Fritsch &
    # Carlson 1980, SIAM J. Numer. Anal. 17(2); interior derivative the weighted harmonic
    # mean of the secants, end derivative the three-point formula), worked by hand:
    # secants 10 and 2.5; interior d = (0.5 + 0.4) / (0.5/10 + 0.4/2.5) = 4.2857143;
    # end d0 = ((0.2 + 0.2) 10 - 0.1 * 2.5) / 0.3 = 12.5; at t = 0.25 (s = 0.5):
    # 0.5 * 1 + 0.125 * 0.1 * 12.5 + 0.5 * 2 - 0.125 * 0.1 * 4.2857143 = 1.6026786
    alpha = np.array([-10.0, 0.0, 10.0])
    members = [
        Polar(alpha, 0.1 * alpha, np.full(3, value), thickness=t, reynolds=3e6)
        for t, value in ((0.2, 1.0), (0.3, 2.0), (0.5, 2.5))
    ]
    q = interpolate_thickness(members, 0.25, method="pchip")
    np.testing.assert_allclose(q.cd, 1.6026786, rtol=0, atol=1e-7)
    # linear would give 1.5: the method matters
    assert interpolate_thickness(members, 0.25).cd[0] == pytest.approx(1.5, abs=1e-15)


def test_cylinder_member_between_thick_section_and_cylinder() -> None:
    members = family()
    q = interpolate_thickness(members, 0.7)
    w = (0.7 - 0.4) / (1.0 - 0.4)
    np.testing.assert_allclose(q.cl, (1 - w) * members[3].cl, rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(q.cd, (1 - w) * members[3].cd + w * 1.2, rtol=1e-12)


def test_thickness_out_of_range_clamp_and_method() -> None:
    members = family(with_cylinder=False)
    with pytest.raises(OutOfRangeError) as info:
        interpolate_thickness(members, 0.15)
    assert info.value.parameter == "thickness"
    q = interpolate_thickness(members, 0.15, clamp=True)
    assert q.table_equal(members[0])
    step = q.history[-1]
    assert step["clamped"] is True and step["requested"] == 0.15 and step["used"] == 0.18
    with pytest.raises(UnknownMethodError):
        interpolate_thickness(members, 0.2, method="cubic")


def test_bracket_weights_exact_member() -> None:
    w = bracket_weights([1.0, 2.0, 4.0], [2.0, 4.0, 1.0, 3.0])
    assert w.weight_upper[0] in (0.0, 1.0) and w.weight_upper[1] == 1.0
    np.testing.assert_allclose(w.weight_upper[3], 0.5)


sorted_values = st.lists(
    st.floats(-10.0, 10.0, allow_nan=False), min_size=1, max_size=8, unique=True
).map(sorted)


@settings(max_examples=60, deadline=None, database=None)
@given(values=sorted_values, target=st.floats(-12.0, 12.0), clamp=st.booleans())
def test_property_bracket_weights(values, target, clamp) -> None:
    """Weights belong to neighbours, lie in [0, 1], sum to 1, and reproduce the target;
    outside the data a typed error without 'nan' (common practice, no source)."""
    try:
        w = bracket_weights(values, target, clamp=clamp)
    except AeroError as error:
        assert not clamp and "nan" not in str(error).lower()
        return
    xs = np.array(values)
    lo, hi = int(w.lower[0]), int(w.upper[0])
    assert hi - lo in (0, 1) or (lo == 0 and hi == 0)
    assert 0.0 <= w.weight_lower[0] <= 1.0 and 0.0 <= w.weight_upper[0] <= 1.0
    assert w.weight_lower[0] + w.weight_upper[0] == pytest.approx(1.0)
    rebuilt = w.weight_lower[0] * xs[lo] + w.weight_upper[0] * xs[hi]
    assert rebuilt == pytest.approx(float(np.clip(target, xs[0], xs[-1])), abs=1e-9)


@settings(max_examples=30, deadline=None, database=None)
@given(index=st.integers(0, 4), method=st.sampled_from(["linear", "pchip"]))
def test_property_member_reproduced(index, method) -> None:
    """A member comes back unchanged at its own thickness (domain notes)."""
    members = family()
    q = interpolate_thickness(members, members[index].thickness, method=method)
    assert q.table_equal(members[index])
