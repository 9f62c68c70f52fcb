"""Vectorised CSV cells read back bit for bit: every cell is parsed with Python's ``float``
and with ``numpy.loadtxt`` (general-purpose reference readers) and compared with the
float64 written, bit pattern included (IEEE 754 binary64; -0.0 keeps its sign)."""

from __future__ import annotations

import io

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from polarsvc.formats import encode_rows, table_to_csv

finite = st.floats(allow_nan=False, allow_infinity=False, width=64)


@settings(max_examples=200, deadline=None)
@given(hnp.arrays(np.float64, st.tuples(st.integers(1, 12), st.integers(1, 5)), elements=finite))
def test_every_cell_reads_back_to_the_same_float64(matrix):
    text = encode_rows(matrix).decode("ascii")
    lines = text.split("\n")
    assert lines[-1] == "" and len(lines) == matrix.shape[0] + 1
    parsed = np.array([[float(cell) for cell in line.split(",")] for line in lines[:-1]])
    assert parsed.tobytes() == matrix.tobytes()
    loaded = np.loadtxt(io.StringIO(text), delimiter=",", ndmin=2)
    assert loaded.tobytes() == matrix.tobytes()


@settings(max_examples=200, deadline=None)
@given(finite)
def test_digits_are_the_shortest_round_trip_as_repr(value):
    # repr gives the shortest string that round-trips (Python language reference, since
    # 3.1); the vectorised cell may spell the exponent differently but has the same digits
    cell = encode_rows(np.array([[value]])).decode("ascii").strip()

    def digits(text):
        mantissa = text.lower().split("e")[0].lstrip("-").replace(".", "")
        return mantissa.strip("0") or "0"
    assert float(cell) == value
    assert digits(cell) == digits(repr(value))


def test_known_spellings_and_prefix():
    # values chosen by hand; the expected text is what float() reads back exactly
    matrix = np.array([[-180.0, 0.1, -0.0], [1e-5, 1.5e-7, 1e16]])
    assert encode_rows(matrix, prefix=b"2.5,") == (
        b"2.5,-180.0,0.1,-0.0\n2.5,0.00001,1.5e-7,1e+16\n"
    )


def test_non_finite_values_fall_back_to_repr_per_cell():
    assert encode_rows(np.array([[np.nan, np.inf, 1.0]])) == b"nan,inf,1.0\n"


def test_long_layout_matches_numpy_reference_with_integer_and_float_labels():
    rng = np.random.default_rng(11)
    alpha = np.linspace(-180.0, 180.0, 721)
    cl = rng.normal(size=(4, alpha.size)) * 10.0 ** rng.integers(-9, 9, size=(4, alpha.size))
    text = table_to_csv(alpha, {"cl": cl}, stations=[1.5, 2.0, 3.25, 40.0],
                        station_column="radius_m")
    table = np.loadtxt(io.StringIO(text), delimiter=",", skiprows=1)
    np.testing.assert_array_equal(table[:, 0], np.repeat([1.5, 2.0, 3.25, 40.0], alpha.size))
    assert table[:, 1].tobytes() == np.tile(alpha, 4).tobytes()
    assert table[:, 2].tobytes() == cl.ravel().tobytes()
    by_index = table_to_csv(alpha[:2], {"cl": cl[:, :2]})
    first = by_index.splitlines()[1].split(",")
    assert first[:2] == ["0", "-180.0"] and float(first[2]) == cl[0, 0]
