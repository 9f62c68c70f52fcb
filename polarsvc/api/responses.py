"""Fast table responses: JSON through orjson, CSV, and a binary form (Apache Arrow IPC,
or NumPy .npz where pyarrow is not installed; :mod:`polarsvc.formats.binary`); ETag and 304
handling.

Large tables never pass through the standard-library JSON encoder or per-element
validation: handlers hand numpy arrays to :func:`table_response`, which encodes the arrays
once per content hash and keeps the result in :data:`ENCODED`; only the small metadata
around them is encoded per request.

Non-finite values: JSON writes NaN as null (orjson); the stored tables never hold NaN.
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from typing import Any

import numpy as np
import orjson
from fastapi import Request
from fastapi.responses import Response

from polarsvc.describe import csv_comments as described_comments
from polarsvc.formats import csv_comment_lines, encode_rows, table_csv_rows
from polarsvc.formats.binary import (
    ARROW_AVAILABLE,
    ARROW_MEDIA_TYPE,
    NPZ_MEDIA_TYPE,
    arrays_arrow_table,
    arrow_table,
    encode_arrays_npz,
    encode_npz,
    write_arrow,
)
from polarsvc.lru import LruCache

JSON_MEDIA_TYPE = "application/json"
CSV_MEDIA_TYPE = "text/csv; charset=utf-8"
FORMATS = ("json", "csv", "bin", "arrow", "npz")
"""Response formats; ``bin`` is the binary form this server has: ``arrow`` when pyarrow is
installed, else ``npz``."""
BINARY_MEDIA_TYPES = {"arrow": ARROW_MEDIA_TYPE, "npz": NPZ_MEDIA_TYPE}

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


def binary_format() -> str:
    """The binary form this server writes for ``format=bin``: arrow, else npz."""
    return "arrow" if ARROW_AVAILABLE else "npz"


def page_response(
    request: Request, items: list[Any], *, next_cursor: str | None, total: int | None
) -> Response:
    """A JSON list (one page of a listing) with the headers of :func:`page_headers`."""
    return json_response(items, headers=page_headers(request, next_cursor, total))


def page_headers(request: Request, next_cursor: str | None, total: int | None) -> dict[str, str]:
    """The headers of one page of a listing: ``X-Total-Count`` (all matching items) and,
    unless this is the last page, ``Link: <url>; rel="next"`` (RFC 8288): the same request
    with ``after`` set to the next page's cursor."""
    headers: dict[str, str] = {}
    if total is not None:
        headers["X-Total-Count"] = str(total)
    if next_cursor is not None:
        headers["Link"] = f'<{request.url.include_query_params(after=next_cursor)}>; rel="next"'
    return headers


def choose_format(request: Request, explicit: str | None) -> str:
    """The response format: the ``format`` query parameter, else the Accept header, else
    JSON. ``bin`` resolves to :func:`binary_format`.

    Raises
    ------
    FormatChoiceError
        On an unknown format, or ``arrow`` on a server without pyarrow.
    """
    if explicit:
        if explicit not in FORMATS:
            raise FormatChoiceError(
                f"format={explicit!r} is not known; valid formats: {', '.join(FORMATS)}"
            )
        chosen = explicit
    else:
        accept = request.headers.get("accept", "")
        if ARROW_MEDIA_TYPE in accept and ARROW_AVAILABLE:
            chosen = "arrow"
        elif NPZ_MEDIA_TYPE in accept:
            chosen = "npz"
        elif ARROW_MEDIA_TYPE in accept:
            chosen = "npz"  # asked for Arrow on a server without pyarrow: the fallback
        elif "text/csv" in accept:
            chosen = "csv"
        else:
            chosen = "json"
    if chosen == "bin":
        return binary_format()
    if chosen == "arrow" and not ARROW_AVAILABLE:
        raise FormatChoiceError(
            "format='arrow' needs pyarrow on the server; use format=npz or format=bin"
        )
    return chosen


def csv_rows(
    alpha_deg: np.ndarray,
    columns: Mapping[str, np.ndarray],
    *,
    stations_radius_m: list[float] | None = None,
) -> bytes:
    """The column header and data lines of a table as CSV (no comment lines).

    One-dimensional columns give ``alpha_deg,<name>...`` rows. Two-dimensional columns
    (stations x angles) give the long layout ``radius_m,alpha_deg,<name>...`` of
    :func:`polarsvc.formats.table_to_csv`.
    """
    first = next(iter(columns.values()))
    if np.ndim(first) == 2:
        return table_csv_rows(
            alpha_deg, columns, stations=stations_radius_m,
            station_column="radius_m" if stations_radius_m is not None else "station",
        )
    header = ",".join(["alpha_deg", *columns]) + "\n"
    stacked = np.column_stack([np.asarray(alpha_deg, dtype=np.float64), *columns.values()])
    return header.encode("utf-8") + encode_rows(stacked)


def csv_comments(meta: Mapping[str, Any]) -> bytes:
    """The response's metadata as ``# key: value`` lines: its scalar entries, then what the
    table holds (:func:`polarsvc.describe.csv_comments`)."""
    return csv_comment_lines(described_comments(meta)).encode("utf-8")


def encode_csv(
    alpha_deg: np.ndarray,
    columns: Mapping[str, np.ndarray],
    *,
    comments: Mapping[str, Any] | None = None,
    stations_radius_m: list[float] | None = None,
) -> bytes:
    """Tables as CSV with ``# key: value`` comment lines first (see :func:`csv_rows`)."""
    return csv_comment_lines(comments).encode("utf-8") + csv_rows(
        alpha_deg, columns, stations_radius_m=stations_radius_m
    )


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
    return int(getattr(value, "nbytes", 0))


ENCODED_MAX_BYTES = 96 * 2**20
ENCODED: LruCache[Any] = LruCache(
    max_entries=512, max_size=ENCODED_MAX_BYTES, size_of=_encoded_size
)
"""Encoded array bodies of tables by (content hash, format, station radii): a table is
immutable under its content hash, so only the small metadata around it is encoded per
request. Bounded in bytes."""


def _json_arrays(alpha_deg: np.ndarray, columns: Mapping[str, np.ndarray]) -> bytes:
    arrays = {name: np.ascontiguousarray(value) for name, value in columns.items()}
    return dumps({"alpha_deg": np.ascontiguousarray(alpha_deg), **arrays})


def columns_csv_rows(columns: Mapping[str, np.ndarray]) -> bytes:
    """Header and data lines of one-dimensional columns of one length (no comments)."""
    header = ",".join(columns) + "\n"
    stacked = np.column_stack([np.asarray(v, dtype=np.float64) for v in columns.values()])
    return header.encode("utf-8") + encode_rows(stacked)


def arrays_response(
    request: Request | None,
    *,
    fmt: str,
    content_hash: str | None,
    arrays: Mapping[str, np.ndarray],
    meta: Mapping[str, Any],
    part: str | None = None,
    extra_headers: Mapping[str, str] | None = None,
) -> Response:
    """Named arrays of any shapes (a rotor result, a comparison) in the chosen format: JSON
    (metadata and arrays in one object), Arrow or .npz (the named-array layout of
    :mod:`polarsvc.formats.binary`). ``part`` names what ``arrays`` are when they are one
    part of a result, one-dimensional columns of one length; CSV needs such a part. With a
    ``content_hash`` the answer has an ETag (content hash, representation, digest of the
    metadata), 304 handling and its encoded arrays kept in :data:`ENCODED`; without one
    (a comparison, computed per request) neither."""
    meta_bytes = dumps(meta)
    representation = fmt if part is None else f"{fmt}-{part}"
    headers = dict(extra_headers or {})
    key = None
    if content_hash is not None:
        tag = f"{content_hash}.{hashlib.sha256(meta_bytes).hexdigest()[:16]}"
        etag = etag_for(tag, representation)
        headers = {"ETag": etag, "X-Polarsvc-Content-Hash": content_hash, **headers}
        if request is not None and etag_matches(request, etag):
            return Response(status_code=304, headers=headers)
        key = (content_hash, representation, "arrays")

    def cached(build: Any) -> Any:
        return build() if key is None else ENCODED.get(key, build)

    if fmt == "arrow":
        table = cached(lambda: arrays_arrow_table(arrays))
        return Response(write_arrow(table, meta), media_type=ARROW_MEDIA_TYPE, headers=headers)
    if fmt == "npz":
        return Response(encode_arrays_npz(arrays, meta), media_type=NPZ_MEDIA_TYPE,
                        headers=headers)
    if fmt == "csv":
        if part is None:
            raise ValueError("a CSV answer carries one part of a result")
        rows = cached(lambda: columns_csv_rows(arrays))
        return Response(csv_comments(meta) + rows, media_type=CSV_MEDIA_TYPE, headers=headers)
    arrays_json = cached(
        lambda: dumps({name: np.ascontiguousarray(v) for name, v in arrays.items()})
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
    extra_comments: Mapping[str, str] | None = None,
) -> Response:
    """Encode a table in the chosen format, with ETag, 304 on a matching If-None-Match, and
    the content hash in ``X-Polarsvc-Content-Hash``.

    The ETag names the content hash, the format and a digest of the metadata (which holds
    the inputs' current review states), so a review change is never hidden behind a 304.
    The encoded arrays are kept in :data:`ENCODED` under the content hash.
    ``extra_comments`` are further ``# key: value`` lines of the CSV form (values the metadata
    holds only in nested form, such as per-station values).
    """
    meta_bytes = dumps(meta)
    etag = etag_for(f"{content_hash}.{hashlib.sha256(meta_bytes).hexdigest()[:16]}", fmt)
    headers = {"ETag": etag, "X-Polarsvc-Content-Hash": content_hash, **(extra_headers or {})}
    if etag_matches(request, etag):
        return Response(status_code=304, headers=headers)
    radii_key = None if stations_radius_m is None else np.asarray(
        stations_radius_m, dtype=np.float64
    ).tobytes()
    key = (content_hash, fmt, radii_key)
    if fmt == "arrow":
        table = ENCODED.get(key, lambda: arrow_table(
            alpha_deg, columns, radius_m=stations_radius_m
        ))
        return Response(write_arrow(table, meta), media_type=ARROW_MEDIA_TYPE, headers=headers)
    if fmt == "npz":
        body = encode_npz(alpha_deg, columns, meta, radius_m=stations_radius_m)
        return Response(body, media_type=NPZ_MEDIA_TYPE, headers=headers)
    if fmt == "csv":
        rows = ENCODED.get(key, lambda: csv_rows(
            alpha_deg, columns, stations_radius_m=stations_radius_m
        ))
        head = csv_comments(meta) + csv_comment_lines(extra_comments).encode("utf-8")
        return Response(head + rows, media_type=CSV_MEDIA_TYPE, headers=headers)
    arrays_json = ENCODED.get(key, lambda: _json_arrays(alpha_deg, columns))
    body = meta_bytes[:-1] + b"," + arrays_json[1:] if len(meta_bytes) > 2 else arrays_json
    return Response(body, media_type=JSON_MEDIA_TYPE, headers=headers)
