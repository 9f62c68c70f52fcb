"""The Jinja2 environment of the pages: autoescaping always on, a few number filters, and
the response helper that adds the pages' security headers."""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import jinja2
from fastapi import Request
from fastapi.responses import HTMLResponse
from starlette.templating import Jinja2Templates

TEMPLATE_DIR = Path(__file__).with_name("templates")
STATIC_DIR = Path(__file__).with_name("static")

CAUTION = (
    "These tables feed load and energy calculations for machines whose failure can hurt "
    "people. Validate them against measured data; design use follows IEC 61400-1, local "
    "codes and licensed engineering practice."
)

PAGE_HEADERS: dict[str, str] = {
    # No scripts at all; styles, images and form targets only from this origin.
    "Content-Security-Policy": (
        "default-src 'none'; style-src 'self'; img-src 'self'; form-action 'self'; "
        "frame-ancestors 'none'; base-uri 'none'"
    ),
    "X-Content-Type-Options": "nosniff",
    "Referrer-Policy": "same-origin",
    "Cache-Control": "no-store",
}


def format_number(value: float | None, digits: int = 4) -> str:
    """A number with ``digits`` significant digits; an em dash for None or non-finite."""
    if value is None:
        return "—"
    number = float(value)
    if not math.isfinite(number):
        return "—"
    return f"{number:.{digits}g}"


def format_reynolds(value: float | None) -> str:
    """A Reynolds number as ``3.0 × 10⁶``-style text (``6e6`` reads as 6.0×10^6)."""
    if value is None:
        return "—"
    exponent = math.floor(math.log10(abs(value))) if value else 0
    mantissa = value / 10**exponent
    superscript = str(exponent).translate(str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹"))
    return f"{mantissa:.2g} × 10{superscript}"


def short_hash(value: str | None, length: int = 12) -> str:
    """The first ``length`` hex digits of a content hash."""
    return "" if value is None else value[:length]


def format_time(value: Any) -> str:
    """A timestamp (a datetime or its ISO text) as ``YYYY-MM-DD HH:MM:SS UTC``."""
    if value is None:
        return "—"
    if isinstance(value, str):
        value = dt.datetime.fromisoformat(value)
    return value.strftime("%Y-%m-%d %H:%M:%S UTC")


def _environment() -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(TEMPLATE_DIR),
        autoescape=True,  # every template, whatever its extension
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
    )
    env.filters["num"] = format_number
    env.filters["reynolds"] = format_reynolds
    env.filters["short"] = short_hash
    env.filters["when"] = format_time
    env.globals["caution"] = CAUTION
    return env


templates = Jinja2Templates(env=_environment())


def render(
    request: Request,
    name: str,
    context: Mapping[str, Any],
    *,
    status_code: int = 200,
    headers: Mapping[str, str] | None = None,
) -> HTMLResponse:
    """Render template ``name`` with ``context`` and the page security headers."""
    return templates.TemplateResponse(
        request,
        name,
        dict(context),
        status_code=status_code,
        headers={**PAGE_HEADERS, **(headers or {})},
    )
