"""Quality flags of single tables against published or hand-computed values.

Sources of the check values: thin-airfoil lift slope 2 pi per rad (Abbott & von Doenhoff
1959, "Theory of Wing Sections", sec. 4.3); degrees per radian 180/pi (definition); flat
plate normal drag about 2.0 (Hoerner 1965, "Fluid-Dynamic Drag", from memory); Prandtl-Glauert
factor 1/sqrt(1 - M^2) (Glauert 1928), computed by hand below.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.aero import Polar
from polarsvc.aero.quality import (
    context_flags,
    prandtl_glauert_factor,
    table_flags,
)
from tests.aero.synthetic import cylinder, kirchhoff_polar


def codes(flags, level=None):
    return {f.code for f in flags if level is None or f.level == level}


def test_a_thin_airfoil_table_carries_no_flag():
    # cl = 2 pi (alpha - alpha0) up to stall: exactly the thin-airfoil slope
    assert table_flags(kirchhoff_polar()) == []


def test_a_cylinder_skips_the_lift_checks():
    assert table_flags(cylinder()) == []


def test_radians_under_a_degree_header_are_found_by_the_lift_slope():
    # -10..20 deg written in radians: span 0.52, below the span test of Polar itself
    polar = kirchhoff_polar(low=-10, high=20)
    radians = Polar(np.radians(polar.alpha_deg), polar.cl, polar.cd, polar.cm,
                    thickness=0.21, reynolds=3e6)
    flags = table_flags(radians)
    assert "angles-radians" in codes(flags, "error")
    (flag,) = [f for f in flags if f.code == "angles-radians"]
    # slope read as "per degree": 2 pi per rad x (180/pi) = 360 per rad (hand computed);
    # the fit window +-5 "deg" holds the whole table, whose stall lowers the fit a little
    assert flag.value > 2 * 2 * math.pi


@pytest.mark.parametrize(("ratio", "level"), [(0.4, "warning"), (1.4, "warning"),
                                              (0.2, "error"), (2.5, "error")])
def test_lift_slope_bands(ratio, level):
    polar = kirchhoff_polar(slope_per_rad=ratio * 2 * math.pi, alpha_sep_deg=40.0, low=-8,
                            high=8)
    flags = [f for f in table_flags(polar) if f.code == "lift-slope"]
    assert [f.level for f in flags] == [level]


def test_reversed_lift_is_an_error():
    polar = kirchhoff_polar()
    reversed_ = Polar(polar.alpha_deg, -polar.cl, polar.cd, thickness=0.21, reynolds=3e6)
    assert "lift-slope" in codes(table_flags(reversed_), "error")


def test_cl_of_fifty_and_cd_in_counts():
    polar = kirchhoff_polar()
    cl = polar.cl.copy()
    cl[28] = 50.0  # alpha = 8 deg
    flags = table_flags(Polar(polar.alpha_deg, cl, polar.cd, thickness=0.21))
    (flag,) = [f for f in flags if f.code == "cl-magnitude"]
    assert (flag.level, flag.row, flag.alpha_deg, flag.value) == ("error", 28, 8.0, 50.0)
    assert "spike" in codes(flags, "warning")
    counts = Polar(polar.alpha_deg, polar.cl, polar.cd * 1e4, thickness=0.21)
    assert codes(table_flags(counts), "error") == {"cd-counts"}


def test_absurd_magnitudes():
    polar = kirchhoff_polar()
    cl = polar.cl.copy()
    cl[10] = 1e300
    flags = table_flags(Polar(polar.alpha_deg, cl, polar.cd, thickness=0.21))
    assert codes(flags, "error") == {"absurd-magnitude"}
    assert not flags[0].overridable


def test_flat_plate_drag_is_accepted_and_beyond_is_not():
    polar = kirchhoff_polar()
    cd = polar.cd.copy()
    cd[-1] = 2.0  # Hoerner's flat plate normal drag (from memory): plausible
    assert table_flags(Polar(polar.alpha_deg, polar.cl, cd, thickness=0.21)) == [] or \
        "cd-magnitude" not in codes(table_flags(Polar(polar.alpha_deg, polar.cl, cd,
                                                      thickness=0.21)))
    cd[-1] = 3.5
    assert "cd-magnitude" in codes(table_flags(Polar(polar.alpha_deg, polar.cl, cd,
                                                     thickness=0.21)), "error")


def test_row_counts_and_one_sided_tables():
    polar = kirchhoff_polar()
    three = Polar(polar.alpha_deg[16:19], polar.cl[16:19], polar.cd[16:19], thickness=0.21)
    assert codes(table_flags(three), "error") == {"too-few-rows"}
    positive = Polar(polar.alpha_deg[22:], polar.cl[22:], polar.cd[22:], thickness=0.21)
    assert "one-sided" in codes(table_flags(positive), "error")


def test_prandtl_glauert_factor_and_the_mach_check():
    # 1/sqrt(1 - 0.2^2) = 1.020621 (by hand)
    assert prandtl_glauert_factor(0.2) == pytest.approx(1.020621, abs=1e-6)
    polar = kirchhoff_polar()
    at = Polar(polar.alpha_deg, polar.cl, polar.cd, mach=0.3, thickness=0.21, reynolds=3e6)
    assert codes(context_flags(at, in_family=True, family_machs=[0.0]), "error") == {
        "mach-inconsistent"}
    near = Polar(polar.alpha_deg, polar.cl, polar.cd, mach=0.1, thickness=0.21, reynolds=3e6)
    # 1/sqrt(1 - 0.01) = 1.005038: 0.5 % < 2 %
    assert context_flags(near, in_family=True, family_machs=[0.0]) == []
    bare = Polar(polar.alpha_deg, polar.cl, polar.cd, thickness=0.21)
    assert codes(context_flags(bare, in_family=True, mach_stated=False)) == {
        "reynolds-missing", "mach-not-stated"}
    assert context_flags(bare, in_family=False) == []


finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False)


@settings(max_examples=80, deadline=None, database=None)
@given(
    rows=st.lists(
        st.tuples(st.floats(min_value=-180, max_value=180, allow_nan=False), finite,
                  st.floats(min_value=1e-4, max_value=1e6)),
        min_size=2, max_size=40, unique_by=lambda r: r[0],
    ),
    thickness=st.one_of(st.none(), st.floats(min_value=0.05, max_value=1.0)),
)
def test_flags_never_fail_and_always_name_a_known_level(rows, thickness):
    alpha, cl, cd = (np.array(c) for c in zip(*rows, strict=True))
    polar = Polar(alpha, cl, cd, thickness=thickness, assume_degrees=True)
    flags = table_flags(polar)
    assert all(f.level in ("error", "warning") for f in flags)
    for flag in flags:
        if flag.row is not None:
            assert polar.alpha_deg[flag.row] == flag.alpha_deg
    # anything beyond the absurd bound is always refused, whatever else is found
    if np.max(np.abs(cl)) > 1000:
        assert any(f.code == "absurd-magnitude" and not f.overridable for f in flags)
