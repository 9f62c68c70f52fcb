"""Vectorised encoding of float64 tables as CSV cells.

The numbers are written by orjson's shortest round-trip float formatting, whole arrays at a
time: each value is the shortest decimal text that reads back (``float()``,
``numpy.loadtxt``) to the same float64, bit for bit; the digits are those of :func:`repr`,
only the spelling of small exponents may differ (``0.00001`` and ``1.5e-7`` where
:func:`repr` gives ``1e-05`` and ``1.5e-07``). Non-finite values (which stored tables never
hold) fall back to :func:`repr` per cell (``nan``, ``inf``).

Only cells are encoded here; header and comment lines are written by the callers
(:mod:`polarsvc.formats.writers`), so the two can change independently.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import orjson
from numpy.typing import ArrayLike

__all__ = ["encode_rows", "encode_station_blocks"]

_NUMPY = orjson.OPT_SERIALIZE_NUMPY


def _per_cell(matrix: np.ndarray, prefix: bytes = b"") -> bytes:
    lines = [prefix + ",".join(repr(v) for v in row).encode("ascii") for row in matrix.tolist()]
    return b"\n".join(lines) + b"\n"


def encode_rows(matrix: ArrayLike, *, prefix: bytes = b"") -> bytes:
    """The rows of a 2-D float array as CSV lines, each ending with a newline.

    Parameters
    ----------
    matrix : array_like, shape (n_rows, n_columns)
        Values; converted to float64.
    prefix : bytes
        Written at the start of every line (e.g. a station label and a comma).

    Returns
    -------
    bytes
        ASCII text, ``n_rows`` lines; empty for no rows.
    """
    values = np.ascontiguousarray(matrix, dtype=np.float64)
    if values.ndim != 2:
        raise ValueError(f"expected a 2-D array, got shape {values.shape}")
    if values.shape[0] == 0:
        return b""
    if values.shape[1] == 0:
        return (prefix.rstrip(b",") + b"\n") * values.shape[0]
    if not np.isfinite(values).all():
        return _per_cell(values, prefix)
    text = orjson.dumps(values, option=_NUMPY)  # b"[[a,b],[c,d]]"
    return prefix + text[2:-2].replace(b"],[", b"\n" + prefix) + b"\n"


def encode_station_blocks(
    labels: Sequence[str], alpha_deg: ArrayLike, blocks: Sequence[np.ndarray]
) -> bytes:
    """The long layout of a multi-station table: for each station, one line per angle
    ``label,alpha,<block values>``.

    Parameters
    ----------
    labels : sequence of str
        The station column's text, one per station.
    alpha_deg : array_like, shape (n_alpha,)
        The common angle grid.
    blocks : sequence of arrays, each (n_stations, n_alpha)
        The coefficient columns in order.
    """
    alpha = np.asarray(alpha_deg, dtype=np.float64)
    stacked = np.empty((len(labels), alpha.size, 1 + len(blocks)), dtype=np.float64)
    stacked[:, :, 0] = alpha
    for position, block in enumerate(blocks, start=1):
        stacked[:, :, position] = block
    return b"".join(
        encode_rows(stacked[index], prefix=label.encode("utf-8") + b",")
        for index, label in enumerate(labels)
    )
