"""Full-range extension: Viterna-Corrigan, flat plate, joins, periodicity."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.aero import (
    AeroError,
    ParameterError,
    Polar,
    UnknownMethodError,
    centre_of_pressure_moment,
    extend_full_range,
    flat_plate,
    viterna_cd_max,
    viterna_corrigan,
)

from .synthetic import cylinder, kirchhoff_polar


def _at(polar: Polar, angle: float) -> int:
    index = int(np.flatnonzero(polar.alpha_deg == angle)[0])
    return index


def test_viterna_cd_max_published_form() -> None:
    # cd_max = 1.11 + 0.018 AR (Viterna & Corrigan 1982, NASA CP-2230)
    assert viterna_cd_max(10.0) == pytest.approx(1.29, abs=1e-12)  # 1.11 + 0.18
    assert viterna_cd_max(50.0) == pytest.approx(2.01, abs=1e-12)  # 1.11 + 0.90
    assert viterna_cd_max(80.0) == pytest.approx(2.01, abs=1e-12)  # AR capped at 50
    with pytest.raises(ParameterError) as info:
        viterna_cd_max(-1.0)
    assert info.value.parameter == "aspect_ratio"


def test_viterna_curves_properties() -> None:
    # Viterna & Corrigan 1982: through the stall point; cl(90) = 0, cd(90) = cd_max
    cl, cd = viterna_corrigan([15.0, 90.0], 15.0, 1.3, 0.05, 1.29)
    assert cl[0] == pytest.approx(1.3, rel=1e-12) and cd[0] == pytest.approx(0.05, rel=1e-12)
    assert cl[1] == pytest.approx(0.0, abs=1e-12) and cd[1] == pytest.approx(1.29, rel=1e-12)


def test_viterna_worked_example_at_45_deg() -> None:
    # Viterna & Corrigan 1982 (NASA CP-2230), a_s = 15 deg, cl_s = 1.3, cd_s = 0.05,
    # cd_max = 1.29, at 45 deg. Independent numpy script run once (formulas of the paper
    # written out: B2 = (cd_s - cd_max sin^2 a_s)/cos a_s, A2 = (cl_s - cd_max sin a_s cos a_s)
    # sin a_s / cos^2 a_s, cl = cd_max/2 sin 2a + A2 cos^2 a / sin a, cd = cd_max sin^2 a +
    # B2 cos a): cl = 0.836738993, cd = 0.618343384.
    cl, cd = viterna_corrigan([45.0], 15.0, 1.3, 0.05, 1.29)
    assert cl[0] == pytest.approx(0.836738993, abs=1e-9)
    assert cd[0] == pytest.approx(0.618343384, abs=1e-9)


def test_flat_plate_broadside() -> None:
    # cn model at 90 deg equals cd90: 2.0 sin 90 / (0.56 + 0.44) = 2.0 (Lindenburg, from
    # memory); broadside flat plate cn about 2.0 (Hoerner 1965, "Fluid-Dynamic Drag", from
    # memory)
    cl, cd = flat_plate([90.0, -90.0, 30.0], 2.0)
    assert cd[0] == pytest.approx(2.0, rel=1e-12) and abs(cl[0]) < 1e-12
    assert cd[1] == pytest.approx(2.0, rel=1e-12)
    # at 30 deg: cn = 2 * 0.5 / (0.56 + 0.22) = 1.28205; cl = cn cos 30, cd = cn sin 30
    cn = 1.0 / 0.78
    assert cl[2] == pytest.approx(cn * np.cos(np.radians(30.0)), rel=1e-12)
    assert cd[2] == pytest.approx(cn * 0.5, rel=1e-12)


def test_centre_of_pressure_rule() -> None:
    # x_cp = 0.5 at 90 deg: cm = -cn / 4 (flat plate, Hoerner 1965, from memory)
    assert centre_of_pressure_moment([90.0], [0.0], [2.0])[0] == pytest.approx(-0.5)
    # x_cp = 0.25 at 0 deg: no moment about the quarter chord
    assert centre_of_pressure_moment([0.0], [0.5], [0.01])[0] == pytest.approx(0.0)


@pytest.mark.parametrize("method", ["viterna", "flat-plate"])
def test_extension_full_range_invariants(method: str) -> None:
    p = kirchhoff_polar()
    e = extend_full_range(p, method, aspect_ratio=10.0)
    assert e.alpha_deg[0] == -180.0 and e.alpha_deg[-1] == 180.0
    # periodic (common practice, no source)
    assert e.cl[0] == e.cl[-1] and e.cd[0] == e.cd[-1] and e.cm[0] == e.cm[-1]
    # measured rows unchanged
    keep = np.isin(e.alpha_deg, p.alpha_deg)
    np.testing.assert_array_equal(e.alpha_deg[keep], p.alpha_deg)
    np.testing.assert_array_equal(e.cl[keep], p.cl)
    np.testing.assert_array_equal(e.cd[keep], p.cd)
    np.testing.assert_array_equal(e.cm[keep], p.cm)
    # cd(+-90) = cd_max, cl(+-90) = 0 (Viterna & Corrigan 1982; cn model at 90 = cd90)
    for angle in (90.0, -90.0):
        assert e.cd[_at(e, angle)] == pytest.approx(1.29, rel=1e-12)
        assert abs(e.cl[_at(e, angle)]) < 1e-12
    assert np.all(e.cd > 0)
    step = e.history[-1]
    assert step["method"] == method and step["cd_max"] == pytest.approx(1.29)
    assert [j["side"] for j in step["joins"]] == ["positive", "negative"]
    assert {"cl_slope_jump_per_deg", "cd_slope_jump_per_deg", "cm_slope_jump_per_deg"} <= set(
        step["joins"][0]
    )


def test_viterna_value_continuity_at_stall_join() -> None:
    # data ending at the stall angle 12 deg (cl 1.000393631, cd 0.051544145 from the
    # synthetic formula): the extension leaves along the Viterna curve; at 13 deg with
    # cd_max = 1.29 the same independent numpy script gives cl = 0.959634334,
    # cd = 0.061075099 (Viterna & Corrigan 1982)
    p = kirchhoff_polar(high=12.0)
    e = extend_full_range(p, cd_max=1.29, alpha_stall_pos_deg=12.0)
    assert e.cl[_at(e, 13.0)] == pytest.approx(0.959634334, abs=1e-9)
    assert e.cd[_at(e, 13.0)] == pytest.approx(0.061075099, abs=1e-9)
    assert e.history[-1]["stall_angles_deg"]["positive"] == 12.0


def test_default_cd_max_and_stall_detection() -> None:
    # the synthetic polar (alpha0 -2, separation at 13 deg): its lift maximum over (0, 30]
    # is at 10 deg, its minimum over [-30, 0) at -14 deg (numpy on the synthetic formula)
    e = extend_full_range(kirchhoff_polar(alpha_sep_deg=13.0))
    step = e.history[-1]
    assert step["cd_max"] == pytest.approx(2.01)  # default AR = 50 (documented)
    assert step["stall_angles_deg"] == {"positive": 10.0, "negative": -14.0}
    assert step["measured_range_deg"] == [-20.0, 25.0]


def test_stall_detection_robust_to_secondary_maxima() -> None:
    # two local maxima: the global one within 0..30 deg is the stall (21 deg, numpy on the
    # formula below)
    alpha = np.arange(-15.0, 31.0)
    cl = 0.1 * (alpha + 2) - 0.004 * np.clip(alpha - 10, 0, None) ** 2
    cl = cl + 0.05 * np.sin(alpha)  # ripples
    p = Polar(alpha, cl, 0.01 + 0.001 * alpha**2)
    e = extend_full_range(p)
    assert e.history[-1]["stall_angles_deg"]["positive"] == 21.0


SIMPLE_TABLE = (
    [-10.0, -5.0, 0.0, 5.0, 10.0, 15.0],
    [-0.8, -0.4, 0.2, 0.7, 1.1, 1.0],
    [0.02, 0.01, 0.008, 0.01, 0.02, 0.05],
)
"""An invented six-row table: positive stall at 10 deg, negative at the data end -10 deg."""

SIMPLE_TABLE_EXTENDED = [
    (30.0, 1.080963517, 0.430937793),
    (60.0, 0.913192486, 1.468956650),
    (-30.0, -0.992896202, 0.466789118),
    (-60.0, -0.893938494, 1.486882313),
    (120.0, -0.639234741, 1.520000000),
    (150.0, -0.756674462, 0.540000000),
    (-120.0, 0.625756946, 1.520000000),
    (-150.0, 0.695027341, 0.540000000),
    (180.0, -0.140000000, 0.050000000),
    (-180.0, -0.140000000, 0.050000000),
]
"""(alpha [deg], cl, cd) of SIMPLE_TABLE extended with the defaults (Viterna-Corrigan, cd_max
2.01, k = 0.7, reverse-flow drag), from an independent numpy script run once (not importing
polarsvc): the Viterna & Corrigan 1982 curves from (10, 1.1, 0.02) plus the offset
(1.0 - VC_cl(15)) (90 - a) / 75 (and likewise for cd) up to 90 deg; from the negative data
end (-10, -0.8, 0.02) the mirrored curves -VC_cl(-a), VC_cd(-a) (anchored at the end, so no
offset); beyond 90 deg cl = -0.7 C_cl(180 - a) (or -180 - a) and cd = 2.01 sin^2 a +
0.05 cos^2 a."""


@pytest.mark.parametrize(("angle", "cl", "cd"), SIMPLE_TABLE_EXTENDED)
def test_extension_values_pinned(angle: float, cl: float, cd: float) -> None:
    e = extend_full_range(Polar(*SIMPLE_TABLE))
    assert e.cl[_at(e, angle)] == pytest.approx(cl, abs=1e-9)
    assert e.cd[_at(e, angle)] == pytest.approx(cd, abs=1e-9)


def test_trailing_edge_first_drag_rules() -> None:
    # reverse flow (default): cd(180) = max(0.05, cd(0)) = 0.05, not the drag bucket 0.008;
    # cd(135) = 2.01 * 0.5 + 0.05 * 0.5 = 1.03 (the rule's formula by hand)
    e = extend_full_range(Polar(*SIMPLE_TABLE))
    assert e.cd[_at(e, 135.0)] == pytest.approx(1.03, abs=1e-12)
    assert e.history[-1]["trailing_edge_drag"] == "reverse-flow"
    # the old rule on request: the inner drag mirrored, cd(180) = cd(0) = 0.008 and
    # cd(150) = cd(30) = 0.430937793 (value of SIMPLE_TABLE_EXTENDED)
    m = extend_full_range(Polar(*SIMPLE_TABLE), trailing_edge_drag="mirror")
    assert m.cd[_at(m, 180.0)] == pytest.approx(0.008, abs=1e-15)
    assert m.cd[_at(m, 150.0)] == pytest.approx(0.430937793, abs=1e-9)
    with pytest.raises(UnknownMethodError):
        extend_full_range(Polar(*SIMPLE_TABLE), trailing_edge_drag="guess")


def test_already_full_range_unchanged() -> None:
    e = extend_full_range(kirchhoff_polar())
    again = extend_full_range(e)
    assert again.table_equal(e) and again.history[-1]["unchanged"] is True


def test_cylinder_member_extension() -> None:
    # cylinder coefficients do not depend on the angle (Hoerner 1965, from memory)
    part = Polar([-10.0, 0.0, 10.0], [0.0, 0.0, 0.0], [1.2, 1.2, 1.2], [0.0, 0.0, 0.0],
                 thickness=1.0)
    e = extend_full_range(part)
    assert np.all(e.cl == 0.0) and np.allclose(e.cd, 1.2) and np.all(e.cm == 0.0)
    assert e.history[-1]["method"] == "cylinder"
    full = cylinder()
    assert extend_full_range(full).table_equal(full)


def test_without_cm_output_has_no_cm() -> None:
    e = extend_full_range(kirchhoff_polar(with_cm=False))
    assert e.cm is None and "cm_slope_jump_per_deg" not in e.history[-1]["joins"][0]


def test_extension_step_option() -> None:
    e = extend_full_range(kirchhoff_polar(), step_deg=5.0)
    outside = e.alpha_deg[(e.alpha_deg > 25.0)]
    np.testing.assert_array_equal(outside, np.arange(30.0, 181.0, 5.0))


def test_extension_errors_typed() -> None:
    p = kirchhoff_polar()
    with pytest.raises(UnknownMethodError) as unknown:
        extend_full_range(p, "guess")
    assert "viterna" in str(unknown.value)
    with pytest.raises(ParameterError) as both:
        extend_full_range(p, aspect_ratio=10.0, cd_max=1.3)
    assert both.value.parameter == "cd_max"
    with pytest.raises(ParameterError) as stall:
        extend_full_range(p, alpha_stall_pos_deg=40.0)
    assert stall.value.parameter == "alpha_stall_pos_deg"
    with pytest.raises(ParameterError) as factor:
        extend_full_range(p, trailing_edge_lift_factor=1.5)
    assert factor.value.parameter == "trailing_edge_lift_factor"
    with pytest.raises(AeroError):
        extend_full_range(kirchhoff_polar(low=2.0, high=20.0))


def test_data_beyond_90_deg_joined_continuously() -> None:
    # data from -20 to 120 deg: closed around the circle through -180/180 with the offset
    # meeting both data ends; the first extension row follows the last data row by less
    # than the data's own step there (continuity; common practice, no source)
    alpha = np.arange(-20.0, 121.0, 1.0)
    base = extend_full_range(kirchhoff_polar())
    keep = np.isin(base.alpha_deg, alpha)
    p = Polar(alpha, base.cl[keep] + 0.05, base.cd[keep], base.cm[keep])
    e = extend_full_range(p)
    assert e.cl[0] == e.cl[-1] and e.cd[0] == e.cd[-1]
    data_step = abs(p.cl[-1] - p.cl[-2])
    assert abs(e.cl[_at(e, 121.0)] - p.cl[-1]) < 2.0 * data_step
    assert abs(e.cl[_at(e, -21.0)] - p.cl[0]) < 2.0 * abs(p.cl[1] - p.cl[0]) + 0.05


@st.composite
def measured_polars(draw):
    low = draw(st.floats(-40.0, -5.0))
    high = draw(st.floats(5.0, 60.0))
    step = draw(st.sampled_from([0.5, 1.0, 1.5, 2.0]))
    alpha0 = draw(st.floats(-4.0, 1.0))
    sep = draw(st.floats(5.0, 20.0))
    offset = draw(st.floats(0.0, 0.05))
    with_cm = draw(st.booleans())
    return kirchhoff_polar(low=low, high=high, step=step, alpha0_deg=alpha0,
                           alpha_sep_deg=sep, cd_offset=offset, with_cm=with_cm)


@settings(max_examples=50, deadline=None, database=None)
@given(
    polar=measured_polars(),
    method=st.sampled_from(["viterna", "flat-plate"]),
    ar=st.floats(2.0, 60.0),
    k=st.floats(0.0, 1.0),
)
def test_property_extension(polar: Polar, method: str, ar: float, k: float) -> None:
    """Measured rows kept bit for bit, periodic at +-180, continuous at the joins and
    everywhere on a 1 deg grid (common practice, no source)."""
    e = extend_full_range(polar, method, aspect_ratio=ar, trailing_edge_lift_factor=k)
    keep = np.isin(e.alpha_deg, polar.alpha_deg)
    np.testing.assert_array_equal(e.cl[keep], polar.cl)
    np.testing.assert_array_equal(e.cd[keep], polar.cd)
    assert e.cl[0] == e.cl[-1] and e.cd[0] == e.cd[-1]
    assert np.all(e.cd > 0)
    if e.cm is not None:
        np.testing.assert_array_equal(e.cm[keep], polar.cm)
        assert e.cm[0] == e.cm[-1]
    # Viterna & Corrigan 1982: cl(+-90) = 0 and cd(+-90) = cd_max; the flat plate's cn(90)
    # = cd90 gives the same; cd(+-180) by the reverse-flow rule: max(0.05, cd(0))
    cd_max = viterna_cd_max(ar)
    for angle in (90.0, -90.0):
        assert abs(e.cl[_at(e, angle)]) < 1e-12
        assert e.cd[_at(e, angle)] == pytest.approx(cd_max, rel=1e-12)
    cd_zero = float(np.interp(0.0, polar.alpha_deg, polar.cd))
    assert e.cd[-1] == pytest.approx(max(0.05, cd_zero), rel=1e-12)
    assert e.cl[-1] == pytest.approx(-k * float(np.interp(0.0, polar.alpha_deg, polar.cl)),
                                     abs=1e-12)
    # the reported slope jumps are those of the table at the joins (finite differences)
    high = e.history[-1]["joins"][0]
    i = _at(e, float(polar.alpha_deg[-1]))
    jump = (e.cl[i + 1] - e.cl[i]) / (e.alpha_deg[i + 1] - e.alpha_deg[i]) - (
        polar.cl[-1] - polar.cl[-2]) / (polar.alpha_deg[-1] - polar.alpha_deg[-2])
    assert high["cl_slope_jump_per_deg"] == pytest.approx(jump, rel=1e-9, abs=1e-12)


def test_data_reaching_minus_180_only() -> None:
    # data from -180 to 30 deg: the extension closes the circle at +180 with the value at -180
    base = extend_full_range(kirchhoff_polar())
    keep = base.alpha_deg <= 30.0
    p = Polar(base.alpha_deg[keep], base.cl[keep] + 0.02, base.cd[keep], base.cm[keep])
    e = extend_full_range(p)
    assert e.alpha_deg[-1] == 180.0
    assert e.cl[-1] == pytest.approx(e.cl[0], abs=1e-12)
    assert e.cd[-1] == pytest.approx(e.cd[0], abs=1e-12)
    assert e.cm[-1] == pytest.approx(e.cm[0], abs=1e-12)
    np.testing.assert_array_equal(e.cl[e.alpha_deg <= 30.0], p.cl)
