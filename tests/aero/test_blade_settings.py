"""Every setting of a blade set reaches the table it names, in both rotation orders.

One synthetic member (tests/aero/synthetic.py: Kirchhoff lift, alpha0 -2 deg, measured on
-20..25 deg in 1 deg steps, invented) and three stations at its own thickness and Reynolds
number, so the station table is the member's table and every difference comes from the
settings. The extension rules checked are those of polarsvc/aero/extension.py's docstring:
cd(+-90) = cd_max = 1.11 + 0.018 AR (Viterna & Corrigan 1982, NASA CP-2230); the flat-plate
normal force cn = cd90 sin a / (0.56 + 0.44 |sin a|) with cl = cn cos a, cd = cn sin a
(Lindenburg, about 2000, from memory) plus the offset meeting the measured end value and
decaying linearly to zero at +-90 deg; the mirror cl(180) = -k cl(0) with the trailing-edge
lift factor k (common practice, no source); mirrored drag cd(180) = cd(0); extension rows on
multiples of the extension step, linear in between on the served grid.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from polarsvc.aero import BladeStations, ParameterError, build_blade_tables, prepare_family
from polarsvc.aero.blade import PreparedFamily, blade_aspect_ratio, station_reynolds
from polarsvc.aero.errors import OutOfRangeError, UnknownMethodError
from polarsvc.aero.rotation import FadeSettings

from .synthetic import kirchhoff_polar

ROTOR_RADIUS_M = 24.0
SETTINGS = {
    "extension_method": "flat-plate",
    "aspect_ratio": 10.0,
    "trailing_edge_lift_factor": 0.5,
    "extension_step_deg": 5.0,
    "trailing_edge_drag": "mirror",
}
CD_MAX_AR10 = 1.11 + 0.018 * 10.0  # 1.29, Viterna & Corrigan 1982


def _family(with_cm: bool = True):
    return [kirchhoff_polar(with_cm=with_cm)]


def _stations() -> BladeStations:
    # c/r 0.2, 0.15 and 5e-5 (the last: Snel's factor 3 (c/r)^2 = 7.5e-9, no augmentation)
    return BladeStations([5.0, 10.0, 20.0], [1.0, 1.5, 1e-3], [10.0, 5.0, 0.0],
                         [0.21, 0.21, 0.21], [3e6, 3e6, 3e6])


def _at(tables, angle: float) -> int:
    return int(np.flatnonzero(tables.alpha_deg == angle)[0])


def _flat_plate(angle_deg: float, cd90: float) -> tuple[float, float]:
    a = math.radians(angle_deg)
    cn = cd90 * math.sin(a) / (0.56 + 0.44 * abs(math.sin(a)))
    return cn * math.cos(a), cn * math.sin(a)


@pytest.mark.parametrize("order", ["extend-then-augment", "augment-then-extend"])
def test_extension_settings_reach_the_served_table(order: str) -> None:
    tables = build_blade_tables(_family(), _stations(), rotor_radius_m=ROTOR_RADIUS_M,
                                rotation_order=order, **SETTINGS)
    assert {k: tables.recipe[k] for k in SETTINGS} == SETTINGS
    assert tables.recipe["rotation_order"] == order
    for s in range(3):
        cl, cd = tables.cl[s], tables.cd[s]
        assert cd[_at(tables, 90.0)] == pytest.approx(CD_MAX_AR10, abs=1e-12)
        assert cd[_at(tables, -90.0)] == pytest.approx(CD_MAX_AR10, abs=1e-12)
        assert cl[_at(tables, 180.0)] == pytest.approx(-0.5 * cl[_at(tables, 0.0)], abs=1e-12)
        assert cd[_at(tables, 180.0)] == pytest.approx(cd[_at(tables, 0.0)], abs=1e-12)
        # rows at 90 and 95 deg, the served 92.5 deg half way between them
        mid = 0.5 * (cl[_at(tables, 90.0)] + cl[_at(tables, 95.0)])
        assert cl[_at(tables, 92.5)] == pytest.approx(mid, abs=1e-12)
    if order == "extend-then-augment":
        return  # there the flat-plate curve is augmented after it is built
    for s in range(3):
        cl, cd = tables.cl[s], tables.cd[s]
        for end, angle in ((25.0, 60.0), (-20.0, -60.0)):
            decay = (90.0 - abs(angle)) / (90.0 - abs(end))
            model_end, model = _flat_plate(end, CD_MAX_AR10), _flat_plate(angle, CD_MAX_AR10)
            expected_cl = model[0] + (cl[_at(tables, end)] - model_end[0]) * decay
            expected_cd = model[1] + (cd[_at(tables, end)] - model_end[1]) * decay
            assert cl[_at(tables, angle)] == pytest.approx(expected_cl, abs=1e-9)
            assert cd[_at(tables, angle)] == pytest.approx(expected_cd, abs=1e-9)


def test_augment_then_extend_without_augmentation_is_the_plain_extension() -> None:
    # At c/r = 5e-5 the augmentation is below 1e-8, so the station's table augmented in its
    # measured range and then extended equals the member extended with the same settings
    # (no rotation); both orders are defined in polarsvc/aero/blade.py's docstring.
    augmented = build_blade_tables(_family(), _stations(), rotor_radius_m=ROTOR_RADIUS_M,
                                   rotation_order="augment-then-extend", **SETTINGS)
    plain = build_blade_tables(_family(), _stations(), rotor_radius_m=ROTOR_RADIUS_M,
                               rotation_model=None, **SETTINGS)
    np.testing.assert_allclose(augmented.cl[2], plain.cl[2], rtol=0, atol=1e-7)
    np.testing.assert_allclose(augmented.cd[2], plain.cd[2], rtol=0, atol=1e-7)
    np.testing.assert_allclose(augmented.cm[2], plain.cm[2], rtol=0, atol=1e-7)
    # and at c/r = 0.2 it does augment (Snel: 3 (c/r)^2 = 0.12)
    assert np.max(np.abs(augmented.cl[0] - plain.cl[0])) > 0.05


def test_tables_without_moment_have_no_moment_in_either_order() -> None:
    for order in ("extend-then-augment", "augment-then-extend"):
        tables = build_blade_tables(_family(with_cm=False), _stations(),
                                    rotor_radius_m=ROTOR_RADIUS_M, rotation_order=order)
        assert tables.cm is None
        assert np.all(np.isfinite(tables.cl)) and np.all(tables.cd > 0.0)


@pytest.mark.parametrize("order", ["extend-then-augment", "augment-then-extend"])
def test_rotation_reports_in_both_orders(order: str) -> None:
    # The 2D lift line of the synthetic member: alpha0 = -2 deg exactly (cl is odd about
    # alpha0 and the +-5 deg window of the 0.5 deg grid is symmetric about it). Its slope, by
    # least squares of cl = 2 pi x ((1 + sqrt f) / 2)^2 (x in rad, f logistic of |x| - 13
    # deg over 2 deg; tests/aero/synthetic.py) over x = -5..5 deg on the 0.5 deg grid, where
    # the half-degree values are linear between the member's 1 deg rows; computed with math:
    xs = [0.5 * k for k in range(-10, 11)]

    def lift(x_deg: float) -> float:
        f = 1.0 / (1.0 + math.exp((abs(x_deg) - 13.0) / 2.0))
        return 2 * math.pi * math.radians(x_deg) * ((1 + math.sqrt(f)) / 2) ** 2

    def served(x_deg: float) -> float:
        low, high = math.floor(x_deg), math.ceil(x_deg)
        return lift(x_deg) if low == high else 0.5 * (lift(low) + lift(high))

    slope = sum(x * served(x) for x in xs) / sum(x * x for x in xs) * 180.0 / math.pi
    tables = build_blade_tables(_family(), _stations(), rotor_radius_m=ROTOR_RADIUS_M,
                                rotation_order=order)
    for report in tables.stations:
        rotation = report["rotation"]
        assert rotation["alpha0_deg"] == pytest.approx(-2.0, abs=1e-9)
        assert rotation["cl_alpha_per_rad"] == pytest.approx(slope, rel=1e-9)
        # default fade: stall - 5 deg to stall + 25 deg (rotation module docstring)
        assert rotation["fade_start_deg"] == pytest.approx(rotation["stall_deg"] - 5.0)
        assert rotation["fade_end_deg"] == pytest.approx(rotation["stall_deg"] + 25.0)
        assert "stall_neg_deg" not in rotation
    # Snel's lift factor 3 (c/r)^2 (Snel, Houwink & Bosschers 1994), no drag factor
    factors = [r["rotation"]["lift_factor"] for r in tables.stations]
    assert factors == pytest.approx([3 * 0.2**2, 3 * 0.15**2, 3 * 5e-5**2], rel=1e-12)
    assert [r["rotation"]["drag_factor"] for r in tables.stations] == [0.0, 0.0, 0.0]


@pytest.mark.parametrize("order", ["extend-then-augment", "augment-then-extend"])
def test_rotation_settings_reach_the_reports(order: str) -> None:
    fade = FadeSettings(start_deg=12.0, end_deg=40.0, negative_side=True)
    tables = build_blade_tables(_family(), _stations(), rotor_radius_m=ROTOR_RADIUS_M,
                                rotation_order=order, rotation_model="du-selig",
                                tip_speed_ratio=7.0, cl_alpha_per_rad=6.0, fade=fade)
    for report in tables.stations:
        rotation = report["rotation"]
        assert rotation["cl_alpha_per_rad"] == pytest.approx(6.0, rel=1e-12)
        assert (rotation["fade_start_deg"], rotation["fade_end_deg"]) == (12.0, 40.0)
        assert {"stall_neg_deg", "fade_neg_start_deg", "fade_neg_end_deg"} <= set(rotation)
    assert tables.recipe["fade"] == {"start_deg": 12.0, "end_deg": 40.0,
                                     "start_offset_deg": -5.0, "end_offset_deg": 25.0,
                                     "negative_side": True}
    assert tables.recipe["tip_speed_ratio"] == 7.0
    assert tables.recipe["rotation_model"] == "du-selig"


def test_reynolds_reports_of_clamped_and_exact_stations() -> None:
    # two members of one airfoil, Re 1e6 and 1e7; stations at 1e6 exactly, 10^6.5 (half way
    # in log10 Re, weights 1/2 each), below and above the range (clamped to the ends)
    family = [kirchhoff_polar(reynolds=1e6), kirchhoff_polar(reynolds=1e7)]
    blade = BladeStations([5.0, 10.0, 15.0, 20.0], [1.0] * 4, [0.0] * 4, [0.21] * 4,
                          [1e6, 10**6.5, 5e5, 2e7])
    tables = build_blade_tables(family, blade, rotor_radius_m=ROTOR_RADIUS_M, clamp=True)
    exact, middle, low, high = tables.stations
    assert exact["reynolds_weights"] == {"0.21": {"1000000.0": 1.0}}
    assert middle["reynolds_weights"] == {
        "0.21": {"1000000.0": pytest.approx(0.5), "10000000.0": pytest.approx(0.5)}}
    assert [r["reynolds_clamped"] for r in tables.stations] == [False, False, True, True]
    assert low["reynolds_used"] == {"0.21": 1e6} and high["reynolds_used"] == {"0.21": 1e7}
    assert middle["reynolds_used"] == {"0.21": pytest.approx(10**6.5)}
    assert middle["thickness_weights"] == {"0.21": 1.0}
    with pytest.raises(OutOfRangeError) as raised:
        build_blade_tables(family, blade, rotor_radius_m=ROTOR_RADIUS_M)
    assert raised.value.parameter == "reynolds"
    assert raised.value.value == 5e5
    with pytest.raises(OutOfRangeError) as thick:
        build_blade_tables(family, BladeStations([5.0], [1.0], [0.0], [0.3], [1e6]),
                           rotor_radius_m=ROTOR_RADIUS_M)
    assert thick.value.parameter == "thickness"


def test_small_rotor_and_refusals_of_the_blade() -> None:
    # a 0.5 m model rotor is a rotor
    small = BladeStations([0.1, 0.4], [0.05, 0.03], [0.0, 0.0], [0.21, 0.21], [3e6, 3e6])
    assert build_blade_tables(_family(), small, rotor_radius_m=0.5).cl.shape == (2, 721)
    with pytest.raises(UnknownMethodError) as unknown:
        build_blade_tables(_family(), small, rotor_radius_m=0.5, rotation_model="bent")
    assert (unknown.value.parameter, unknown.value.value) == ("rotation_model", "bent")
    assert unknown.value.valid == ("snel", "du-selig", "chaviaropoulos-hansen")


@pytest.mark.parametrize(
    ("arrays", "parameter", "message"),
    [
        (([1.0, 2.0], [1.0], [0.0, 0.0], [0.2, 0.2], [1e6, 1e6]), "chord_m",
         "parameter 'chord_m': must have one value per station (2)"),
        (([1.0, np.nan], [1.0, 1.0], [0.0, 0.0], [0.2, 0.2], [1e6, 1e6]), "radius_m",
         "parameter 'radius_m': must be finite"),
        (([1.0, 2.0], [1.0, 1.0], [0.0, 0.0], [0.2, 0.0], [1e6, 1e6]), "thickness",
         "parameter 'thickness': must be positive"),
        (([1.0, 2.0], [1.0, 1.0], [0.0, 0.0], [0.2, 0.2], [1e6, -1e6]), "reynolds",
         "parameter 'reynolds': must be positive"),
    ],
)
def test_station_refusals(arrays, parameter: str, message: str) -> None:
    with pytest.raises(ParameterError) as raised:
        BladeStations(*arrays)
    assert raised.value.parameter == parameter and str(raised.value) == message


def test_stations_from_integers_and_from_an_object() -> None:
    blade = BladeStations([1, 2], [1, 1], [0, 0], [1, 1], [1, 1])
    assert blade.radius_m.dtype == np.float64 and blade.reynolds.dtype == np.float64

    class Planform:  # any object with the five attributes
        radius_m, chord_m, twist_deg = [5.0, 10.0], [1.0, 1.0], [0.0, 0.0]
        thickness, reynolds = [0.21, 0.21], [3e6, 3e6]

    tables = build_blade_tables(_family(), Planform(), rotor_radius_m=ROTOR_RADIUS_M)
    assert [r["radius_m"] for r in tables.stations] == [5.0, 10.0]
    with pytest.raises(ParameterError) as missing:
        build_blade_tables(_family(), {"radius_m": [1.0], "reynolds": [1e6]},
                           rotor_radius_m=ROTOR_RADIUS_M)
    assert str(missing.value) == "parameter 'stations': missing chord_m, twist_deg, thickness"


@pytest.mark.parametrize(
    ("arguments", "parameter", "message"),
    [
        (([10.0], [1.0], 10.0, 10.0), "radius_m", None),
        (([10.0], [0.0], 10.0, 10.0), "chord_m", "parameter 'chord_m': must be positive"),
        (([10.0], [np.inf], 10.0, 10.0), "chord_m", "parameter 'chord_m': must be positive"),
        (([-1.0], [1.0], 10.0, 10.0), "radius_m",
         "parameter 'radius_m': must be non-negative"),
        (([np.nan], [1.0], 10.0, 10.0), "radius_m",
         "parameter 'radius_m': must be non-negative"),
    ],
)
def test_station_reynolds_refusals(arguments, parameter: str, message: str | None) -> None:
    if message is None:  # r = 0 is allowed (hub centre): Re = rho U c / mu
        assert station_reynolds([0.0], [1.0], 10.0, 10.0)[0] == pytest.approx(
            1.225 * 10.0 * 1.0 / 1.789e-5)
        # r = 0.5 m, c = 1 m, U = 10 m/s, 10 rpm: Omega r = 0.5236 m/s (by hand)
        assert station_reynolds([0.5], [1.0], 10.0, 10.0)[0] == pytest.approx(
            1.225 * math.hypot(10.0, math.pi / 3.0 * 0.5) / 1.789e-5)
        return
    with pytest.raises(ParameterError) as raised:
        station_reynolds(*arguments)
    assert raised.value.parameter == parameter and str(raised.value) == message


def test_station_reynolds_air_properties_are_checked() -> None:
    with pytest.raises(ParameterError) as raised:
        station_reynolds([1.0], [1.0], 10.0, 10.0, mu_pa_s=0.0)
    assert str(raised.value) == "parameter 'mu_pa_s': must be positive, got 0"
    with pytest.raises(ParameterError) as raised:
        station_reynolds([1.0], [1.0], 10.0, 10.0, rho_kg_m3=-1.0)
    assert str(raised.value) == "parameter 'rho_kg_m3': must be positive, got -1"


def test_blade_aspect_ratio_by_hand_and_its_refusals() -> None:
    # stations r = 2, 6, 10 m, chord 2, 1.5, 1 m: area by the trapezoidal rule
    # 4 x 1.75 + 4 x 1.25 = 12 m^2. From the innermost station: span 12 - 2 = 10 m, AR
    # 100 / 12 = 8.3333; from a hub of 1 m: span 11 m, AR 121 / 12 = 10.0833 (by hand)
    radius, chord = [2.0, 6.0, 10.0], [2.0, 1.5, 1.0]
    assert blade_aspect_ratio(radius, chord, 12.0) == pytest.approx(100.0 / 12.0, rel=1e-12)
    assert blade_aspect_ratio(radius, chord, 12.0, hub_radius_m=1.0) == pytest.approx(
        121.0 / 12.0, rel=1e-12)
    assert blade_aspect_ratio([2, 6], [1, 1], 3) == pytest.approx(1.0 / 4.0)  # integers
    refusals = [
        (([2.0], [1.0], 12.0), "stations", "at least two stations with radius and chord"),
        (([[2.0, 6.0]], [[1.0, 1.0]], 12.0), "stations",
         "at least two stations with radius and chord"),
        (([2.0, 6.0], [1.0], 12.0), "stations", "at least two stations with radius and chord"),
        (([6.0, 2.0], [1.0, 1.0], 12.0), "radius_m", "must increase from station to station"),
        (([2.0, 6.0], [1.0, 0.0], 12.0), "chord_m", "must be positive"),
        (([2.0, 6.0], [1.0, np.nan], 12.0), "chord_m", "must be positive"),
        (([2.0, 6.0], [1.0, 1.0], 2.0), "rotor_radius_m", "must exceed the root radius 2 m"),
        (([2.0, 6.0], [1.0, 1.0], np.nan), "rotor_radius_m",
         "must exceed the root radius 2 m"),
    ]
    for arguments, parameter, detail in refusals:
        with pytest.raises(ParameterError) as raised:
            blade_aspect_ratio(*arguments)
        assert str(raised.value) == f"parameter {parameter!r}: {detail}", arguments
    # a span of half a metre is a span
    assert blade_aspect_ratio([2.0, 2.4], [0.1, 0.1], 2.5) == pytest.approx(0.25 / 0.04)


def test_prepared_family_labels() -> None:
    family = prepare_family([kirchhoff_polar(thickness=0.21), kirchhoff_polar(thickness=0.3)],
                            airfoils=["GULL-21", "GULL-30"])
    assert family.label(0) == "airfoil 'GULL-21' (t/c 0.21)"
    bare = PreparedFamily(family.alpha_deg, family.thicknesses, family.groups, family.tables,
                          family.columns, family.recipe, family.measured_deg)
    assert bare.label(0) == "the member at t/c 0.21"
    assert bare.label(1) == "the member at t/c 0.3"


def test_prepare_family_settings_and_default_grid() -> None:
    # default grid 0.5 deg over -180..180: 721 angles; cd_max given directly is cd(+-90)
    family = prepare_family(_family(), cd_max=1.4)
    assert family.alpha_deg.size == 721 and family.columns == ("cl", "cd", "cm")
    at_90 = np.flatnonzero(np.isin(family.alpha_deg, [-90.0, 90.0]))
    np.testing.assert_allclose(family.tables[0, 1, at_90], 1.4, rtol=0, atol=1e-12)
    assert family.recipe["cd_max"] == 1.4 and family.recipe["members"] == 1
    bare = prepare_family(_family(with_cm=False))
    assert bare.columns == ("cl", "cd") and bare.tables.shape == (1, 2, 721)


def _named(thickness: float, reynolds: float | None, **options) -> object:
    return kirchhoff_polar(thickness=thickness, reynolds=reynolds, **options)


@pytest.mark.parametrize(
    ("members", "airfoils", "message"),
    [
        ([_named(0.21, 1e6)], ["GULL-21", "GULL-30"],
         "parameter 'airfoils': must name each member"),
        ([_named(0.21, None)], ["GULL-21"],
         "parameter 'members': airfoil 'GULL-21' lacks thickness or Reynolds number"),
        ([_named(0.21, 1e6), _named(0.21, None)], None,
         "parameter 'members': member 1 lacks thickness or Reynolds number"),
        ([kirchhoff_polar(thickness=None)], None,
         "parameter 'members': member 0 lacks thickness or Reynolds number"),
        ([_named(0.21, 1e6), _named(0.25, 3e6)], ["GULL-21", "GULL-21"],
         "parameter 'members': airfoil 'GULL-21' has tables at two thicknesses"),
        ([_named(0.21, 1e6), _named(0.21, 3e6)], ["GULL-21", "TERN-21"],
         "parameter 'members': airfoils 'GULL-21' and 'TERN-21' share t/c 0.21; retire one "
         "of them from blends or move it to another family"),
        ([_named(0.21, 1e6), _named(0.21, 1e6)], ["GULL-21", "GULL-21"],
         "parameter 'members': two tables of airfoil 'GULL-21' (t/c 0.21) share a Reynolds "
         "number"),
        ([_named(0.21, 1e6), _named(0.21, 1e6)], None,
         "parameter 'members': two tables of the member at t/c 0.21 share a Reynolds number"),
    ],
)
def test_family_refusals_name_the_member(members, airfoils, message: str) -> None:
    with pytest.raises(ParameterError) as raised:
        prepare_family(members, airfoils=airfoils)
    assert str(raised.value) == message


def test_a_family_without_the_surface_condition() -> None:
    from polarsvc.aero import InsufficientDataError

    with pytest.raises(InsufficientDataError) as raised:
        prepare_family(_family(), surface="rough")
    assert str(raised.value) == "no family member has surface condition 'rough'"


def test_measured_range_and_range_checks_follow_the_members_used() -> None:
    # GULL-21 measured on -20..25 deg at Re 1e6 and 1e7; GULL-30 on -15..20 deg at Re 3e6
    # only. A station uses the angles measured in every member it draws on (blade.py).
    family = prepare_family(
        [_named(0.21, 1e6), _named(0.21, 1e7), _named(0.30, 3e6, low=-15.0, high=20.0)],
        airfoils=["GULL-21", "GULL-21", "GULL-30"])
    blade = BladeStations([5.0, 10.0, 15.0], [1.0] * 3, [0.0] * 3, [0.21, 0.25, 0.30],
                          [2e6, 3e6, 3e6])
    tables = build_blade_tables(family, blade, rotor_radius_m=ROTOR_RADIUS_M,
                                rotation_model=None)
    assert [r["measured_range_deg"] for r in tables.stations] == [
        [-20.0, 25.0], [-15.0, 20.0], [-15.0, 20.0]]
    assert [r["thickness_weights"] for r in tables.stations] == [
        {"0.21": 1.0}, {"0.21": pytest.approx(5 / 9), "0.3": pytest.approx(4 / 9)},
        {"0.3": 1.0}]
    assert set(tables.stations[0]["reynolds_used"]) == {"0.21"}
    # at t/c 0.21 exactly GULL-30 carries no weight, so Re 2e6 (outside its 3e6) is fine;
    # at t/c 0.30 exactly GULL-30 alone is used, and Re 2e6 is refused by its name
    with pytest.raises(OutOfRangeError) as raised:
        build_blade_tables(family, BladeStations([5.0], [1.0], [0.0], [0.30], [2e6]),
                           rotor_radius_m=ROTOR_RADIUS_M, rotation_model=None)
    assert raised.value.subject == "airfoil 'GULL-30' (t/c 0.3)"
    assert raised.value.value == 2e6


@pytest.mark.parametrize("model", ["du-selig", "chaviaropoulos-hansen"])
@pytest.mark.parametrize("order", ["extend-then-augment", "augment-then-extend"])
def test_augmentation_applies_the_reported_factors_in_both_orders(order: str,
                                                                  model: str) -> None:
    # Where the fade weight is 1 (between the zero-lift angle and stall - 3 deg here) the
    # augmented table is cl + f (cl_lin - cl) where cl_lin = cl_alpha (alpha - alpha0)
    # exceeds cl, and cd + g (cd - cd(alpha0)) (Snel et al. 1994; Du & Selig 1998;
    # Chaviaropoulos & Hansen 2000, whose factors depend on the twist; rotation module
    # docstring), with f and g as reported, alpha0 = -2 deg (the synthetic member's)
    # and the slope given (7.0 per rad, above the member's own 6.25, so cl_lin > cl there).
    fade = FadeSettings(start_offset_deg=-3.0, end_offset_deg=20.0)
    options = {"rotor_radius_m": ROTOR_RADIUS_M, "rotation_order": order}
    tables = build_blade_tables(_family(), _stations(), rotation_model=model,
                                tip_speed_ratio=7.0, cl_alpha_per_rad=7.0, fade=fade,
                                **options)
    plain = build_blade_tables(_family(), _stations(), rotation_model=None, **options)
    cd_at_alpha0 = plain.cd[:, _at(plain, -2.0)]
    for s, report in enumerate(tables.stations):
        rotation = report["rotation"]
        stall = rotation["stall_deg"]
        assert (rotation["fade_start_deg"], rotation["fade_end_deg"]) == pytest.approx(
            (stall - 3.0, stall + 20.0))
        f, g = rotation["lift_factor"], rotation["drag_factor"]
        if s < 2:  # at c/r 5e-5 Du-Selig's lift factor is clipped to 0
            assert f > 0.0 and g != 0.0  # Du-Selig lowers the drag here (g < 0)
        inside = (tables.alpha_deg > -2.0) & (tables.alpha_deg <= stall - 3.0)
        alpha = tables.alpha_deg[inside]
        cl_2d, cd_2d = plain.cl[s, inside], plain.cd[s, inside]
        cl_lin = 7.0 * np.radians(alpha + 2.0)
        assert np.all(cl_lin > cl_2d)
        np.testing.assert_allclose(tables.cl[s, inside], cl_2d + f * (cl_lin - cl_2d),
                                   rtol=0, atol=1e-12)
        expected_cd = cd_2d + g * np.maximum(cd_2d - cd_at_alpha0[s], 0.0)
        np.testing.assert_allclose(tables.cd[s, inside], expected_cd, rtol=0, atol=1e-12)


def test_a_zero_weight_neighbour_does_not_bracket_a_station() -> None:
    # t/c 0.30 exactly: GULL-21 (Re 1e6..2e6) carries weight 0, so Re 3e6 (outside its
    # range, inside GULL-30's single 3e6) is served from GULL-30 alone
    family = prepare_family(
        [_named(0.21, 1e6), _named(0.21, 2e6), _named(0.30, 3e6)],
        airfoils=["GULL-21", "GULL-21", "GULL-30"])
    station = BladeStations([5.0, 6.0], [1.0, 1.0], [0.0, 0.0], [0.30, 0.30], [3e6, 3e6])
    tables = build_blade_tables(family, station, rotor_radius_m=ROTOR_RADIUS_M,
                                rotation_model=None)
    assert tables.stations[0]["reynolds_used"] == {"0.3": 3e6}
    assert tables.stations[1]["thickness_weights"] == {"0.3": 1.0}


def test_one_thickness_with_pchip_and_without_dynamic_stall_inputs() -> None:
    # PCHIP over a single thickness is that thickness's table (nothing to interpolate)
    linear = build_blade_tables(_family(), _stations(), rotor_radius_m=ROTOR_RADIUS_M)
    pchip = build_blade_tables(_family(), _stations(), rotor_radius_m=ROTOR_RADIUS_M,
                               thickness_method="pchip")
    np.testing.assert_array_equal(pchip.cl, linear.cl)
    bare = build_blade_tables(_family(), _stations(), rotor_radius_m=ROTOR_RADIUS_M,
                              dynamic_stall=False)
    assert bare.dynamic_stall is None
    assert all("dynamic_stall" not in report for report in bare.stations)
    assert all("dynamic_stall" in report for report in linear.stations)
