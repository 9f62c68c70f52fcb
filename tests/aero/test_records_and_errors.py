"""What the core records and refuses, pinned exactly: the history steps that a table's lineage
is built from (resampling and interpolation) and the typed errors that name the offending
parameter. Expected records are written out by hand from the documented behaviour."""

from __future__ import annotations

import math

import numpy as np
import pytest

from polarsvc.aero import (
    InsufficientDataError,
    ParameterError,
    Polar,
    UnknownMethodError,
    blade_aspect_ratio,
    interpolate_reynolds,
    interpolate_thickness,
    resample,
    station_reynolds,
    uniform_grid,
)


def _polar(alpha: list[float], offset: float = 0.0, **conditions: object) -> Polar:
    a = np.asarray(alpha, dtype=float)
    return Polar(a, 0.1 * a + offset, 0.01 + 0.0 * a, assume_degrees=True, **conditions)


def test_resample_records_its_step() -> None:
    table = _polar([-1.0, -0.75, -0.5, -0.25, 0.0, 0.25, 0.5, 0.75, 1.0])
    stepped = resample(table, step_deg=0.5)
    assert dict(stepped.history[-1]) == {"step": "resample", "step_deg": 0.5, "rows": 5}
    explicit = resample(table, alpha_deg=[-1.0, 1.0])
    assert dict(explicit.history[-1]) == {"step": "resample", "explicit": True, "rows": 2}
    np.testing.assert_array_equal(explicit.cl, [-0.1, 0.1])
    assert stepped.cm is None and explicit.cm is None


def test_resample_errors_name_their_parameter() -> None:
    table = _polar([-1.0, 0.0, 1.0])
    with pytest.raises(ParameterError) as both:
        resample(table, step_deg=0.5, alpha_deg=[0.0, 1.0])
    assert str(both.value) == (
        "parameter 'step_deg': give exactly one of step_deg and alpha_deg")
    with pytest.raises(ParameterError) as single:
        resample(table, alpha_deg=[0.0])
    assert str(single.value) == "parameter 'alpha_deg': needs at least 2 finite angles"
    with pytest.raises(InsufficientDataError,
                       match=r"^fewer than 2 multiples of 0\.5 deg lie within 0\.1\.\.0\.4 deg$"):
        resample(_polar([0.1, 0.2, 0.3, 0.4]), step_deg=0.5)
    with pytest.raises(ParameterError) as backwards:
        uniform_grid(1.0, 10.0, 0.0)
    assert str(backwards.value) == "parameter 'stop': must be finite and greater than start"


def test_reynolds_interpolation_record_and_values() -> None:
    # log10 2e6 lies half-way between log10 1e6 and log10 4e6 (log10 2 / log10 4 = 1/2, by
    # hand), so each member weighs 0.5 and cl is the mean of the two members' cl.
    low = _polar([-2.0, -1.0, 0.0, 1.0, 2.0], reynolds=1e6)
    high = _polar([-2.0, -1.0, 0.0, 1.0, 2.0], offset=0.2, reynolds=4e6)
    blended = interpolate_reynolds([high, low], 2e6)
    assert dict(blended.history[-1]) == {
        "step": "interpolate_reynolds",
        "requested": 2e6,
        "used": 2e6,
        "clamped": False,
        "members": [1e6, 4e6],
        "weights": {"1000000.0": pytest.approx(0.5), "4000000.0": pytest.approx(0.5)},
    }
    np.testing.assert_allclose(blended.cl, 0.1 * blended.alpha_deg + 0.1, atol=1e-12)
    assert blended.reynolds == 2e6


def test_interpolation_uses_the_angles_all_members_share() -> None:
    # Documented in _common_grid: the union of the members' angles within the intersection of
    # their ranges, here -1.5..1.5 deg (by hand).
    fine = _polar([-2.0, -1.0, 0.0, 1.0, 2.0], reynolds=1e6)
    coarse = _polar([-1.5, 0.0, 1.5], reynolds=4e6)
    blended = interpolate_reynolds([coarse, fine], 2e6)
    np.testing.assert_array_equal(blended.alpha_deg, [-1.5, -1.0, 0.0, 1.0, 1.5])
    with pytest.raises(InsufficientDataError,
                       match=r"^the polars share fewer than 2 angles of attack$"):
        interpolate_reynolds([_polar([-2.0, -1.0], reynolds=1e6),
                              _polar([1.0, 2.0], reynolds=4e6)], 2e6)


def test_thickness_interpolation_record_and_reynolds() -> None:
    # Half-way in thickness: weights 0.5 each; the blend's Reynolds number is blended the same
    # way, (1e6 + 3e6) / 2 = 2e6 (by hand).
    thin = _polar([-2.0, 0.0, 2.0], thickness=0.2, reynolds=1e6)
    thick = _polar([-2.0, 0.0, 2.0], offset=0.2, thickness=0.3, reynolds=3e6)
    blended = interpolate_thickness([thin, thick], 0.25)
    record = dict(blended.history[-1])
    assert record["weights"] == {"0.2": pytest.approx(0.5), "0.3": pytest.approx(0.5)}
    assert (record["method"], record["requested"], record["clamped"]) == ("linear", 0.25, False)
    assert blended.reynolds == pytest.approx(2e6)
    assert blended.thickness == pytest.approx(0.25)


def test_interpolation_refusals_name_their_parameter() -> None:
    a = _polar([-2.0, 0.0, 2.0], reynolds=1e6, thickness=0.2)
    cases = [
        (lambda: interpolate_reynolds([a, _polar([-2.0, 0.0, 2.0], thickness=0.2)], 2e6),
         "polars", "polar 1 has no reynolds"),
        (lambda: interpolate_reynolds([a, _polar([-2.0, 0.0, 2.0], reynolds=1e6,
                                                 thickness=0.2)], 2e6),
         "polars", "two polars share the same reynolds"),
        (lambda: interpolate_reynolds([a, _polar([-2.0, 0.0, 2.0], reynolds=4e6,
                                                 thickness=0.3)], 2e6),
         "polars", "mix thicknesses; interpolate in Reynolds per thickness"),
    ]
    for call, parameter, message in cases:
        with pytest.raises(ParameterError) as raised:
            call()
        assert raised.value.parameter == parameter
        assert str(raised.value) == f"parameter '{parameter}': {message}"
    with pytest.raises(UnknownMethodError) as unknown:
        interpolate_thickness([a], 0.2, method="cubic")
    assert unknown.value.parameter == "method"
    assert str(unknown.value) == "method='cubic' is not known; valid names: linear, pchip"


def test_blade_aspect_ratio_by_hand_and_its_refusals() -> None:
    # span 10 - 2 = 8 m, area (1 + 1) / 2 x 8 = 8 m^2: AR = 64 / 8 = 8
    assert blade_aspect_ratio([2.0, 10.0], [1.0, 1.0], 10.0) == pytest.approx(8.0)
    cases = [
        (([2.0, 10.0], [1.0, 1.0, 1.0]), "stations", "at least two stations with radius and chord"),
        (([2.0, 2.0], [1.0, 1.0]), "radius_m", "must increase from station to station"),
        (([2.0, 10.0], [1.0, 0.0]), "chord_m", "must be positive"),
    ]
    for (radius, chord), parameter, message in cases:
        with pytest.raises(ParameterError) as raised:
            blade_aspect_ratio(radius, chord, 10.0)
        assert str(raised.value) == f"parameter '{parameter}': {message}"


def test_station_reynolds_by_hand_and_its_refusals() -> None:
    # U = 10 m/s, 60 rpm (Omega = 2 pi rad/s), r = 10 m: W = sqrt(100 + (20 pi)^2); with
    # rho = 1.2, mu = 1.8e-5 and c = 1 m: Re = 1.2 W / 1.8e-5 (by hand)
    w = math.sqrt(100.0 + (20.0 * math.pi) ** 2)
    found = station_reynolds([10.0], [1.0], 10.0, 60.0, rho_kg_m3=1.2, mu_pa_s=1.8e-5)
    assert found[0] == pytest.approx(1.2 * w / 1.8e-5, rel=1e-12)
    with pytest.raises(ParameterError) as raised:
        station_reynolds([10.0], [1.0], 10.0, 60.0, rho_kg_m3=0.0)
    assert str(raised.value) == "parameter 'rho_kg_m3': must be positive, got 0"


def test_grid_limits() -> None:
    # the step may be 90 deg at most; the span must be a whole number of steps and positive
    assert resample(_polar([-90.0, 0.0, 90.0]), step_deg=90.0).alpha_deg.tolist() == [
        -90.0, 0.0, 90.0]
    with pytest.raises(ParameterError) as coarse:
        resample(_polar([-90.0, 0.0, 90.0]), step_deg=90.5)
    assert str(coarse.value) == "parameter 'step_deg': must lie in (0, 90] deg, got 90.5"
    with pytest.raises(ParameterError) as empty:
        uniform_grid(1.0, 0.0, 0.0)
    assert empty.value.parameter == "stop"
    with pytest.raises(ParameterError) as uneven:
        uniform_grid(0.7)
    assert str(uneven.value) == (
        "parameter 'step_deg': 0.7 deg does not divide the span -180..180 deg")
    # exactly two multiples of 0.5 deg within 0.1..1.2 deg: 0.5 and 1.0
    two = resample(_polar([0.1, 0.4, 0.8, 1.2]), step_deg=0.5)
    assert two.alpha_deg.tolist() == [0.5, 1.0]


def test_interpolation_at_a_member_and_on_two_shared_angles() -> None:
    low = _polar([-2.0, -1.0, 0.0, 1.0, 2.0], reynolds=1e6)
    high = _polar([-2.0, -1.0, 0.0, 1.0, 2.0], offset=0.2, reynolds=4e6)
    at_member = interpolate_reynolds([low, high], 1e6)
    assert at_member.history[-1]["weights"] == {"1000000.0": 1.0}
    np.testing.assert_array_equal(at_member.cl, low.cl)
    shared_two = interpolate_reynolds([_polar([-2.0, 0.0, 2.0], reynolds=1e6),
                                       _polar([0.0, 2.0, 4.0], reynolds=4e6)], 2e6)
    assert shared_two.alpha_deg.tolist() == [0.0, 2.0]
    thin = _polar([-2.0, 0.0, 2.0], thickness=0.2)
    thick = _polar([-2.0, 0.0, 2.0], thickness=0.3)
    record = dict(interpolate_thickness([thick, thin], 0.25).history[-1])
    assert (record["step"], record["members"], record["used"]) == (
        "interpolate_thickness", [0.2, 0.3], 0.25)
    assert interpolate_thickness([thick, thin], 0.25).reynolds is None
    with pytest.raises(ParameterError) as mixed:
        interpolate_thickness([thin, _polar([-2.0, 0.0, 2.0], thickness=0.3, surface="rough")],
                              0.25)
    assert str(mixed.value) == "parameter 'polars': mix surface conditions ['clean', 'rough']"
    with pytest.raises(InsufficientDataError, match=r"^no polars given$"):
        interpolate_reynolds([], 2e6)
