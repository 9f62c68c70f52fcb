"""Reader of JSON polar documents; see :mod:`polarsvc.formats` for the schema."""

from __future__ import annotations

import json
import re
from collections.abc import Mapping

import numpy as np

from polarsvc.formats.errors import FormatError, shown
from polarsvc.formats.metadata import (
    CONDITION_KEYS,
    PROVENANCE_KEYS,
    ParsedPolar,
    build_parsed_polar,
    normalise,
)

SECTIONS: dict[str, tuple[str, ...]] = {
    "conditions": CONDITION_KEYS,
    "provenance": PROVENANCE_KEYS,
    "table": ("alpha_deg", "alpha_rad", "cl", "cd", "cm"),
}
"""The nested objects of a polar document and the keys each accepts."""

_SEPARATORS = re.compile(r"[\s,]*")
_TOP_KEYS = ("airfoil", "family", *SECTIONS)


def _refuse_constant(name: str) -> float:
    raise ValueError("not-a-number and infinity literals are refused")


def _line_of(text: str, offset: int) -> int:
    return text.count("\n", 0, offset) + 1


def _top_level_objects(text: str) -> list[tuple[int, object]]:
    """Decode the document into (line where the item starts, item) pairs: one pair for an
    object, one per element for a list."""
    try:
        document = json.loads(text, parse_constant=_refuse_constant)
    except json.JSONDecodeError as exc:
        raise FormatError(f"not valid JSON: {exc.msg}", line=exc.lineno) from None
    except ValueError as exc:
        raise FormatError(f"not valid JSON: {exc}") from None
    except RecursionError:
        raise FormatError("not valid JSON: nested too deeply") from None
    position = len(text) - len(text.lstrip())
    if not isinstance(document, list):
        return [(_line_of(text, position), document)]
    decoder = json.JSONDecoder()
    position += 1
    items: list[tuple[int, object]] = []
    for item in document:
        position = _SEPARATORS.match(text, position).end()  # type: ignore[union-attr]
        items.append((_line_of(text, position), item))
        _, position = decoder.raw_decode(text, position)
    return items


def _column(value: object, *, line: int, field: str) -> np.ndarray:
    if not isinstance(value, list) or not value:
        raise FormatError("expected a non-empty list of numbers", line=line, field=field)
    for index, item in enumerate(value):
        if isinstance(item, bool) or not isinstance(item, int | float):
            raise FormatError(
                f"expected a number, got {shown(item)}", line=line, field=f"{field}[{index}]"
            )
    try:
        return np.array(value, dtype=np.float64)
    except OverflowError:
        raise FormatError("a value is too large for a float", line=line, field=field) from None


_PATHS = {key: f"{section}.{key}" for section, keys in SECTIONS.items() for key in keys}


def _document_to_polar(
    document: object, *, line: int, defaults: Mapping[str, object]
) -> ParsedPolar:
    if not isinstance(document, dict):
        raise FormatError("expected a polar object", line=line)
    for key in document:
        if key not in _TOP_KEYS:
            raise FormatError(f"unknown key; valid keys: {', '.join(_TOP_KEYS)}", line=line,
                              field=key)
    metadata: dict[str, object] = {}
    for key in ("airfoil", "family"):
        if document.get(key) is not None:
            metadata[key] = normalise(key, document[key], line=line)
    sections = {}
    for section, keys in SECTIONS.items():
        body = document.get(section)
        body = {} if body is None else body
        if not isinstance(body, dict):
            raise FormatError("expected an object", line=line, field=section)
        for key in body:
            if key not in keys:
                raise FormatError(f"unknown key; valid keys: {', '.join(keys)}", line=line,
                                  field=f"{section}.{key}")
        sections[section] = body
    for section in ("conditions", "provenance"):
        for key, value in sections[section].items():
            try:
                normalised = normalise(key, value, line=line)
            except FormatError as exc:
                raise FormatError(exc.detail, line=line, field=f"{section}.{key}") from None
            if normalised is not None:
                metadata[key] = normalised
    table = sections["table"]
    angles = [key for key in ("alpha_deg", "alpha_rad") if key in table]
    if len(angles) != 1:
        raise FormatError("give exactly one of alpha_deg and alpha_rad", line=line,
                          field="table.alpha_deg")
    for required in ("cl", "cd"):
        if required not in table:
            raise FormatError("required column is missing", line=line, field=f"table.{required}")
    columns = {
        key: _column(value, line=line, field=f"table.{key}")
        for key, value in table.items()
        if value is not None
    }
    angle = columns.pop(angles[0])
    alpha_deg = np.degrees(angle) if angles[0] == "alpha_rad" else angle
    try:
        return build_parsed_polar(
            metadata={**defaults, **metadata},
            metadata_lines={},
            alpha_deg=alpha_deg,
            coefficients=columns,
            row_lines=None,
            source_line=line,
        )
    except FormatError as exc:
        field = exc.field
        if field is not None:
            base, bracket, rest = field.partition("[")
            field = _PATHS.get(base, base) + bracket + rest
        raise FormatError(exc.detail, line=line, field=field) from None


def parse_json_document(text: str, *, defaults: Mapping[str, object]) -> list[ParsedPolar]:
    """Read one polar object or a list of them (see :mod:`polarsvc.formats`)."""
    items = _top_level_objects(text)
    if not items:
        raise FormatError("the JSON list holds no polar", line=1)
    return [_document_to_polar(item, line=line, defaults=defaults) for line, item in items]
