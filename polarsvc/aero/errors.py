"""Typed errors of the numeric core.

Tree::

    AeroError (ValueError)
    +-- PolarValidationError      a table is malformed; names the row and field
    +-- InsufficientDataError     fewer points than a method needs
    +-- UnknownMethodError        a method name not in the list of valid names
    +-- ParameterError            a parameter is out of its range; names the parameter
    +-- OutOfRangeError           a Reynolds number or thickness outside the data
"""

from __future__ import annotations

import math


def show_value(value: object) -> str:
    """Text for a value inside an error message; a not-a-number value is written
    ``'undefined (not a number)'`` so that no message ever carries that literal."""
    try:
        number = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return "a non-numeric value"
    if math.isnan(number):
        return "undefined (not a number)"
    return f"{number:g}"


class AeroError(ValueError):
    """Base class of every error raised by :mod:`polarsvc.aero`."""


class PolarValidationError(AeroError):
    """A section table is malformed.

    Attributes
    ----------
    row : int or None
        Zero-based index of the offending row in the table as given (before sorting).
    field : str or None
        Name of the offending column (``alpha_deg``, ``cl``, ``cd``, ``cm``) or condition.
    """

    def __init__(self, message: str, *, row: int | None = None, field: str | None = None):
        self.row = row
        self.field = field
        where = []
        if row is not None:
            where.append(f"row {row}")
        if field is not None:
            where.append(f"field '{field}'")
        prefix = f"{', '.join(where)}: " if where else ""
        super().__init__(prefix + message)
        self.detail = message


class InsufficientDataError(AeroError):
    """A method needs more points (or more polars) than were given."""


class UnknownMethodError(AeroError):
    """A method or model name is not one of the valid names (listed in the message)."""

    def __init__(self, parameter: str, value: object, valid: tuple[str, ...]):
        self.parameter = parameter
        self.value = value
        self.valid = valid
        shown = value if isinstance(value, str) else show_value(value)
        super().__init__(f"{parameter}={shown!r} is not known; valid names: {', '.join(valid)}")


class ParameterError(AeroError):
    """A parameter is outside its valid range."""

    def __init__(self, parameter: str, message: str):
        self.parameter = parameter
        super().__init__(f"parameter '{parameter}': {message}")


class OutOfRangeError(AeroError):
    """A requested Reynolds number or thickness lies outside the data and clamping was not asked."""

    def __init__(
        self, parameter: str, value: float, low: float, high: float, subject: str | None = None
    ):
        self.parameter = parameter
        self.value = value
        self.low = low
        self.high = high
        self.subject = subject
        of = f" of {subject}" if subject else ""
        super().__init__(
            f"{parameter}={show_value(value)} lies outside the data range{of} "
            f"[{show_value(low)}, {show_value(high)}]; "
            "pass clamp=True to use the nearest member (the result records the clamp)"
        )
