"""Encoding a :class:`polarsvc.pipeline.ServedTable` as an HTTP response."""

from __future__ import annotations

import hashlib

from fastapi import Request
from fastapi.responses import Response

from polarsvc import performance, recipes
from polarsvc.api.deps import Principal
from polarsvc.api.responses import (
    arrays_response,
    dumps,
    etag_for,
    etag_matches,
    table_response,
)
from polarsvc.api.settings import Settings
from polarsvc.names import safe_file_stem
from polarsvc.package import MEDIA_TYPE as PACKAGE_MEDIA_TYPE
from polarsvc.package import build_station_package
from polarsvc.pipeline import CachePolicy, ServedTable


def cache_policy(settings: Settings, principal: Principal) -> CachePolicy:
    """Whether tables computed for this request are stored (see
    :class:`polarsvc.pipeline.CachePolicy`)."""
    return CachePolicy(
        requester=principal.actor(), reader_budget_bytes=settings.reader_cache_budget_bytes
    )

PACKAGE_FORMAT = "zip"
"""The ``format`` value asking a blade set for its station package."""


def served_response(
    request: Request, served: ServedTable, fmt: str, part: str | None = None
) -> Response:
    """The table with its recipe, hashes and reports; ETag is the content hash. A rotor
    result with ``part`` (one of :data:`polarsvc.performance.TABLE_PARTS`) is that part as
    columns, in every format; without it JSON and the binary forms carry every array and
    CSV the part :data:`polarsvc.performance.DEFAULT_CSV_PART`. Tables have one part:
    ``part`` is ignored for them."""
    radii = None
    stations = served.reports.get("stations") if served.reports else None
    if served.alpha_deg is not None and served.columns["cl"].ndim == 2 and stations:
        radii = [float(s["radius_m"]) for s in stations]
    headers = {
        "X-Polarsvc-Recipe-Hash": served.recipe_hash,
        "X-Polarsvc-Cache": "hit" if served.cached else "miss",
        "X-Polarsvc-Stored": "yes" if served.stored else "no",
    }
    if served.deprecated_inputs:
        headers["X-Polarsvc-Deprecated-Inputs"] = str(len(served.deprecated_inputs))
    if served.alpha_deg is None:
        if part is None and fmt == "csv":
            part = performance.DEFAULT_CSV_PART
        if part is None:
            return arrays_response(
                request, fmt=fmt, content_hash=served.content_hash, arrays=served.columns,
                meta=served.meta(), extra_headers=headers,
            )
        return arrays_response(
            request, fmt=fmt, content_hash=served.content_hash,
            arrays=performance.table_part(served.columns, part),
            meta={**served.meta(), "part": part}, part=part, extra_headers=headers,
        )
    return table_response(
        request,
        fmt=fmt,
        content_hash=served.content_hash,
        alpha_deg=served.alpha_deg,
        columns=served.columns,
        meta=served.meta(),
        stations_radius_m=radii,
        extra_headers=headers,
        extra_comments=recipes.dynamic_stall_comments(stations) if fmt == "csv" else None,
    )


def package_response(request: Request, served: ServedTable) -> Response:
    """A blade set as a station package (:mod:`polarsvc.package`), with the same ETag rule
    as the tables (content hash, format, digest of the metadata) and a file name."""
    meta = served.meta()
    digest = hashlib.sha256(dumps(meta)).hexdigest()[:16]
    etag = etag_for(f"{served.content_hash}.{digest}", PACKAGE_FORMAT)
    stem = safe_file_stem(str((served.blade or {}).get("name") or "blade"))
    headers = {
        "ETag": etag,
        "X-Polarsvc-Content-Hash": served.content_hash,
        "X-Polarsvc-Recipe-Hash": served.recipe_hash,
        "Content-Disposition": (
            f'attachment; filename="{stem}_{served.content_hash[:12]}.zip"'
        ),
    }
    if etag_matches(request, etag):
        return Response(status_code=304, headers=headers)
    body = build_station_package(served.alpha_deg, served.columns, meta)
    return Response(body, media_type=PACKAGE_MEDIA_TYPE, headers=headers)
