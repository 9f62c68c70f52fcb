"""The binary table forms round-trip arrays bit for bit. The Arrow stream is also read with
pyarrow's own IPC reader and the .npz archive with numpy.load (reference libraries), without
this package's decoders, to show that other tools see the documented layout."""

from __future__ import annotations

import io

import numpy as np
import orjson
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from polarsvc.formats.binary import decode_arrow, decode_npz, encode_arrow, encode_npz

pa = pytest.importorskip("pyarrow")

finite = st.floats(allow_nan=False, allow_infinity=False, width=64)


@settings(max_examples=40, deadline=None)
@given(
    alpha=hnp.arrays(np.float64, st.integers(2, 30), elements=finite),
    stations=st.integers(1, 4),
    with_radius=st.booleans(),
    data=st.data(),
)
def test_arrow_and_npz_round_trip_bit_exact(alpha, stations, with_radius, data):
    cl = data.draw(hnp.arrays(np.float64, (stations, alpha.size), elements=finite))
    radius = np.arange(1.0, stations + 1.0) * 2.5 if with_radius else None
    for encode, decode in ((encode_arrow, decode_arrow), (encode_npz, decode_npz)):
        table = decode(encode(alpha, {"cl": cl}, {"k": "v"}, radius_m=radius))
        assert table.meta == {"k": "v"}
        assert table.alpha_deg.tobytes() == alpha.tobytes()
        assert table.columns["cl"].shape == cl.shape
        assert table.columns["cl"].tobytes() == cl.tobytes()
        if with_radius:
            assert table.radius_m.tobytes() == radius.tobytes()


def test_arrow_stream_read_by_pyarrow_has_the_long_layout_and_metadata():
    alpha = np.array([-10.0, 0.0, 10.0])
    cl = np.array([[-0.8, 0.2, 1.1], [-0.7, 0.3, 1.2]])
    payload = encode_arrow(alpha, {"cl": cl, "cd": cl ** 2}, {"content_hash": "ab"},
                           radius_m=[5.0, 20.0])
    table = pa.ipc.open_stream(payload).read_all()
    assert table.column_names == ["radius_m", "alpha_deg", "cl", "cd"]
    assert table.column("radius_m").to_pylist() == [5.0, 5.0, 5.0, 20.0, 20.0, 20.0]
    assert table.column("alpha_deg").to_pylist() == [-10.0, 0.0, 10.0] * 2
    assert table.column("cl").to_pylist() == [-0.8, 0.2, 1.1, -0.7, 0.3, 1.2]
    assert table.schema.field("alpha_deg").metadata == {b"unit": b"deg"}
    assert orjson.loads(table.schema.metadata[b"polarsvc.meta"]) == {"content_hash": "ab"}
    assert orjson.loads(table.schema.metadata[b"polarsvc.layout"]) == {
        "stations": 2, "angles": 3, "station_column": "radius_m"}


def test_single_section_arrow_and_npz_read_by_reference_libraries():
    alpha = np.array([0.0, 5.0])
    payload = encode_arrow(alpha, {"cl": np.array([0.2, 0.7])}, {})
    table = pa.ipc.open_stream(payload).read_all()
    assert table.column_names == ["alpha_deg", "cl"]
    archive = np.load(io.BytesIO(encode_npz(alpha, {"cl": [0.2, 0.7]}, {"a": 1})),
                      allow_pickle=False)
    assert archive["cl"].tolist() == [0.2, 0.7]
    assert orjson.loads(str(archive["meta"])) == {"a": 1}


def test_foreign_bytes_are_refused():
    with pytest.raises(ValueError, match="Arrow"):
        decode_arrow(b"PK\x03\x04 not a table")
    with pytest.raises(ValueError, match="npz"):
        decode_npz(b"PK\x03\x04 not a table")
