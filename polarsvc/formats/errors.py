"""The error of the table file formats: :class:`FormatError`."""

from __future__ import annotations

import math

SHOWN_LENGTH = 40
"""Longest piece of a file echoed in a message or a field name [characters]."""


def shown(value: object) -> str:
    """A short, quoted echo of offending input for a message: long text is cut, and a
    not-a-number or infinite float is described in words rather than echoed."""
    if isinstance(value, float) and not math.isfinite(value):
        return "a non-finite number"
    text = value if isinstance(value, str) else repr(value)
    if len(text) > SHOWN_LENGTH:
        text = text[:SHOWN_LENGTH] + "..."
    return repr(text)


class FormatError(ValueError):
    """A table file (or a request to write one) cannot be read or written.

    Attributes
    ----------
    line : int or None
        One-based line number in the file where the problem lies, or None when the problem
        concerns the file as a whole (size, encoding of an unknown place, a missing key).
    field : str or None
        The offending column (``alpha_deg``, ``cl``, ``cd``, ``cm``) or metadata key.
    detail : str
        The message without the location prefix.
    """

    def __init__(self, message: str, *, line: int | None = None, field: str | None = None):
        if field is not None and len(field) > SHOWN_LENGTH:
            field = field[:SHOWN_LENGTH] + "..."
        self.line = line
        self.field = field
        self.detail = message
        where = []
        if line is not None:
            where.append(f"line {line}")
        if field is not None:
            where.append(f"field '{field}'")
        prefix = f"{', '.join(where)}: " if where else ""
        super().__init__(prefix + message)
