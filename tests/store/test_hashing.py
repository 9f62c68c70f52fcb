"""The canonical form of :mod:`polarsvc.hashing`, checked against an independent
re-implementation with the standard library (struct, json, hashlib) and a regression vector."""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import math
import struct

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.aero.polar import Polar
from polarsvc.hashing import (
    array_digest,
    blade_content_hash,
    canonical_array_bytes,
    canonical_json,
    canonical_result,
    canonical_table,
    decode_array_bytes,
    polar_content_hash,
    recipe_hash,
    table_content_hash,
)

# IEEE 754-2008 binary64: quiet NaN with zero payload is 0x7FF8000000000000 (common practice,
# no source); little-endian byte order of struct "<d" (Python standard library).
CANONICAL_NAN = struct.pack("<Q", 0x7FF8000000000000)


def test_array_bytes_are_little_endian_float64() -> None:
    # reference: struct.pack("<d") of the standard library
    values = [1.5, -2.25, 1e-300]
    assert canonical_array_bytes(values) == struct.pack("<3d", *values)
    assert canonical_array_bytes(np.array(values, dtype=">f8")) == struct.pack("<3d", *values)


def test_negative_zero_and_nan_are_normalised() -> None:
    signalling = np.frombuffer(struct.pack("<Q", 0x7FF0000000000001), dtype="<f8")[0]
    negative_nan = np.frombuffer(struct.pack("<Q", 0xFFF8000000000000), dtype="<f8")[0]
    data = canonical_array_bytes([-0.0, signalling, negative_nan, math.inf])
    assert data == struct.pack("<d", 0.0) + CANONICAL_NAN * 2 + struct.pack("<d", math.inf)
    assert array_digest([-0.0, 1.0]) == array_digest([0.0, 1.0])


def test_array_digest_includes_shape() -> None:
    # independent reconstruction of the documented header + bytes
    header = b'{"dtype":"float64-le","shape":[2,2]}\n'
    expected = hashlib.sha256(header + struct.pack("<4d", 1, 2, 3, 4)).hexdigest()
    assert array_digest([[1, 2], [3, 4]]) == expected
    assert array_digest([1, 2, 3, 4]) != expected


def test_canonical_json_rules() -> None:
    document = {"b": [1, 1.0, -0.0, 0.1, 1e16, True, None], "a": "é<&>", "c": dt.date(2026, 1, 2)}
    assert canonical_json(document) == (
        '{"a":"é<&>","b":[1,1.0,0.0,0.1,1e+16,true,null],"c":"2026-01-02"}'.encode()
    )
    aware = dt.datetime(2026, 1, 2, 4, 4, 5, tzinfo=dt.timezone(dt.timedelta(hours=1)))
    assert canonical_json(aware) == b'"2026-01-02T03:04:05+00:00"'


@pytest.mark.parametrize(
    ("value", "error"),
    [
        (math.nan, ValueError),
        ({"x": math.inf}, ValueError),
        (dt.datetime(2026, 1, 1), ValueError),
        ({1: "a"}, TypeError),
        ({"x": object()}, TypeError),
    ],
)
def test_canonical_json_refuses(value: object, error: type[Exception]) -> None:
    with pytest.raises(error):
        canonical_json(value)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(allow_nan=True, allow_infinity=True, width=64), max_size=20))
def test_array_bytes_round_trip(values: list[float]) -> None:
    # invariant: decoding canonical bytes and re-encoding them is the identity
    data = canonical_array_bytes(values)
    decoded = decode_array_bytes(data)
    assert canonical_array_bytes(decoded) == data
    expected = [0.0 if v == 0 else v for v in values]
    np.testing.assert_array_equal(decoded, np.array(expected, dtype=float))


@settings(max_examples=60, deadline=None)
@given(st.floats(allow_nan=False, allow_infinity=False, width=64))
def test_canonical_json_float_round_trips(value: float) -> None:
    # invariant: the written float reads back to the same binary64 (json module as reference)
    assert json.loads(canonical_json(value)) == value


# --- the polar content hash ------------------------------------------------------------------

VECTOR_POLAR = {
    "alpha_deg": [-4.0, 0.0, 4.0],
    "cl": [-0.3, 0.1, 0.5],
    "cd": [0.012, 0.01, 0.013],
    "cm": [-0.05, -0.06, -0.055],
}
VECTOR_PROVENANCE = {"source_kind": "synthetic", "reference": "test vector", "notes": "-0.0"}
VECTOR_HASH = "4c9096c04b3b6420d2cb1e5eeff83c6f063b52677520f0e7d8e4ea5b3ff274ce"
"""Regression value (computed by polarsvc 0.1.0 from the canonical form; no outside source).
If it changes, stored hashes no longer match their content: that needs a new format tag."""


def vector_polar(**overrides: object) -> Polar:
    columns = {**VECTOR_POLAR, **overrides}
    return Polar(**columns, reynolds=1.0e6, mach=0.0, surface="clean")


def test_polar_hash_regression_vector() -> None:
    value = polar_content_hash(
        vector_polar(), airfoil_name="SKUA-210", provenance=VECTOR_PROVENANCE
    )
    assert value == VECTOR_HASH


def test_polar_hash_matches_documented_form() -> None:
    # independent reconstruction of the module docstring's form with struct/hashlib
    def digest(values: list[float]) -> str:
        header = b'{"dtype":"float64-le","shape":[%d]}\n' % len(values)
        return hashlib.sha256(header + struct.pack(f"<{len(values)}d", *values)).hexdigest()

    d = {name: digest(values) for name, values in VECTOR_POLAR.items()}
    document = (
        '{"airfoil":"SKUA-210",'
        f'"alpha_deg":"{d["alpha_deg"]}","cd":"{d["cd"]}","cl":"{d["cl"]}","cm":"{d["cm"]}",'
        '"format":"polarsvc.polar.v1","mach":0.0,'
        '"provenance":{"contributor":null,"facility":null,"measured_on":null,'
        '"notes":"-0.0","reference":"test vector","source_kind":"synthetic"},'
        '"reynolds":1000000.0,"supersedes":null,"surface":"clean"}'
    )
    expected = hashlib.sha256(document.encode()).hexdigest()
    assert (
        polar_content_hash(vector_polar(), airfoil_name="SKUA-210", provenance=VECTOR_PROVENANCE)
        == expected
    )


def test_polar_hash_ignores_row_order_sign_of_zero_and_thickness() -> None:
    base = polar_content_hash(vector_polar(), airfoil_name="A", provenance=VECTOR_PROVENANCE)
    shuffled = Polar(
        alpha_deg=[4.0, -4.0, 0.0],
        cl=[0.5, -0.3, 0.1],
        cd=[0.013, 0.012, 0.01],
        cm=[-0.055, -0.05, -0.06],
        reynolds=1.0e6,
        thickness=0.21,
    )
    assert polar_content_hash(shuffled, airfoil_name="A", provenance=VECTOR_PROVENANCE) == base
    with_zero = vector_polar(cl=[-0.3, 0.0, 0.5])
    with_negative_zero = vector_polar(cl=[-0.3, -0.0, 0.5])
    assert polar_content_hash(
        with_zero, airfoil_name="A", provenance=VECTOR_PROVENANCE
    ) == polar_content_hash(with_negative_zero, airfoil_name="A", provenance=VECTOR_PROVENANCE)


@pytest.mark.parametrize(
    "change",
    [
        {"airfoil_name": "B"},
        {"provenance": {**VECTOR_PROVENANCE, "facility": "x"}},
        {"provenance": {**VECTOR_PROVENANCE, "measured_on": dt.date(2026, 1, 1)}},
        {"supersedes_hash": "0" * 64},
        {"polar": Polar(**VECTOR_POLAR, reynolds=2.0e6)},
        {"polar": Polar(**VECTOR_POLAR, reynolds=1.0e6, mach=0.1)},
        {"polar": Polar(**VECTOR_POLAR, reynolds=1.0e6, surface="rough")},
        {"polar": Polar(**{**VECTOR_POLAR, "cm": None}, reynolds=1.0e6)},
        {"polar": vector_polar(cd=[0.012, 0.0100000000000001, 0.013])},
    ],
)
def test_polar_hash_changes_with_identity(change: dict) -> None:
    arguments = {
        "polar": vector_polar(),
        "airfoil_name": "A",
        "provenance": VECTOR_PROVENANCE,
        "supersedes_hash": None,
    }
    base = polar_content_hash(**arguments)
    assert polar_content_hash(**{**arguments, **change}) != base


def test_polar_hash_refuses_unknown_provenance() -> None:
    with pytest.raises(ValueError, match="unknown field"):
        polar_content_hash(vector_polar(), airfoil_name="A", provenance={"sauce": "x"})


def test_recipe_table_and_blade_hashes() -> None:
    expected = hashlib.sha256(
        b'{"format":"polarsvc.recipe.v1","recipe":{"a":1,"b":[0.5]}}'
    ).hexdigest()
    assert recipe_hash({"b": [0.5], "a": 1}) == expected
    alpha = [-180.0, 0.0, 180.0]
    table = table_content_hash(alpha, [0.0, 1.0, 0.0], [[1.0, 2.0, 1.0]])
    assert table == table_content_hash(np.array(alpha), [-0.0, 1.0, 0.0], [[1.0, 2.0, 1.0]])
    assert table != table_content_hash(alpha, [0.0, 1.0, 0.0], [1.0, 2.0, 1.0])
    with pytest.raises(ValueError, match="column 0"):
        table_content_hash(alpha, [1.0, 2.0])
    assert blade_content_hash(name="skerry-48", definition={"tip_radius_m": 48.0}) != (
        blade_content_hash(name="skerry-48", definition={"tip_radius_m": 48.5})
    )


def test_table_payload_and_hash_match_documented_form() -> None:
    # independent reconstruction of the module docstring's table form with struct/hashlib:
    # the payload is the canonical bytes of the angles, then of each column, in order
    signalling = np.frombuffer(struct.pack("<Q", 0x7FF4000000000001), dtype="<f8")[0]
    negative_nan = np.frombuffer(struct.pack("<Q", 0xFFF8000000000000), dtype="<f8")[0]
    alpha = [-180.0, -0.0, 180.0]
    cl = [[0.5, -0.0, signalling], [math.inf, negative_nan, -1.25]]
    cd = np.array([[0.1, 0.2, 0.3], [0.4, 0.5, 0.6]], dtype=">f8")  # big-endian input

    def canonical(value: float) -> bytes:
        if math.isnan(value):
            return CANONICAL_NAN
        return struct.pack("<d", 0.0 if value == 0 else value)

    alpha_bytes = b"".join(canonical(v) for v in alpha)
    cl_bytes = b"".join(canonical(v) for row in cl for v in row)
    cd_bytes = struct.pack("<6d", 0.1, 0.2, 0.3, 0.4, 0.5, 0.6)

    def digest(shape: str, data: bytes) -> str:
        header = b'{"dtype":"float64-le","shape":[%s]}\n' % shape.encode()
        return hashlib.sha256(header + data).hexdigest()

    document = (
        f'{{"alpha_deg":"{digest("3", alpha_bytes)}","columns":["{digest("2,3", cl_bytes)}",'
        f'"{digest("2,3", cd_bytes)}"],"format":"polarsvc.table.v1"}}'
    )
    content_hash, payload = canonical_table(alpha, cl, cd)
    assert payload == alpha_bytes + cl_bytes + cd_bytes
    assert content_hash == hashlib.sha256(document.encode()).hexdigest()
    assert table_content_hash(alpha, cl, cd) == content_hash

    result_hash, result_payload = canonical_result({"power_w": [1.0, -0.0], "cl": cl})
    named = (
        f'{{"arrays":[["power_w","{digest("2", struct.pack("<2d", 1.0, 0.0))}"],'
        f'["cl","{digest("2,3", cl_bytes)}"]],"format":"polarsvc.result.v1"}}'
    )
    assert result_payload == struct.pack("<2d", 1.0, 0.0) + cl_bytes
    assert result_hash == hashlib.sha256(named.encode()).hexdigest()


def test_hashing_is_pure() -> None:
    # the module imports no storage, web or database code
    import subprocess
    import sys

    code = (
        "import sys, polarsvc.hashing\n"
        "bad = [m for m in sys.modules if m.split('.')[0] in ('sqlalchemy', 'fastapi')"
        " or m.startswith('polarsvc.store')]\n"
        "assert not bad, bad\n"
    )
    subprocess.run([sys.executable, "-c", code], check=True)
