"""The compact binary table form round-trips arrays bit for bit (checked against numpy's own
array equality) and refuses foreign bytes."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from polarsvc.api.responses import decode_binary, encode_binary

finite = st.floats(allow_nan=False, allow_infinity=False, width=64)


@settings(max_examples=50, deadline=None)
@given(
    alpha=hnp.arrays(np.float64, st.integers(2, 30), elements=finite),
    stations=st.integers(1, 4),
    data=st.data(),
)
def test_encode_then_decode_is_bit_exact(alpha, stations, data):
    cl = data.draw(hnp.arrays(np.float64, (stations, alpha.size), elements=finite))
    arrays, meta = decode_binary(encode_binary({"alpha_deg": alpha, "cl": cl}, {"k": "v"}))
    assert meta == {"k": "v"}
    assert arrays["alpha_deg"].tobytes() == alpha.astype("<f8").tobytes()
    assert arrays["cl"].shape == cl.shape
    assert arrays["cl"].tobytes() == cl.astype("<f8").tobytes()


def test_foreign_bytes_are_refused():
    with pytest.raises(ValueError, match="magic"):
        decode_binary(b"PK\x03\x04 not a table")
