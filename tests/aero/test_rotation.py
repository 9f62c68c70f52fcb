"""Rotational augmentation: Snel, Du-Selig, Chaviaropoulos-Hansen."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.aero import (
    ParameterError,
    Polar,
    UnknownMethodError,
    augment_rotation,
    chaviaropoulos_hansen_factor,
    du_selig_factors,
    extend_full_range,
    fade_weight,
    rotation,
    snel_factor,
)

from .synthetic import TWO_PI, kirchhoff_polar


def piecewise_polar() -> Polar:
    """Exactly linear lift, 2 pi (alpha + 2 deg), up to 6 deg, then cl = 1.2 (invented): the
    fitted lift line is exact, so a hand calculation applies."""
    alpha = np.arange(-20.0, 45.5, 1.0)
    linear = 2.0 * math.pi * np.radians(alpha + 2.0)
    cl = np.where(alpha <= 6.0, linear, 1.2)
    cl = np.where(alpha < -10.0, 2.0 * math.pi * np.radians(-8.0), cl)
    cd = 0.01 + 0.02 * np.clip(alpha - 6.0, 0.0, None) / 10.0
    return Polar(alpha, cl, cd, 0.0 * alpha - 0.05)


def test_snel_factor_published_value() -> None:
    # 3 (c/r)^2 at c/r = 0.2: 3 * 0.04 = 0.12 (Snel, Houwink & Bosschers 1994, ECN-C--93-052)
    assert snel_factor(0.2) == pytest.approx(0.12, rel=1e-12)
    np.testing.assert_allclose(snel_factor([0.1, 0.2]), [0.03, 0.12])


def test_snel_augmented_lift_worked_by_hand() -> None:
    p = piecewise_polar()
    q = augment_rotation(p, "snel", r_over_R=0.3, chord_over_r=0.2,
                         fade_start_deg=30.0, fade_end_deg=50.0)
    i20 = int(np.flatnonzero(p.alpha_deg == 20.0)[0])
    # by hand: cl_lin(20) = 2 pi * radians(22) = 6.283185 * 0.383972 = 2.412570;
    # cl_3d = 1.2 + 0.12 (2.412570 - 1.2) = 1.2 + 0.145508 = 1.345508 (Snel et al. 1994)
    assert q.cl[i20] == pytest.approx(1.345508, abs=2e-6)
    # at 40 deg, the middle of the fade, the weight 1 - 3 s^2 + 2 s^3 is 0.5 at s = 0.5
    i40 = int(np.flatnonzero(p.alpha_deg == 40.0)[0])
    cl_lin40 = 2 * math.pi * math.radians(42.0)
    assert q.cl[i40] == pytest.approx(1.2 + 0.5 * 0.12 * (cl_lin40 - 1.2), rel=1e-9)
    # attached flow: no change; drag unchanged by Snel; cm unchanged
    i0 = int(np.flatnonzero(p.alpha_deg == 0.0)[0])
    assert q.cl[i0] == pytest.approx(p.cl[i0], abs=1e-12)
    np.testing.assert_array_equal(q.cd, p.cd)
    np.testing.assert_array_equal(q.cm, p.cm)
    step = q.history[-1]
    assert step["model"] == "snel" and step["lift_factor"] == pytest.approx(0.12)
    assert step["cl_alpha_per_rad"] == pytest.approx(2 * math.pi, rel=1e-9)
    assert step["alpha0_deg"] == pytest.approx(-2.0, abs=1e-9)


def test_du_selig_factors_worked_by_hand() -> None:
    # Du & Selig (1998), AIAA-98-0021 (from memory, as in the domain notes), a = b = d = 1.
    # c/r = 0.1, r/R = 0.3, tsr = 7:
    #   Lambda = 7 / sqrt(1 + 49) = 0.9899495
    #   lift exponent R/(Lambda r) = 1 / (0.9899495 * 0.3) = 3.367175
    #   (c/r)^e = 0.1^3.367175 = 4.29363e-4
    #   (1 - 4.29363e-4) / (1 + 4.29363e-4) = 0.9991416
    #   1.6 * 0.1 / 0.1267 = 1.2628256
    #   f_cl = (1.2628256 * 0.9991416 - 1) / (2 pi) = 0.0416575
    #   drag exponent 3.367175 / 2 = 1.683588; 0.1^1.683588 = 0.0207211
    #   (1 - 0.0207211) / (1 + 0.0207211) = 0.9593991
    #   f_cd = (1.2628256 * 0.9593991 - 1) / (2 pi) = 0.0336698
    f_cl, f_cd = du_selig_factors(0.1, 0.3, 7.0)
    assert f_cl == pytest.approx(0.0416575, abs=2e-7)
    assert f_cd == pytest.approx(0.0336698, abs=2e-7)


def test_chaviaropoulos_hansen_factor_worked_by_hand() -> None:
    # Chaviaropoulos & Hansen (2000), J. Fluids Eng. 122 (from memory): a = 2.2, h = 1, n = 4.
    # c/r = 0.2, twist 10 deg: 2.2 * 0.2 * cos(10 deg)^4 = 0.44 * 0.9848078^4
    #   = 0.44 * 0.9406019 = 0.4138648
    assert chaviaropoulos_hansen_factor(0.2, 10.0) == pytest.approx(0.4138648, abs=2e-7)
    np.testing.assert_allclose(
        chaviaropoulos_hansen_factor([0.1, 0.2], [0.0, 0.0]), [0.22, 0.44], rtol=1e-12
    )


def test_du_selig_and_ch_drag_directions() -> None:
    p = piecewise_polar()
    i20 = int(np.flatnonzero(p.alpha_deg == 20.0)[0])
    ds = augment_rotation(p, "du-selig", r_over_R=0.3, chord_over_r=0.1, tip_speed_ratio=7.0,
                          fade_start_deg=30.0, fade_end_deg=50.0)
    # cd_3d = cd - f_cd (cd - cd0), cd0 = cd at alpha0 = 0.01 (Du & Selig 1998, from memory)
    assert ds.cd[i20] == pytest.approx(p.cd[i20] - 0.0336698 * (p.cd[i20] - 0.01), abs=1e-8)
    assert ds.cl[i20] == pytest.approx(
        1.2 + 0.0416575 * (2 * math.pi * math.radians(22.0) - 1.2), abs=1e-6
    )
    ch = augment_rotation(p, "chaviaropoulos-hansen", r_over_R=0.3, chord_over_r=0.2,
                          twist_deg=10.0, fade_start_deg=30.0, fade_end_deg=50.0)
    # the same form for drag on (cd - cd0) (Chaviaropoulos & Hansen 2000, from memory)
    assert ch.cd[i20] == pytest.approx(p.cd[i20] + 0.4138648 * (p.cd[i20] - 0.01), abs=1e-8)


def test_given_lift_slope_used() -> None:
    p = piecewise_polar()
    q = augment_rotation(p, "snel", r_over_R=0.3, chord_over_r=0.2, cl_alpha_per_rad=5.0,
                         fade_start_deg=30.0, fade_end_deg=50.0)
    i20 = int(np.flatnonzero(p.alpha_deg == 20.0)[0])
    assert q.cl[i20] == pytest.approx(1.2 + 0.12 * (5.0 * math.radians(22.0) - 1.2), rel=1e-9)


def test_no_correction_beyond_fade_end_and_90_deg() -> None:
    e = extend_full_range(kirchhoff_polar())
    q = augment_rotation(e, "snel", r_over_R=0.2, chord_over_r=0.3, fade_end_deg=60.0)
    far = np.abs(e.alpha_deg) >= 60.0
    np.testing.assert_array_equal(q.cl[far], e.cl[far])
    with pytest.raises(ParameterError) as info:
        augment_rotation(e, "snel", r_over_R=0.2, chord_over_r=0.3, fade_end_deg=95.0)
    assert info.value.parameter == "fade_end_deg"
    with pytest.raises(ParameterError) as info:
        augment_rotation(e, "snel", r_over_R=0.2, chord_over_r=0.3, fade_start_deg=40.0,
                         fade_end_deg=30.0)
    assert info.value.parameter == "fade_end_deg"


def test_fade_weight_smooth_step() -> None:
    # 1 - 3 s^2 + 2 s^3 between 30 and 50 deg (the cubic Hermite step; common practice, no
    # source). By hand: s = 0.25 -> 1 - 0.1875 + 0.03125 = 0.84375; s = 0.5 -> 0.5;
    # s = 0.75 -> 1 - 1.6875 + 0.84375 = 0.15625.
    np.testing.assert_allclose(
        fade_weight([-60.0, 0.0, 30.0, 35.0, 40.0, 45.0, 50.0, 70.0], 30.0, 50.0),
        [1.0, 1.0, 1.0, 0.84375, 0.5, 0.15625, 0.0, 0.0], rtol=0, atol=1e-15,
    )
    # per-station ends give one row per station
    rows = fade_weight([10.0, 20.0], [0.0, 10.0], [20.0, 30.0])
    np.testing.assert_allclose(rows, [[0.5, 0.0], [1.0, 0.5]], rtol=0, atol=1e-15)


def test_fade_tied_to_the_stall_angle_worked_by_hand() -> None:
    # piecewise_polar: the lift maximum over (0, 30] deg is first reached at 7 deg (cl = 1.2),
    # so the default fade runs from 7 - 5 = 2 deg to 7 + 25 = 32 deg. At 17 deg, s = 0.5,
    # w = 0.5: cl_3d = 1.2 + 0.5 * 0.12 * (2 pi radians(19) - 1.2)
    #   = 1.2 + 0.06 * (2.083583 - 1.2) = 1.253015 (Snel et al. 1994 for the factor)
    p = piecewise_polar()
    q = augment_rotation(p, "snel", r_over_R=0.3, chord_over_r=0.2)
    step = q.history[-1]
    assert (step["stall_deg"], step["fade_start_deg"], step["fade_end_deg"]) == (7.0, 2.0, 32.0)
    i17 = int(np.flatnonzero(p.alpha_deg == 17.0)[0])
    assert q.cl[i17] == pytest.approx(1.253015, abs=2e-6)
    # beyond the fade end nothing changes
    far = p.alpha_deg >= 32.0
    np.testing.assert_array_equal(q.cl[far], p.cl[far])
    # the offsets move both ends with the stall angle
    r = augment_rotation(p, "snel", r_over_R=0.3, chord_over_r=0.2,
                         fade_start_offset_deg=0.0, fade_end_offset_deg=10.0)
    assert (r.history[-1]["fade_start_deg"], r.history[-1]["fade_end_deg"]) == (7.0, 17.0)


def test_negative_side_only_when_asked() -> None:
    # below alpha0 = -2 deg the lift sits 0.877 short of the line from -11 deg down
    # (piecewise_polar): no change by default, a change when asked
    p = piecewise_polar()
    default = augment_rotation(p, "snel", r_over_R=0.3, chord_over_r=0.2)
    below = p.alpha_deg < -2.0
    np.testing.assert_array_equal(default.cl[below], p.cl[below])
    asked = augment_rotation(p, "snel", r_over_R=0.3, chord_over_r=0.2, negative_side=True)
    # negative stall: the lift minimum over [-30, 0) is first reached at -20 deg (the data's
    # lower end), so the mirrored fade runs from -15 to -45 deg; at -12 deg w = 1:
    # cl_3d = -0.877 + 0.12 (2 pi radians(-10) + 0.877) = -0.877 + 0.12 * (-1.096623 + 0.877)
    cl_flat = 2.0 * math.pi * math.radians(-8.0)
    i12 = int(np.flatnonzero(p.alpha_deg == -12.0)[0])
    expected = cl_flat + 0.12 * (2.0 * math.pi * math.radians(-10.0) - cl_flat)
    assert asked.cl[i12] == pytest.approx(expected, abs=1e-9)
    assert asked.history[-1]["stall_neg_deg"] == -20.0


def test_clipped_factors_and_calibration_range_reported() -> None:
    # Snel at c/r = 0.7: 3 * 0.49 = 1.47, clipped to 1 (the module's rule); c/r 0.7 lies
    # above the 0.4 bound recorded for Snel
    q = augment_rotation(piecewise_polar(), "snel", r_over_R=0.1, chord_over_r=0.7)
    step = q.history[-1]
    assert step["clipped_factors"] == [
        {"factor": "lift_factor", "raw": pytest.approx(1.47), "applied": 1.0}
    ]
    assert step["chord_over_r_outside_calibration"] is True
    assert step["calibration_chord_over_r"]["high"] == 0.4
    inside = augment_rotation(piecewise_polar(), "snel", r_over_R=0.3, chord_over_r=0.2)
    assert inside.history[-1]["clipped_factors"] == []
    assert inside.history[-1]["chord_over_r_outside_calibration"] is False


@pytest.mark.parametrize(
    ("keywords", "parameter"),
    [
        ({"r_over_R": 0.0, "chord_over_r": 0.1}, "r_over_R"),
        ({"r_over_R": 1.2, "chord_over_r": 0.1}, "r_over_R"),
        ({"r_over_R": 0.5, "chord_over_r": -0.1}, "chord_over_r"),
        ({"r_over_R": 0.5, "chord_over_r": math.nan}, "chord_over_r"),
    ],
)
def test_parameters_validated(keywords: dict, parameter: str) -> None:
    with pytest.raises(ParameterError) as info:
        augment_rotation(piecewise_polar(), "snel", **keywords)
    assert info.value.parameter == parameter
    assert "nan" not in str(info.value).lower()


def test_du_selig_needs_tip_speed_ratio_and_unknown_model() -> None:
    with pytest.raises(ParameterError) as info:
        augment_rotation(piecewise_polar(), "du-selig", r_over_R=0.3, chord_over_r=0.1)
    assert info.value.parameter == "tip_speed_ratio"
    with pytest.raises(UnknownMethodError):
        augment_rotation(piecewise_polar(), "guess", r_over_R=0.3, chord_over_r=0.1)


def test_factor_functions_vectorised() -> None:
    f_cl, f_cd = du_selig_factors([0.1, 0.3], [0.3, 0.2], 7.0)
    # second station by hand: Lambda = 0.9899495, e = 1/(0.9899495*0.2) = 5.050763,
    # 0.3^5.050763 = 0.00228593, (1-p)/(1+p) = 0.9954386, 1.6*0.3/0.1267 = 3.7884767,
    # f_cl = (3.7884767*0.9954386 - 1)/(2 pi) = 0.4410495 (Du & Selig 1998, from memory)
    np.testing.assert_allclose(f_cl, [0.0416575, 0.4410495], atol=2e-7)
    assert f_cd.shape == (2,)


@settings(max_examples=40, deadline=None, database=None)
@given(
    model=st.sampled_from(["snel", "du-selig", "chaviaropoulos-hansen"]),
    c_r=st.floats(0.01, 1.0),
    r_R=st.floats(0.05, 1.0),
    tsr=st.floats(1.0, 12.0),
    twist=st.floats(-5.0, 30.0),
)
def test_property_correction_bounded(model, c_r, r_R, tsr, twist) -> None:
    """The lift moves towards the attached line cl_lin = 2 pi (alpha + 2 deg) of the
    synthetic polar and never past it; nothing changes beyond the fade end or below alpha0;
    the drag moves by the published forms (Du-Selig towards cd0, Chaviaropoulos-Hansen away
    from it, Snel not at all) by at most the full excess over cd0 (definitions in
    polarsvc.aero.rotation; common practice, no source)."""
    e = extend_full_range(kirchhoff_polar(alpha0_deg=-2.0))
    q = augment_rotation(e, model, r_over_R=r_R, chord_over_r=c_r, tip_speed_ratio=tsr,
                         twist_deg=twist, cl_alpha_per_rad=TWO_PI)
    step = q.history[-1]
    assert step["alpha0_deg"] == pytest.approx(-2.0, abs=1e-9)
    cl_lin = TWO_PI * np.radians(e.alpha_deg + 2.0)
    lo = np.minimum(e.cl, cl_lin) - 1e-12
    hi = np.maximum(e.cl, cl_lin) + 1e-12
    assert np.all((q.cl >= lo) & (q.cl <= hi))
    unchanged = (e.alpha_deg >= step["fade_end_deg"]) | (e.alpha_deg <= -2.0)
    np.testing.assert_array_equal(q.cl[unchanged], e.cl[unchanged])
    np.testing.assert_array_equal(q.cd[unchanged], e.cd[unchanged])
    cd0 = float(np.interp(-2.0, e.alpha_deg, e.cd))
    excess = np.maximum(e.cd - cd0, 0.0)
    change = q.cd - e.cd
    if model == "snel":
        np.testing.assert_array_equal(change, 0.0)
    elif model == "du-selig":
        assert np.all((change <= 1e-15) & (change >= -excess - 1e-15))
    else:
        assert np.all((change >= -1e-15) & (change <= excess + 1e-15))


@pytest.mark.parametrize(
    ("call", "parameter", "message"),
    [
        (lambda: snel_factor(-1.0), "chord_over_r", "must lie in (0, inf), got -1"),
        (lambda: du_selig_factors(0.1, 1.5, 7.0), "r_over_R", "must lie in (0, 1], got 1.5"),
        (lambda: du_selig_factors(0.1, 0.3, 0.0), "tip_speed_ratio", "got 0"),
        (lambda: du_selig_factors(-0.1, 0.3, 7.0), "chord_over_r", "got -0.1"),
        (lambda: augment_rotation(piecewise_polar(), "du-selig", r_over_R=0.3,
                                  chord_over_r=0.1),
         "tip_speed_ratio", "is required by the du-selig model"),
        (lambda: chaviaropoulos_hansen_factor(0.2, math.nan), "twist_deg", "must be finite"),
        (lambda: chaviaropoulos_hansen_factor(-0.2, 0.0), "chord_over_r", "got -0.2"),
        (lambda: fade_weight([0.0], math.nan, 20.0), "fade_start_deg", "must be finite"),
        (lambda: fade_weight([0.0], 20.0, 10.0), "fade_end_deg",
         "must lie in (fade_start_deg, 90] deg, got 10"),
        (lambda: fade_weight([0.0], 20.0, 95.0), "fade_end_deg", "got 95"),
        (lambda: augment_rotation(piecewise_polar(), r_over_R=0.3, chord_over_r=0.2,
                                  fade_end_deg=95.0),
         "fade_end_deg", "must lie within 90 deg, got 95"),
        (lambda: augment_rotation(piecewise_polar(), r_over_R=0.3, chord_over_r=0.2,
                                  fade_start_deg=40.0, fade_end_deg=30.0),
         "fade_end_deg", "must end after it starts and by 90 deg; got start 40 and end 30"),
        (lambda: augment_rotation(piecewise_polar(), r_over_R=0.3, chord_over_r=0.2,
                                  fade_start_offset_deg=math.inf),
         "fade_start_offset_deg", "must be finite"),
        (lambda: augment_rotation(piecewise_polar(), r_over_R=0.3, chord_over_r=0.2,
                                  fade_end_offset_deg=math.nan),
         "fade_end_offset_deg", "must be finite"),
        (lambda: augment_rotation(piecewise_polar(), r_over_R=0.3, chord_over_r=0.2,
                                  cl_alpha_per_rad=-1.0),
         "cl_alpha_per_rad", "must be a positive number, got -1"),
    ],
)
def test_errors_name_the_parameter_and_the_rule(call, parameter: str, message: str) -> None:
    with pytest.raises(ParameterError) as info:
        call()
    assert info.value.parameter == parameter
    text = str(info.value)
    assert text.startswith(f"parameter '{parameter}': ")
    assert message in text
    assert not text.endswith("XX")


def test_unknown_model_names_the_valid_ones() -> None:
    with pytest.raises(UnknownMethodError) as info:
        augment_rotation(piecewise_polar(), "guess", r_over_R=0.3, chord_over_r=0.1)
    assert str(info.value) == (
        "model='guess' is not known; valid names: snel, du-selig, chaviaropoulos-hansen"
    )
    assert info.value.parameter == "model" and info.value.value == "guess"


def test_history_step_records_every_setting() -> None:
    # piecewise_polar with Snel at r/R 0.3, c/r 0.2 (factor 0.12, Snel et al. 1994), default
    # twist 0 and fade; lift line 2 pi /rad through -2 deg (exact for this table)
    step = augment_rotation(piecewise_polar(), "snel", r_over_R=0.3,
                            chord_over_r=0.2).history[-1]
    assert step == {
        "step": "augment_rotation",
        "model": "snel",
        "r_over_R": 0.3,
        "chord_over_r": 0.2,
        "tip_speed_ratio": None,
        "twist_deg": 0.0,
        "lift_factor": pytest.approx(0.12, abs=1e-15),
        "drag_factor": 0.0,
        "cl_alpha_per_rad": pytest.approx(2.0 * math.pi, abs=1e-9),
        "alpha0_deg": pytest.approx(-2.0, abs=1e-9),
        "stall_deg": 7.0,
        "fade_start_deg": 2.0,
        "fade_end_deg": 32.0,
        "negative_side": False,
        "clipped_factors": [],
        "chord_over_r_outside_calibration": False,
        "calibration_chord_over_r": {
            "low": 0.0, "high": 0.4,
            "source": rotation.CALIBRATION_CHORD_OVER_R["snel"][2],
        },
    }
    both = augment_rotation(piecewise_polar(), "du-selig", r_over_R=0.3, chord_over_r=0.1,
                            tip_speed_ratio=7.0, twist_deg=3.0, negative_side=True)
    record = both.history[-1]
    assert (record["tip_speed_ratio"], record["twist_deg"], record["negative_side"]) == (
        7.0, 3.0, True)
    # the default twist is 0: Chaviaropoulos-Hansen's factor is then 2.2 c/r = 0.44
    # (Chaviaropoulos & Hansen 2000, from memory)
    ch = augment_rotation(piecewise_polar(), "chaviaropoulos-hansen", r_over_R=0.3,
                          chord_over_r=0.2).history[-1]
    assert ch["lift_factor"] == pytest.approx(0.44, abs=1e-15)


def test_drag_factors_as_applied_and_reported() -> None:
    # Du-Selig at c/r 0.1, r/R 0.3, tsr 7: f_cd = 0.0336698 (worked above), applied with a
    # minus sign (drag reduced); Chaviaropoulos-Hansen the same factor for lift and drag
    ds = augment_rotation(piecewise_polar(), "du-selig", r_over_R=0.3, chord_over_r=0.1,
                          tip_speed_ratio=7.0).history[-1]
    assert ds["drag_factor"] == pytest.approx(-0.0336698, abs=2e-7)
    assert ds["lift_factor"] == pytest.approx(0.0416575, abs=2e-7)
    ch = augment_rotation(piecewise_polar(), "chaviaropoulos-hansen", r_over_R=0.3,
                          chord_over_r=0.2, twist_deg=10.0).history[-1]
    assert ch["drag_factor"] == ch["lift_factor"] == pytest.approx(0.4138648, abs=2e-7)
    # a raw factor below zero is clipped to 0 and reported (Du-Selig at c/r 0.01: the
    # bracket 1.2628 * 0.01 * ... - 1 is negative, so f_cl < 0)
    small = augment_rotation(piecewise_polar(), "du-selig", r_over_R=0.9, chord_over_r=0.01,
                             tip_speed_ratio=7.0).history[-1]
    assert small["lift_factor"] == 0.0
    assert {c["factor"] for c in small["clipped_factors"]} == {"lift_factor", "drag_factor"}
    assert all(c["raw"] < 0.0 and c["applied"] == 0.0 for c in small["clipped_factors"])


def test_drag_at_a_zero_lift_angle_between_rows() -> None:
    # lift 2 pi (alpha + 1.5 deg): alpha0 = -1.5 deg lies halfway between the rows at -2 and
    # -1 deg, where cd = 0.012 and 0.010, so cd0 = 0.011 (linear interpolation, by hand).
    # Chaviaropoulos-Hansen at c/r 0.2, twist 0: factor 0.44; at 20 deg (weight 1 with the
    # fade given) cd_3d = cd + 0.44 (cd - 0.011) = 0.05 + 0.44 * 0.039 = 0.06716
    alpha = np.arange(-20.0, 46.0, 1.0)
    cl = np.minimum(2.0 * math.pi * np.radians(alpha + 1.5), 1.2)
    cd = np.where(alpha < -1.5, 0.012, 0.010)
    cd = np.where(alpha >= 10.0, 0.05, cd)
    p = Polar(alpha, cl, cd)
    q = augment_rotation(p, "chaviaropoulos-hansen", r_over_R=0.3, chord_over_r=0.2,
                         fade_start_deg=30.0, fade_end_deg=50.0)
    assert q.history[-1]["alpha0_deg"] == pytest.approx(-1.5, abs=1e-9)
    i20 = int(np.flatnonzero(alpha == 20.0)[0])
    assert q.cd[i20] == pytest.approx(0.06716, abs=1e-12)


def test_negative_side_with_given_fade_angles() -> None:
    # absolute fade angles mirror to the negative side: full down to -10 deg, none below
    # -30 deg; at -20 deg (s = 0.5) the weight is 0.5: cl_3d = cl + 0.5 * 0.12 (cl_lin - cl)
    # with cl = 2 pi radians(-8) and cl_lin = 2 pi radians(-18) (piecewise_polar, by hand)
    p = piecewise_polar()
    q = augment_rotation(p, "snel", r_over_R=0.3, chord_over_r=0.2, negative_side=True,
                         fade_start_deg=10.0, fade_end_deg=30.0)
    step = q.history[-1]
    assert (step["fade_neg_start_deg"], step["fade_neg_end_deg"]) == (-10.0, -30.0)
    assert (step["fade_start_deg"], step["fade_end_deg"]) == (10.0, 30.0)
    cl_flat = 2.0 * math.pi * math.radians(-8.0)
    expected = cl_flat + 0.5 * 0.12 * (2.0 * math.pi * math.radians(-18.0) - cl_flat)
    assert q.cl[0] == pytest.approx(expected, abs=1e-12)  # the row at -20 deg
    # tied to the stall angles by default: the negative fade runs from -20 + 5 to -45
    tied = augment_rotation(p, "snel", r_over_R=0.3, chord_over_r=0.2,
                            negative_side=True).history[-1]
    assert (tied["stall_neg_deg"], tied["fade_neg_start_deg"], tied["fade_neg_end_deg"]) == (
        -20.0, -15.0, -45.0)


def test_fade_limits() -> None:
    # the fade may end at 90 deg but not beyond, and must have a width
    np.testing.assert_allclose(fade_weight([60.0, 90.0], 30.0, 90.0), [0.5, 0.0], atol=1e-15)
    for start, end in ((20.0, 20.0), (20.0, 90.5)):
        with pytest.raises(ParameterError):
            fade_weight([0.0], start, end)
    p = piecewise_polar()
    assert augment_rotation(p, r_over_R=0.3, chord_over_r=0.2,
                            fade_end_deg=90.0).history[-1]["fade_end_deg"] == 90.0
    # an offset reaching past 90 deg is capped there: 7 + 100 -> 90
    assert augment_rotation(p, r_over_R=0.3, chord_over_r=0.2,
                            fade_end_offset_deg=100.0).history[-1]["fade_end_deg"] == 90.0
    with pytest.raises(ParameterError) as info:
        augment_rotation(p, r_over_R=0.3, chord_over_r=0.2, fade_start_deg=30.0,
                         fade_end_deg=30.0)
    assert info.value.parameter == "fade_end_deg"
    with pytest.raises(ParameterError) as info:
        augment_rotation(p, r_over_R=0.3, chord_over_r=0.2, fade_start_offset_deg=math.inf)
    assert str(info.value).endswith("must be finite, got inf")
