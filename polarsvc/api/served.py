"""Encoding a :class:`polarsvc.pipeline.ServedTable` as an HTTP response."""

from __future__ import annotations

from fastapi import Request
from fastapi.responses import Response

from polarsvc import performance, recipes
from polarsvc.api.responses import arrays_response, table_response
from polarsvc.pipeline import ServedTable


def served_response(
    request: Request, served: ServedTable, fmt: str, part: str = "curve"
) -> Response:
    """The table with its recipe, hashes and reports; ETag is the content hash. A rotor
    result in CSV is the table ``part`` of :data:`polarsvc.performance.TABLE_PARTS`."""
    radii = None
    stations = served.reports.get("stations") if served.reports else None
    if served.alpha_deg is not None and served.columns["cl"].ndim == 2 and stations:
        radii = [float(s["radius_m"]) for s in stations]
    headers = {
        "X-Polarsvc-Recipe-Hash": served.recipe_hash,
        "X-Polarsvc-Cache": "hit" if served.cached else "miss",
    }
    if served.deprecated_inputs:
        headers["X-Polarsvc-Deprecated-Inputs"] = str(len(served.deprecated_inputs))
    if served.alpha_deg is None:
        return arrays_response(
            request, fmt=fmt, content_hash=served.content_hash, arrays=served.columns,
            meta={**served.meta(), "part": part} if fmt == "csv" else served.meta(),
            csv_columns=performance.table_part(served.columns, part) if fmt == "csv" else {},
            csv_part=part, extra_headers=headers,
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

