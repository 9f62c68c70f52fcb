"""Fast table responses: JSON through orjson, CSV, and a compact binary array form;
ETag and 304 handling.

Large tables never pass through the standard-library JSON encoder or per-element
validation: handlers hand numpy arrays to :func:`table_response`, which encodes them once.

Binary form (media type :data:`BINARY_MEDIA_TYPE`), all little-endian::

    magic   6 bytes  b"PSVTB1"
    n       uint32   length of the JSON header in bytes
    header  n bytes  UTF-8 JSON: {"arrays": [{"name", "shape", "offset"}...], "meta": {...}}
    data             float64 arrays, C order, at the byte offsets given (from the data start)

Non-finite values: JSON writes NaN as null (orjson); the stored tables never hold NaN.
"""

from __future__ import annotations

import hashlib
import io
import struct
from collections.abc import Mapping
from typing import Any

import numpy as np
import orjson
from fastapi import Request
from fastapi.responses import Response

from polarsvc.formats import table_to_csv
from polarsvc.lru import LruCache

JSON_MEDIA_TYPE = "application/json"
CSV_MEDIA_TYPE = "text/csv; charset=utf-8"
BINARY_MEDIA_TYPE = "application/vnd.polarsvc.table"
BINARY_MAGIC = b"PSVTB1"
FORMATS = ("json", "csv", "bin")

ORJSON_OPTIONS = orjson.OPT_SERIALIZE_NUMPY | orjson.OPT_NON_STR_KEYS


class FormatChoiceError(ValueError):
    """The requested response format is not one of :data:`FORMATS`."""


def dumps(obj: Any) -> bytes:
    """Encode ``obj`` (may hold numpy arrays) as JSON bytes with orjson."""
    return orjson.dumps(obj, option=ORJSON_OPTIONS)


def json_response(obj: Any, *, status_code: int = 200, headers: Mapping[str, str] | None = None
                  ) -> Response:
    """A JSON response encoded by orjson."""
    return Response(
        dumps(obj), status_code=status_code, media_type=JSON_MEDIA_TYPE, headers=headers
    )


def choose_format(request: Request, explicit: str | None) -> str:
    """The response format: the ``format`` query parameter, else the Accept header, else JSON."""
    if explicit:
        if explicit not in FORMATS:
            raise FormatChoiceError(
                f"format={explicit!r} is not known; valid formats: {', '.join(FORMATS)}"
            )
        return explicit
    accept = request.headers.get("accept", "")
    if BINARY_MEDIA_TYPE in accept:
        return "bin"
    if "text/csv" in accept:
        return "csv"
    return "json"


def _pack_arrays(arrays: Mapping[str, np.ndarray]) -> tuple[list[dict[str, Any]], bytes]:
    entries = []
    chunks = []
    offset = 0
    for name, array in arrays.items():
        data = np.ascontiguousarray(array, dtype="<f8")
        entries.append({"name": name, "shape": list(data.shape), "offset": offset})
        chunks.append(data.tobytes())
        offset += data.nbytes
    return entries, b"".join(chunks)


def _binary_body(entries: list[dict[str, Any]], data: bytes, meta: Mapping[str, Any]) -> bytes:
    header = dumps({"arrays": entries, "meta": meta})
    return b"".join([BINARY_MAGIC, struct.pack("<I", len(header)), header, data])


def encode_binary(arrays: Mapping[str, np.ndarray], meta: Mapping[str, Any]) -> bytes:
    """Pack named float64 arrays and a JSON-able ``meta`` mapping into the binary form."""
    entries, data = _pack_arrays(arrays)
    return _binary_body(entries, data, meta)


def decode_binary(payload: bytes) -> tuple[dict[str, np.ndarray], dict[str, Any]]:
    """Inverse of :func:`encode_binary`: (arrays, meta)."""
    if payload[: len(BINARY_MAGIC)] != BINARY_MAGIC:
        raise ValueError("not a polarsvc binary table (bad magic bytes)")
    start = len(BINARY_MAGIC)
    (header_length,) = struct.unpack_from("<I", payload, start)
    header = orjson.loads(payload[start + 4 : start + 4 + header_length])
    data_start = start + 4 + header_length
    arrays = {}
    for entry in header["arrays"]:
        count = int(np.prod(entry["shape"])) if entry["shape"] else 1
        array = np.frombuffer(
            payload, dtype="<f8", count=count, offset=data_start + entry["offset"]
        )
        arrays[entry["name"]] = array.reshape(entry["shape"])
    return arrays, header["meta"]


def encode_csv(
    alpha_deg: np.ndarray,
    columns: Mapping[str, np.ndarray],
    *,
    comments: Mapping[str, Any] | None = None,
    stations_radius_m: list[float] | None = None,
) -> bytes:
    """Tables as CSV with ``# key: value`` comment lines first.

    One-dimensional columns give ``alpha_deg,<name>...`` rows. Two-dimensional columns
    (stations x angles) give the long layout ``radius_m,alpha_deg,<name>...`` of
    :func:`polarsvc.formats.table_to_csv`.
    """
    first = next(iter(columns.values()))
    if np.ndim(first) == 2:
        text = table_to_csv(
            alpha_deg, columns, header_comments=comments, stations=stations_radius_m,
            station_column="radius_m" if stations_radius_m is not None else "station",
        )
        return text.encode("utf-8")
    return encode_rows_csv({"alpha_deg": alpha_deg, **columns}, comments=comments)


def encode_rows_csv(
    columns: Mapping[str, np.ndarray], *, comments: Mapping[str, Any] | None = None
) -> bytes:
    """One-dimensional columns of one length as CSV rows (``repr`` floats), with
    ``# key: value`` comment lines first."""
    buffer = io.StringIO()
    for key, value in (comments or {}).items():
        buffer.write(f"# {key}: {value}\n")
    buffer.write(",".join(columns) + "\n")
    stacked = np.column_stack([np.asarray(v, dtype=np.float64) for v in columns.values()])
    for row in stacked.tolist():
        buffer.write(",".join(repr(v) for v in row) + "\n")
    return buffer.getvalue().encode("utf-8")


def etag_for(content_hash: str, fmt: str) -> str:
    """A strong ETag: the content hash and the representation."""
    return f'"{content_hash}.{fmt}"'


def etag_matches(request: Request, etag: str) -> bool:
    """Whether ``If-None-Match`` names ``etag`` (lists, ``*`` and weak ``W/`` forms allowed)."""
    header = request.headers.get("if-none-match")
    if not header:
        return False
    for candidate in header.split(","):
        candidate = candidate.strip()
        if candidate == "*":
            return True
        if candidate.startswith("W/"):
            candidate = candidate[2:]
        if candidate == etag:
            return True
    return False


def _encoded_size(value: object) -> int:
    if isinstance(value, bytes):
        return len(value)
    entries_and_data = value
    return len(entries_and_data[1])  # type: ignore[index]


ENCODED: LruCache[Any] = LruCache(max_entries=256, max_size=256 * 2**20, size_of=_encoded_size)
"""Encoded array bodies of derived tables by (content hash, format): a table is immutable
under its content hash, so only the small metadata around it is encoded per request."""


def _json_arrays(alpha_deg: np.ndarray, columns: Mapping[str, np.ndarray]) -> bytes:
    arrays = {name: np.ascontiguousarray(value) for name, value in columns.items()}
    return dumps({"alpha_deg": np.ascontiguousarray(alpha_deg), **arrays})


def _csv_comments(meta: Mapping[str, Any]) -> dict[str, Any]:
    return {
        key: (str(value).lower() if isinstance(value, bool) else value)
        for key, value in meta.items()
        if isinstance(value, str | int | float)
    }


def arrays_response(
    request: Request,
    *,
    fmt: str,
    content_hash: str,
    arrays: Mapping[str, np.ndarray],
    meta: Mapping[str, Any],
    csv_columns: Mapping[str, np.ndarray],
    csv_part: str,
    extra_headers: Mapping[str, str] | None = None,
) -> Response:
    """A result of named arrays of any shapes (a rotor result) in the chosen format, with
    the ETag and 304 handling of :func:`table_response`. JSON and the binary form carry
    every array; CSV carries ``csv_columns`` (one-dimensional, of one length), the part
    ``csv_part`` of the result."""
    meta_bytes = dumps(meta)
    tag = f"{content_hash}.{hashlib.sha256(meta_bytes).hexdigest()[:16]}"
    etag = etag_for(tag, fmt if fmt != "csv" else f"csv-{csv_part}")
    headers = {"ETag": etag, "X-Polarsvc-Content-Hash": content_hash, **(extra_headers or {})}
    if etag_matches(request, etag):
        return Response(status_code=304, headers=headers)
    if fmt == "bin":
        entries, data = ENCODED.get((content_hash, "bin"), lambda: _pack_arrays(arrays))
        return Response(_binary_body(entries, data, meta), media_type=BINARY_MEDIA_TYPE,
                        headers=headers)
    if fmt == "csv":
        body = encode_rows_csv(csv_columns, comments=_csv_comments(meta))
        return Response(body, media_type=CSV_MEDIA_TYPE, headers=headers)
    arrays_json = ENCODED.get(
        (content_hash, "json"),
        lambda: dumps({name: np.ascontiguousarray(v) for name, v in arrays.items()}),
    )
    body = meta_bytes[:-1] + b"," + arrays_json[1:] if len(meta_bytes) > 2 else arrays_json
    return Response(body, media_type=JSON_MEDIA_TYPE, headers=headers)


def table_response(
    request: Request,
    *,
    fmt: str,
    content_hash: str,
    alpha_deg: np.ndarray,
    columns: Mapping[str, np.ndarray],
    meta: Mapping[str, Any],
    stations_radius_m: list[float] | None = None,
    extra_headers: Mapping[str, str] | None = None,
) -> Response:
    """Encode a table in the chosen format, with ETag, 304 on a matching If-None-Match, and
    the content hash in ``X-Polarsvc-Content-Hash``.

    The ETag names the content hash, the format and a digest of the metadata (which holds
    the inputs' current review states), so a review change is never hidden behind a 304.
    The encoded arrays are kept in :data:`ENCODED` under the content hash.
    """
    meta_bytes = dumps(meta)
    etag = etag_for(f"{content_hash}.{hashlib.sha256(meta_bytes).hexdigest()[:16]}", fmt)
    headers = {"ETag": etag, "X-Polarsvc-Content-Hash": content_hash, **(extra_headers or {})}
    if etag_matches(request, etag):
        return Response(status_code=304, headers=headers)
    if fmt == "bin":
        entries, data = ENCODED.get(
            (content_hash, "bin"), lambda: _pack_arrays({"alpha_deg": alpha_deg, **columns})
        )
        body = _binary_body(entries, data, meta)
        return Response(body, media_type=BINARY_MEDIA_TYPE, headers=headers)
    if fmt == "csv":
        body = encode_csv(
            alpha_deg, columns, comments=_csv_comments(meta), stations_radius_m=stations_radius_m
        )
        return Response(body, media_type=CSV_MEDIA_TYPE, headers=headers)
    arrays_json = ENCODED.get((content_hash, "json"), lambda: _json_arrays(alpha_deg, columns))
    body = meta_bytes[:-1] + b"," + arrays_json[1:] if len(meta_bytes) > 2 else arrays_json
    return Response(body, media_type=JSON_MEDIA_TYPE, headers=headers)
