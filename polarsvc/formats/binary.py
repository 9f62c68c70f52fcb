"""Binary forms of tables: Apache Arrow IPC (stream format), with a NumPy ``.npz`` fallback.

Arrow IPC stream (media type :data:`ARROW_MEDIA_TYPE`) is readable from Python (pyarrow,
polars, pandas), R (arrow), Julia (Arrow.jl), C++, Java and MATLAB through their Arrow
libraries. One record batch holds the table in columns of float64:

* a single-section table: ``alpha_deg, cl, cd[, cm]``, one row per angle;
* a multi-station table (a blade set): the long layout of the CSV form, one row per
  (station, angle), ordered by station then angle: ``radius_m`` (or ``station``, an int64
  index, when no radii are known), ``alpha_deg``, ``cl``, ``cd``, ``cm``.

The schema metadata carries ``polarsvc.meta`` (the response's metadata as JSON: hashes,
recipe, inputs, reports, caution) and ``polarsvc.layout`` (JSON ``{"stations": n or null,
"angles": m, "station_column": name or null}``), so the table reshapes to stations x angles
without reading the data. Fields carry their unit in their metadata (``unit``).

A result of named arrays of different shapes (a rotor result) uses a second layout,
``polarsvc.layout`` = ``{"arrays": [[name, [shape...]], ...]}``: an Arrow table of one row,
one column per array, each a list of float64 holding the array flattened in C order (the
shape is in the layout and in the field metadata, ``shape``); in ``.npz`` the arrays
themselves. :func:`encode_arrays_arrow`, :func:`decode_arrays_arrow`,
:func:`encode_arrays_npz` and :func:`decode_arrays_npz` read and write it.

pyarrow is an install extra (``pip install "polarsvc[arrow]"``, about 170 MB installed).
Without it the same arrays travel as an uncompressed ``.npz`` archive (media type
:data:`NPZ_MEDIA_TYPE`, read by :func:`numpy.load`): one array per column name (``alpha_deg``
1-D, coefficients 1-D or stations x angles, ``radius_m`` when known) and ``meta``, a 0-d
string array holding the metadata JSON.
"""

from __future__ import annotations

import importlib.util
import io
import zipfile
from collections.abc import Mapping
from typing import Any

import numpy as np
import orjson
from numpy.typing import ArrayLike

__all__ = [
    "ARROW_AVAILABLE",
    "ARROW_MEDIA_TYPE",
    "NPZ_MEDIA_TYPE",
    "BinaryTable",
    "arrays_arrow_table",
    "arrow_table",
    "decode_arrays_arrow",
    "decode_arrays_npz",
    "decode_arrow",
    "decode_npz",
    "encode_arrays_arrow",
    "encode_arrays_npz",
    "encode_arrow",
    "encode_npz",
    "write_arrow",
]

ARROW_MEDIA_TYPE = "application/vnd.apache.arrow.stream"
NPZ_MEDIA_TYPE = "application/x-npz"
META_KEY = b"polarsvc.meta"
LAYOUT_KEY = b"polarsvc.layout"
ARROW_AVAILABLE = importlib.util.find_spec("pyarrow") is not None
"""Whether pyarrow is installed (imported lazily, on the first Arrow table)."""

_UNITS = {"alpha_deg": "deg", "radius_m": "m", "cl": "1", "cd": "1", "cm": "1"}
_JSON = orjson.OPT_SERIALIZE_NUMPY | orjson.OPT_NON_STR_KEYS


class BinaryTable:
    """A decoded binary table: angles [deg], named coefficient arrays (1-D, or stations x
    angles), the station radii [m] when known, and the metadata."""

    __slots__ = ("alpha_deg", "columns", "meta", "radius_m")

    def __init__(
        self,
        alpha_deg: np.ndarray,
        columns: dict[str, np.ndarray],
        meta: dict[str, Any],
        radius_m: np.ndarray | None = None,
    ):
        self.alpha_deg = alpha_deg
        self.columns = columns
        self.meta = meta
        self.radius_m = radius_m


def _pyarrow() -> Any:
    if not ARROW_AVAILABLE:
        raise RuntimeError(
            'the Arrow form needs pyarrow: pip install "polarsvc[arrow]" (or use the .npz form)'
        )
    import pyarrow as pa
    import pyarrow.ipc

    return pa


def _long_columns(
    alpha_deg: ArrayLike, columns: Mapping[str, ArrayLike], radius_m: ArrayLike | None
) -> tuple[dict[str, np.ndarray], dict[str, Any]]:
    alpha = np.ascontiguousarray(alpha_deg, dtype=np.float64)
    blocks = {name: np.ascontiguousarray(v, dtype=np.float64) for name, v in columns.items()}
    first = next(iter(blocks.values()))
    if first.ndim == 1:
        return {"alpha_deg": alpha, **blocks}, {
            "stations": None, "angles": int(alpha.size), "station_column": None,
        }
    n_stations = first.shape[0]
    if radius_m is not None:
        station_name = "radius_m"
        station_values = np.repeat(np.asarray(radius_m, dtype=np.float64), alpha.size)
    else:
        station_name = "station"
        station_values = np.repeat(np.arange(n_stations, dtype=np.int64), alpha.size)
    long = {
        station_name: station_values,
        "alpha_deg": np.tile(alpha, n_stations),
        **{name: block.reshape(-1) for name, block in blocks.items()},
    }
    layout = {"stations": int(n_stations), "angles": int(alpha.size),
              "station_column": station_name}
    return long, layout


def arrow_table(
    alpha_deg: ArrayLike, columns: Mapping[str, ArrayLike], *, radius_m: ArrayLike | None = None
) -> Any:
    """The arrays as a ``pyarrow.Table`` in the layout of the module docstring, with field
    units and the layout in the schema metadata but without the response metadata (added
    per response by :func:`write_arrow`, so the table can be cached by content)."""
    pa = _pyarrow()
    long, layout = _long_columns(alpha_deg, columns, radius_m)
    fields = [
        pa.field(
            name, pa.from_numpy_dtype(values.dtype), nullable=False,
            metadata={"unit": _UNITS.get(name, "1")} if name != "station" else None,
        )
        for name, values in long.items()
    ]
    schema = pa.schema(fields, metadata={LAYOUT_KEY: orjson.dumps(layout)})
    return pa.Table.from_arrays([pa.array(v) for v in long.values()], schema=schema)


def write_arrow(table: Any, meta: Mapping[str, Any]) -> bytes:
    """An Arrow IPC stream of ``table`` (from :func:`arrow_table`) with ``meta`` as JSON in
    the schema metadata."""
    pa = _pyarrow()
    metadata = dict(table.schema.metadata or {})
    metadata[META_KEY] = orjson.dumps(meta, option=_JSON)
    table = table.replace_schema_metadata(metadata)
    sink = pa.BufferOutputStream()
    with pa.ipc.new_stream(sink, table.schema) as writer:
        writer.write_table(table)
    return sink.getvalue().to_pybytes()


def encode_arrow(
    alpha_deg: ArrayLike,
    columns: Mapping[str, ArrayLike],
    meta: Mapping[str, Any],
    *,
    radius_m: ArrayLike | None = None,
) -> bytes:
    """Arrays and metadata as an Arrow IPC stream (see the module docstring)."""
    return write_arrow(arrow_table(alpha_deg, columns, radius_m=radius_m), meta)


def decode_arrow(payload: bytes) -> BinaryTable:
    """Read an Arrow IPC stream written by :func:`encode_arrow`.

    Raises
    ------
    ValueError
        If the bytes are not an Arrow stream of this layout.
    """
    pa = _pyarrow()
    try:
        table = pa.ipc.open_stream(payload).read_all()
    except (pa.ArrowInvalid, OSError) as exc:
        raise ValueError(f"not an Arrow IPC stream: {exc}") from None
    metadata = table.schema.metadata or {}
    if LAYOUT_KEY not in metadata:
        raise ValueError("Arrow stream without the polarsvc.layout schema metadata")
    layout = orjson.loads(metadata[LAYOUT_KEY])
    meta = orjson.loads(metadata[META_KEY]) if META_KEY in metadata else {}
    arrays = {
        name: table.column(name).to_numpy() for name in table.column_names
    }
    station_column = layout.get("station_column")
    n_angles = int(layout["angles"])
    if station_column is None:
        alpha = arrays.pop("alpha_deg")
        return BinaryTable(alpha, arrays, meta)
    n_stations = int(layout["stations"])
    stations = arrays.pop(station_column)
    alpha = arrays.pop("alpha_deg")[:n_angles]
    columns = {name: values.reshape(n_stations, n_angles) for name, values in arrays.items()}
    radius = stations[::n_angles] if station_column == "radius_m" else None
    return BinaryTable(alpha, columns, meta, radius)


def encode_npz(
    alpha_deg: ArrayLike,
    columns: Mapping[str, ArrayLike],
    meta: Mapping[str, Any],
    *,
    radius_m: ArrayLike | None = None,
) -> bytes:
    """Arrays and metadata as an uncompressed NumPy ``.npz`` archive (module docstring)."""
    arrays: dict[str, np.ndarray] = {"alpha_deg": np.asarray(alpha_deg, dtype="<f8")}
    for name, values in columns.items():
        arrays[name] = np.asarray(values, dtype="<f8")
    if radius_m is not None:
        arrays["radius_m"] = np.asarray(radius_m, dtype="<f8")
    arrays["meta"] = np.array(orjson.dumps(meta, option=_JSON).decode("utf-8"))
    buffer = io.BytesIO()
    np.savez(buffer, **arrays)
    return buffer.getvalue()


def decode_npz(payload: bytes) -> BinaryTable:
    """Read an archive written by :func:`encode_npz` (no pickled objects are accepted).

    Raises
    ------
    ValueError
        If the bytes are not such an archive.
    """
    try:
        with np.load(io.BytesIO(payload), allow_pickle=False) as archive:
            arrays = {name: archive[name] for name in archive.files}
    except (OSError, ValueError, EOFError, zipfile.BadZipFile) as exc:
        raise ValueError(f"not an .npz table: {exc}") from None
    if "alpha_deg" not in arrays or "meta" not in arrays:
        raise ValueError("not an .npz table: alpha_deg or meta is missing")
    meta = orjson.loads(str(arrays.pop("meta")))
    alpha = arrays.pop("alpha_deg")
    radius = arrays.pop("radius_m", None)
    return BinaryTable(alpha, arrays, meta, radius)


def _arrays_layout(arrays: Mapping[str, ArrayLike]) -> tuple[dict[str, np.ndarray], list]:
    blocks = {name: np.ascontiguousarray(v, dtype=np.float64) for name, v in arrays.items()}
    return blocks, [[name, list(block.shape)] for name, block in blocks.items()]


def arrays_arrow_table(arrays: Mapping[str, ArrayLike]) -> Any:
    """Named arrays of any shapes as a one-row ``pyarrow.Table`` (the named-array layout of
    the module docstring), without the response metadata (see :func:`write_arrow`)."""
    pa = _pyarrow()
    blocks, layout = _arrays_layout(arrays)
    fields = [
        pa.field(name, pa.list_(pa.float64()), nullable=False,
                 metadata={"shape": orjson.dumps(list(block.shape))})
        for name, block in blocks.items()
    ]
    schema = pa.schema(fields, metadata={LAYOUT_KEY: orjson.dumps({"arrays": layout})})
    columns = [
        pa.ListArray.from_arrays(pa.array([0, block.size], type=pa.int32()),
                                 pa.array(block.reshape(-1)))
        for block in blocks.values()
    ]
    return pa.Table.from_arrays(columns, schema=schema)


def encode_arrays_arrow(arrays: Mapping[str, ArrayLike], meta: Mapping[str, Any]) -> bytes:
    """Named arrays and metadata as an Arrow IPC stream (named-array layout)."""
    return write_arrow(arrays_arrow_table(arrays), meta)


def decode_arrays_arrow(payload: bytes) -> tuple[dict[str, np.ndarray], dict[str, Any]]:
    """Read a stream written by :func:`encode_arrays_arrow`: (arrays, meta).

    Raises
    ------
    ValueError
        If the bytes are not an Arrow stream of the named-array layout.
    """
    pa = _pyarrow()
    try:
        table = pa.ipc.open_stream(payload).read_all()
    except (pa.ArrowInvalid, OSError) as exc:
        raise ValueError(f"not an Arrow IPC stream: {exc}") from None
    metadata = table.schema.metadata or {}
    layout = orjson.loads(metadata.get(LAYOUT_KEY, b"{}"))
    if "arrays" not in layout:
        raise ValueError("Arrow stream without the named-array layout")
    meta = orjson.loads(metadata[META_KEY]) if META_KEY in metadata else {}
    arrays = {
        name: table.column(name).combine_chunks().flatten().to_numpy(zero_copy_only=False)
        .reshape(shape)
        for name, shape in layout["arrays"]
    }
    return arrays, meta


def encode_arrays_npz(arrays: Mapping[str, ArrayLike], meta: Mapping[str, Any]) -> bytes:
    """Named arrays and metadata as an uncompressed ``.npz`` archive (``meta`` as a 0-d
    string array of JSON; the names ``meta`` is reserved)."""
    blocks, _ = _arrays_layout(arrays)
    if "meta" in blocks:
        raise ValueError("an array may not be called 'meta' in the .npz form")
    buffer = io.BytesIO()
    np.savez(buffer, **{name: b.astype("<f8") for name, b in blocks.items()},
             meta=np.array(orjson.dumps(meta, option=_JSON).decode("utf-8")))
    return buffer.getvalue()


def decode_arrays_npz(payload: bytes) -> tuple[dict[str, np.ndarray], dict[str, Any]]:
    """Read an archive written by :func:`encode_arrays_npz`: (arrays, meta)."""
    try:
        with np.load(io.BytesIO(payload), allow_pickle=False) as archive:
            arrays = {name: archive[name] for name in archive.files}
    except (OSError, ValueError, EOFError, zipfile.BadZipFile) as exc:
        raise ValueError(f"not an .npz archive: {exc}") from None
    if "meta" not in arrays:
        raise ValueError("not a polarsvc .npz archive: meta is missing")
    meta = orjson.loads(str(arrays.pop("meta")))
    return arrays, meta
