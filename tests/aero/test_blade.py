"""The vectorised blade path against the chain of scalar calls, station by station."""

from __future__ import annotations

import json

import numpy as np
import pytest

from polarsvc.aero import (
    BladeStations,
    OutOfRangeError,
    ParameterError,
    augment_rotation,
    build_blade_tables,
    extend_full_range,
    interpolate_reynolds,
    interpolate_thickness,
    prepare_family,
    resample,
    station_reynolds,
    uniform_grid,
)

from .synthetic import cylinder, kirchhoff_polar

ROTOR_RADIUS_M = 48.0
TSR = 7.0


def members():
    """Synthetic family (invented): 3 thicknesses + cylinder, 3 Re, 2 surfaces."""
    out = []
    for t in (0.21, 0.30, 0.40):
        for re in (1e6, 3e6, 1e7):
            for surface in ("clean", "rough"):
                out.append(
                    kirchhoff_polar(
                        thickness=t,
                        reynolds=re,
                        surface=surface,
                        alpha_sep_deg=16 - 15 * t + np.log10(re / 1e6) - (surface == "rough"),
                        slope_per_rad=6.6 - 3 * t,
                        alpha0_deg=-2.5 + 2 * t,
                        cd_offset=0.01 * t,
                    )
                )
    for re in (1e6, 3e6, 1e7):
        for surface in ("clean", "rough"):
            out.append(cylinder(reynolds=re, surface=surface, cd=0.5))
    return out


def stations() -> BladeStations:
    radius = np.linspace(3.0, 47.0, 12)
    chord = np.linspace(3.4, 1.0, 12)
    twist = np.linspace(15.0, 0.0, 12)
    thickness = np.array([1.0, 0.8, 0.55, 0.40, 0.35, 0.30, 0.27, 0.24, 0.21, 0.21, 0.21, 0.21])
    reynolds = np.array([1e6, 2e6, 3e6, 4e6, 5e6, 6e6, 7e6, 8e6, 9e6, 1e7, 1e7, 1e7])
    return BladeStations(radius, chord, twist, thickness, reynolds)


def scalar_chain(
    family, blade, s, *, surface, rotation_model, thickness_method, grid_step, clamp=False
):
    """The same result built from the scalar public functions, one station at a time."""
    grid = uniform_grid(grid_step)
    prepared = [
        resample(extend_full_range(p), alpha_deg=grid) for p in family if p.surface == surface
    ]
    thicknesses = sorted({p.thickness for p in prepared})
    per_thickness = [
        interpolate_reynolds(
            [p for p in prepared if p.thickness == t], blade.reynolds[s], clamp=clamp
        )
        for t in thicknesses
    ]
    polar = interpolate_thickness(
        per_thickness, blade.thickness[s], method=thickness_method, clamp=clamp
    )
    if rotation_model is not None:
        polar = augment_rotation(
            polar,
            rotation_model,
            r_over_R=blade.radius_m[s] / ROTOR_RADIUS_M,
            chord_over_r=blade.chord_m[s] / blade.radius_m[s],
            tip_speed_ratio=TSR,
            twist_deg=blade.twist_deg[s],
        )
    return polar


@pytest.mark.parametrize(
    ("rotation_model", "thickness_method", "surface", "clamp"),
    [
        ("snel", "linear", "clean", False),
        ("du-selig", "pchip", "rough", False),
        ("chaviaropoulos-hansen", "linear", "rough", False),
        (None, "pchip", "clean", False),
        ("snel", "linear", "clean", True),
        ("du-selig", "pchip", "clean", True),
    ],
)
def test_blade_path_equals_scalar_chain(rotation_model, thickness_method, surface, clamp):
    family, blade = members(), stations()
    if clamp:  # Reynolds numbers partly above the family's range, thickness partly below
        blade = BladeStations(blade.radius_m, blade.chord_m, blade.twist_deg,
                              np.maximum(blade.thickness - 0.02, 0.15), blade.reynolds * 2)
    tables = build_blade_tables(
        family,
        blade,
        rotor_radius_m=ROTOR_RADIUS_M,
        tip_speed_ratio=TSR,
        surface=surface,
        rotation_model=rotation_model,
        thickness_method=thickness_method,
        grid_step_deg=1.0,
        clamp=clamp,
    )
    assert tables.cl.shape == (blade.size, 361)
    for s in range(blade.size):
        ref = scalar_chain(
            family, blade, s, surface=surface, rotation_model=rotation_model,
            thickness_method=thickness_method, grid_step=1.0, clamp=clamp,
        )
        np.testing.assert_array_equal(tables.alpha_deg, ref.alpha_deg)
        np.testing.assert_allclose(tables.cl[s], ref.cl, rtol=1e-12, atol=1e-15)
        np.testing.assert_allclose(tables.cd[s], ref.cd, rtol=1e-12, atol=1e-15)
        np.testing.assert_allclose(tables.cm[s], ref.cm, rtol=1e-12, atol=1e-15)


def test_blade_reports_and_cylinder_root() -> None:
    tables = build_blade_tables(members(), stations(), rotor_radius_m=ROTOR_RADIUS_M)
    root = tables.stations[0]
    assert root["thickness_used"] == 1.0 and root["thickness_weights"] == {"1.0": 1.0}
    # cylinder: cl = 0 and cm = 0 at every angle (Hoerner 1965, from memory); no rotation
    # correction can appear without lift
    assert np.all(tables.cl[0] == 0.0) and np.allclose(tables.cd[0], 0.5)
    middle = tables.stations[6]
    assert middle["thickness_weights"] == pytest.approx({"0.21": 1 / 3, "0.3": 2 / 3})
    # Re 7e6 between 3e6 and 1e7, linear in log10 Re (domain notes)
    w_hi = (np.log10(7e6) - np.log10(3e6)) / (np.log10(1e7) - np.log10(3e6))
    assert middle["reynolds_weights"]["0.3"] == pytest.approx(
        {"3000000.0": 1 - w_hi, "10000000.0": w_hi}
    )
    assert tables.recipe["rotation_model"] == "snel"
    json.dumps(tables.stations)  # reports serialise as they are
    assert tables.alpha_deg.size == 721  # 0.5 deg grid over -180..180


def test_blade_prepared_family_same_result() -> None:
    family, blade = members(), stations()
    direct = build_blade_tables(family, blade, rotor_radius_m=ROTOR_RADIUS_M)
    prepared = prepare_family(family, grid_step_deg=0.5)
    again = build_blade_tables(prepared, blade, rotor_radius_m=ROTOR_RADIUS_M)
    np.testing.assert_array_equal(direct.cl, again.cl)


def test_blade_out_of_range_and_clamp() -> None:
    family = members()
    blade = stations()
    high_re = BladeStations(blade.radius_m, blade.chord_m, blade.twist_deg, blade.thickness,
                            blade.reynolds * 3)
    with pytest.raises(OutOfRangeError) as info:
        build_blade_tables(family, high_re, rotor_radius_m=ROTOR_RADIUS_M)
    assert info.value.parameter == "reynolds"
    tables = build_blade_tables(family, high_re, rotor_radius_m=ROTOR_RADIUS_M, clamp=True)
    last = tables.stations[-1]
    assert last["reynolds_clamped"] is True and last["reynolds_used"]["0.21"] == 1e7


def test_blade_parameters_validated() -> None:
    blade = stations()
    with pytest.raises(ParameterError) as info:
        build_blade_tables(members(), blade, rotor_radius_m=10.0)  # r/R > 1
    assert info.value.parameter == "r_over_R"
    with pytest.raises(ParameterError) as info:
        BladeStations([1.0, 2.0], [1.0], [0.0, 0.0], [0.2, 0.2], [1e6, 1e6])
    assert info.value.parameter == "chord_m"


def test_station_reynolds_worked_by_hand() -> None:
    # Re = rho W c / mu, W = sqrt(U^2 + (Omega r)^2), ISA rho = 1.225 kg/m^3,
    # mu = 1.789e-5 Pa s (ISO 2533, from memory). r = 20 m, c = 2 m, U = 10 m/s, 12 rpm:
    # Omega = 2 pi 12 / 60 = 1.2566371 rad/s; Omega r = 25.132741 m/s;
    # W = sqrt(100 + 631.65468) = 27.049116 m/s; Re = 1.225 * 27.049116 * 2 / 1.789e-5
    #   = 3.704323e6
    re = station_reynolds([20.0], [2.0], 10.0, 12.0)
    assert re[0] == pytest.approx(3.704323e6, rel=1e-6)


def test_augment_then_extend_keeps_the_extension_settings_and_the_moment() -> None:
    # With the measured range augmented first and then extended, the extension's own rules
    # still hold at every lifting station: Viterna-Corrigan gives cd(+-90) = cd_max (Viterna &
    # Corrigan 1982, NASA CP-2230) for the cd_max asked, and the moment column is served.
    from polarsvc.aero.rotation import FadeSettings

    blade = stations()
    tables = build_blade_tables(members(), blade, rotor_radius_m=ROTOR_RADIUS_M,
                                tip_speed_ratio=TSR, rotation_order="augment-then-extend",
                                cd_max=1.5)
    lifting = blade.thickness < 1.0
    at_90 = np.flatnonzero(np.isin(tables.alpha_deg, [-90.0, 90.0]))
    np.testing.assert_allclose(tables.cd[np.ix_(lifting, at_90)], 1.5, rtol=0, atol=1e-12)
    assert tables.cm is not None and np.all(np.isfinite(tables.cm))
    # Nothing changes below the zero-lift angle unless asked (rotation module docstring): the
    # station at r = 15 m (t/c 0.35) against the same table without augmentation.
    plain = build_blade_tables(members(), blade, rotor_radius_m=ROTOR_RADIUS_M,
                               tip_speed_ratio=TSR, rotation_order="augment-then-extend",
                               cd_max=1.5, rotation_model=None)
    both = build_blade_tables(members(), blade, rotor_radius_m=ROTOR_RADIUS_M,
                              tip_speed_ratio=TSR, rotation_order="augment-then-extend",
                              cd_max=1.5, fade=FadeSettings(negative_side=True))
    s = 4
    below = (tables.alpha_deg > -10.0) & (tables.alpha_deg < -3.0)
    np.testing.assert_array_equal(tables.cl[s, below], plain.cl[s, below])
    assert np.any(both.cl[s, below] != plain.cl[s, below])


def test_blade_refusals_name_their_parameter() -> None:
    blade = stations()
    with pytest.raises(ParameterError) as info:
        build_blade_tables(members(), blade, rotor_radius_m=0.0)
    assert str(info.value) == "parameter 'rotor_radius_m': must be positive, got 0"
    from polarsvc.aero import UnknownMethodError

    with pytest.raises(UnknownMethodError) as unknown:
        build_blade_tables(members(), blade, rotor_radius_m=ROTOR_RADIUS_M,
                           thickness_method="cubic")
    assert str(unknown.value) == (
        "thickness_method='cubic' is not known; valid names: linear, pchip")
    with pytest.raises(UnknownMethodError) as order:
        build_blade_tables(members(), blade, rotor_radius_m=ROTOR_RADIUS_M,
                           rotation_order="sideways")
    assert order.value.parameter == "rotation_order" and order.value.value == "sideways"
    assert "extend-then-augment" in order.value.valid
    with pytest.raises(ParameterError) as missing:
        build_blade_tables(members(), {"radius_m": [3.0, 4.0]}, rotor_radius_m=ROTOR_RADIUS_M)
    assert missing.value.parameter == "stations"
    assert str(missing.value).startswith("parameter 'stations': missing chord_m")


def test_blade_recipe_and_station_report_keys() -> None:
    # The recipe is the record a stored blade set is recomputed from: every setting, with the
    # documented defaults of build_blade_tables (written out here from its signature).
    tables = build_blade_tables(members(), stations(), rotor_radius_m=ROTOR_RADIUS_M,
                                tip_speed_ratio=TSR)
    assert tables.recipe == {
        "grid_step_deg": 0.5, "surface": "clean", "extension_method": "viterna",
        "aspect_ratio": None, "cd_max": None, "trailing_edge_lift_factor": 0.7,
        "extension_step_deg": 1.0, "trailing_edge_drag": "reverse-flow", "members": 12,
        "rotation_model": "snel", "thickness_method": "linear", "clamp": False,
        "rotor_radius_m": 48.0, "tip_speed_ratio": 7.0,
        "rotation_order": "extend-then-augment",
        "fade": {"start_deg": None, "end_deg": None, "start_offset_deg": -5.0,
                 "end_offset_deg": 25.0, "negative_side": False},
    }
    report = tables.stations[5]
    assert sorted(report) == [
        "dynamic_stall", "measured_range_deg", "radius_m", "reynolds_clamped",
        "reynolds_requested", "reynolds_used", "reynolds_weights", "rotation", "station",
        "thickness_clamped", "thickness_requested", "thickness_used", "thickness_weights"]
    # the synthetic members are measured on -20..25 deg (tests/aero/synthetic.py defaults)
    assert report["measured_range_deg"] == [-20.0, 25.0]
    assert report["radius_m"] == pytest.approx(stations().radius_m[5])
