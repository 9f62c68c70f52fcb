"""A family member with a narrow Reynolds range is used only where it brackets a station in
thickness; errors name it; two airfoils of one thickness are refused by name.

The check of the first test is structural and independent of the numbers: a station that
the narrow member does not bracket must get exactly the table of the family without it."""

from __future__ import annotations

import numpy as np
import pytest

from polarsvc.aero import OutOfRangeError, ParameterError, build_blade_tables, prepare_family
from tests.aero.synthetic import kirchhoff_polar


def family():
    members, names = [], []
    for name, thickness, offset in (("A-18", 0.18, 0.0), ("A-21", 0.21, 0.001),
                                    ("A-30", 0.30, 0.004)):
        for reynolds in (2e6, 4e6):
            members.append(kirchhoff_polar(thickness=thickness, reynolds=reynolds,
                                           cd_offset=offset + reynolds * 1e-10))
            names.append(name)
    narrow = kirchhoff_polar(thickness=0.24, reynolds=3e6, cd_offset=0.002)
    return members, names, narrow


def stations(thickness, reynolds):
    return {"radius_m": [10.0], "chord_m": [2.0], "twist_deg": [0.0],
            "thickness": [thickness], "reynolds": [reynolds]}


def test_a_member_counts_only_where_it_brackets_the_station():
    members, names, narrow = family()
    with_narrow = prepare_family([*members, narrow], airfoils=[*names, "B-24"])
    without = prepare_family(members, airfoils=names)
    station = stations(0.195, 2.5e6)  # between; B-24 covers only Re 3e6
    a = build_blade_tables(with_narrow, station, rotor_radius_m=50.0, rotation_model=None)
    b = build_blade_tables(without, station, rotor_radius_m=50.0, rotation_model=None)
    np.testing.assert_array_equal(a.cl, b.cl)
    np.testing.assert_array_equal(a.cd, b.cd)
    assert set(a.stations[0]["reynolds_used"]) == {"0.18", "0.21"}
    with pytest.raises(OutOfRangeError) as refused:
        build_blade_tables(with_narrow, stations(0.27, 2.5e6), rotor_radius_m=50.0,
                           rotation_model=None)
    assert refused.value.subject == "airfoil 'B-24' (t/c 0.24)"
    assert "of airfoil 'B-24' (t/c 0.24) [3e+06, 3e+06]" in str(refused.value)


def test_two_airfoils_of_one_thickness_are_refused_by_name():
    members, names, _ = family()
    twin = kirchhoff_polar(thickness=0.21, reynolds=3e6)
    with pytest.raises(ParameterError, match=r"'A-21' and 'C-21' share t/c 0\.21"):
        prepare_family([*members, twin], airfoils=[*names, "C-21"])
