"""Writers: exports read back bit for bit.

Bit-exact re-import rests on Python's float repr being the shortest string that reads back to
the same double (Python 3.1 "What's New", David Gay's correctly rounded conversions; from
memory); numpy.loadtxt serves as an independent reader of the long multi-station layout.
"""

from __future__ import annotations

import io
import json

import numpy as np
import pytest
from hypothesis import given, reject, settings
from hypothesis import strategies as st

from polarsvc.aero import SURFACE_CONDITIONS, Polar, PolarValidationError
from polarsvc.formats import (
    FormatError,
    parse_polar_file,
    polar_to_csv,
    polar_to_json,
    table_to_csv,
)

PROVENANCE = {
    "source_kind": "wind-tunnel",
    "reference": "report 3, run 12: tripped at x/c 0.05",
    "facility": "tunnel 2",
    "measured_on": "2025-04-03",
    "contributor": "someone",
    "notes": "angles corrected for wall effects",
}

finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)


@st.composite
def polars(draw) -> Polar:
    alpha = draw(
        st.lists(
            st.floats(min_value=-180, max_value=180, allow_nan=False), min_size=2, max_size=30,
            unique=True,
        )
    )
    n = len(alpha)
    cl = draw(st.lists(finite, min_size=n, max_size=n))
    cd = draw(st.lists(st.floats(min_value=1e-300, max_value=1e3), min_size=n, max_size=n))
    cm = draw(st.none() | st.lists(finite, min_size=n, max_size=n))
    conditions = {
        "reynolds": draw(st.none() | st.floats(min_value=1e3, max_value=1e9)),
        "mach": draw(st.floats(min_value=0.0, max_value=0.95)),
        "thickness": draw(st.none() | st.floats(min_value=1e-3, max_value=1.0)),
        "surface": draw(st.sampled_from(SURFACE_CONDITIONS)),
    }
    try:
        return Polar(alpha_deg=alpha, cl=cl, cd=cd, cm=cm, **conditions)
    except PolarValidationError:  # e.g. angles that look like radians
        reject()


def _same(parsed: Polar, original: Polar) -> None:
    assert parsed.table_equal(original)
    columns = ("alpha_deg", "cl", "cd", "cm") if original.has_cm else ("alpha_deg", "cl", "cd")
    for column in columns:  # table_equal compares values; the sign of zero is checked here
        assert np.signbit(getattr(parsed, column)).tolist() == np.signbit(
            getattr(original, column)
        ).tolist()
    assert parsed.conditions() == original.conditions()


@settings(max_examples=60, deadline=None)
@given(polars())
def test_csv_round_trip_is_bit_exact(polar):
    text = polar_to_csv(polar, airfoil="RT-1", provenance=PROVENANCE,
                        extra_metadata={"family": "rt"})
    (parsed,) = parse_polar_file(text.encode(), filename="x.csv")
    _same(parsed.polar, polar)
    assert (parsed.airfoil, parsed.family, parsed.provenance) == ("RT-1", "rt", PROVENANCE)


@settings(max_examples=60, deadline=None)
@given(polars())
def test_json_round_trip_is_bit_exact(polar):
    text = json.dumps(polar_to_json(polar, airfoil="RT-2", provenance=PROVENANCE))
    (parsed,) = parse_polar_file(text.encode())
    _same(parsed.polar, polar)
    assert (parsed.airfoil, parsed.family, parsed.provenance) == ("RT-2", None, PROVENANCE)


def test_csv_layout():
    polar = Polar(alpha_deg=[0.0, 5.0], cl=[0.1, 0.6], cd=[0.01, 0.0125], reynolds=3e6,
                  thickness=0.21)
    text = polar_to_csv(polar, airfoil="A", provenance={"source_kind": "cfd"})
    assert text == (
        "# airfoil: A\n# reynolds: 3000000.0\n# mach: 0.0\n# thickness: 0.21\n"
        "# surface: clean\n# source_kind: cfd\nalpha_deg,cl,cd\n0.0,0.1,0.01\n5.0,0.6,0.0125\n"
    )


@pytest.mark.parametrize(
    ("provenance", "extra", "field"),
    [
        ({"source_kind": "rumour"}, None, "source_kind"),
        (None, {"reynolds": 3e6}, "reynolds"),
        (None, {"notes": "two\nlines"}, "notes"),
    ],
)
def test_writer_refuses_bad_metadata(provenance, extra, field):
    polar = Polar(alpha_deg=[0.0, 5.0], cl=[0.1, 0.6], cd=[0.01, 0.0125])
    with pytest.raises(FormatError) as info:
        polar_to_csv(polar, airfoil="A", provenance=provenance, extra_metadata=extra)
    assert info.value.field == field


def test_multi_station_table_reads_back_with_numpy():
    rng = np.random.default_rng(7)
    alpha = np.linspace(-180.0, 180.0, 73)
    columns = {name: rng.normal(size=(3, alpha.size)) for name in ("cl", "cd", "cm")}
    radius_m = np.array([2.5, 20.0, 45.125])
    text = table_to_csv(alpha, columns, header_comments={"blade": "demo", "recipe": "abc"},
                        stations=radius_m, station_column="radius_m")
    lines = text.splitlines()
    assert lines[:3] == ["# blade: demo", "# recipe: abc", "radius_m,alpha_deg,cl,cd,cm"]
    # reference reader: numpy.loadtxt (general-purpose library)
    table = np.loadtxt(io.StringIO(text), delimiter=",", comments="#", skiprows=3)
    assert table.shape == (3 * alpha.size, 5)
    np.testing.assert_array_equal(table[:, 0], np.repeat(radius_m, alpha.size))
    np.testing.assert_array_equal(table[:, 1], np.tile(alpha, 3))
    for position, name in enumerate(columns, start=2):
        np.testing.assert_array_equal(table[:, position], columns[name].ravel())


def test_multi_station_table_default_station_index_and_single_station():
    text = table_to_csv([0.0, 10.0], {"cl": [0.2, 1.1]})
    assert text == "station,alpha_deg,cl\n0,0.0,0.2\n0,10.0,1.1\n"


@pytest.mark.parametrize(
    ("columns", "kwargs", "field"),
    [
        ({"cl": np.zeros((2, 3))}, {}, "cl"),
        ({}, {}, "columns"),
        ({"cl": np.zeros((2, 2))}, {"stations": [1.0]}, "stations"),
        ({"cl": np.zeros(2)}, {"header_comments": {"two words": "x"}}, "two words"),
        ({"cl": np.zeros(2)}, {"header_comments": {"k": "a\nb"}}, "k"),
    ],
)
def test_multi_station_table_refuses_bad_input(columns, kwargs, field):
    with pytest.raises(FormatError) as info:
        table_to_csv([0.0, 1.0], columns, **kwargs)
    assert info.value.field == field
