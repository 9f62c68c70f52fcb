"""Metadata keys, their normalisation, and the assembly of a :class:`ParsedPolar`.

Shared by the text and JSON readers so each rule lives in one place.
"""

from __future__ import annotations

import datetime as _dt
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from polarsvc.aero import SURFACE_CONDITIONS, ParameterError, Polar, PolarValidationError
from polarsvc.formats.errors import FormatError, shown
from polarsvc.names import InvalidText, check_name, find_control
from polarsvc.provenance import PROVENANCE_FIELDS, SOURCE_KINDS

"""Valid values of ``source_kind``."""

PROVENANCE_KEYS = PROVENANCE_FIELDS
"""Keys of :attr:`ParsedPolar.provenance`, always all present (None when not given)."""

CONDITION_KEYS: tuple[str, ...] = ("thickness", "reynolds", "mach", "surface")
IDENTITY_KEYS: tuple[str, ...] = ("airfoil", "family")
METADATA_KEYS: tuple[str, ...] = (
    *IDENTITY_KEYS,
    *CONDITION_KEYS,
    *PROVENANCE_KEYS,
    "angle_unit",
)
"""Every key accepted in a ``# key: value`` comment line or in ``defaults``."""

ANGLE_UNITS: dict[str, str] = {
    "deg": "deg", "degree": "deg", "degrees": "deg", "rad": "rad", "radian": "rad", "radians": "rad"
}
"""Accepted spellings of ``angle_unit`` and the unit each means."""

_CHOICES: dict[str, tuple[str, ...]] = {"surface": SURFACE_CONDITIONS, "source_kind": SOURCE_KINDS}
_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")
_NONFINITE = re.compile(r"[+-]?(?:nan|inf|infinity)", re.IGNORECASE)
_PERCENT = re.compile(r"(?P<number>\S+?)\s*%")


@dataclass(frozen=True, eq=False)
class ParsedPolar:
    """One polar read from an uploaded file, with its identity and provenance.

    Attributes
    ----------
    airfoil : str
        Airfoil name.
    family : str or None
        Airfoil family name.
    polar : Polar
        The validated table with its conditions.
    provenance : dict
        Keys :data:`PROVENANCE_KEYS`; values are strings or None.
    source_line : int
        One-based line of the first data row (of the object's opening brace for JSON).
    row_sources : tuple of int
        For each row of ``polar`` (sorted by angle, repeated identical rows merged), its
        zero-based index in the table as given.
    row_lines : tuple of int or None
        For each row of ``polar``, its one-based file line (None for JSON documents).
    mach_stated : bool
        Whether the file (or the caller's defaults) stated the Mach number.
    angle_unit_assumed : bool
        Whether the angle column had no unit anywhere and degrees were assumed.
    """

    airfoil: str
    family: str | None
    polar: Polar
    provenance: dict[str, object]
    source_line: int
    row_sources: tuple[int, ...] = ()
    row_lines: tuple[int, ...] | None = None
    mach_stated: bool = True
    angle_unit_assumed: bool = False

    def locate(self, row: int | None, field: str | None) -> tuple[int | None, str | None]:
        """File line and field of a row of ``polar`` (JSON: the object's line and
        ``field[index]``)."""
        if row is None or row >= len(self.row_sources):
            return (self.source_line if field in (None, "alpha_deg", "cl", "cd", "cm")
                    else None), field
        if self.row_lines is not None:
            return self.row_lines[row], field
        return self.source_line, f"{field}[{self.row_sources[row]}]"


def _stored_row_sources(alpha_deg: np.ndarray) -> tuple[int, ...]:
    """Original indices of the rows :class:`Polar` keeps: sorted by angle (stable), the first
    of rows repeating an angle (Polar merges identical repeats and refuses others)."""
    order = np.argsort(np.asarray(alpha_deg, dtype=np.float64), kind="stable")
    ordered = np.asarray(alpha_deg, dtype=np.float64)[order]
    keep = np.ones(order.size, dtype=bool)
    keep[1:] = np.diff(ordered) != 0.0
    return tuple(int(i) for i in order[keep])


def parse_number(text: str, *, line: int | None, field: str) -> float:
    """A finite float from a cell or value written as a plain decimal number.

    Raises
    ------
    FormatError
        If the text is not a number (naming line and field) or is NaN or infinite.
    """
    cell = text.strip()
    if _NONFINITE.fullmatch(cell):
        raise FormatError("the value is not a finite number", line=line, field=field)
    if not _NUMBER.fullmatch(cell):
        raise FormatError(f"value {shown(cell)} is not a number", line=line, field=field)
    value = float(cell)
    if not math.isfinite(value):
        raise FormatError(f"value {shown(cell)} overflows to infinity", line=line, field=field)
    return value


def _as_number(value: object, *, line: int | None, field: str) -> float:
    if isinstance(value, bool):
        raise FormatError(f"expected a number, got {shown(value)}", line=line, field=field)
    if isinstance(value, int):
        try:
            return float(value)
        except OverflowError:
            raise FormatError(
                "the integer is too large for a float (more than 308 digits)",
                line=line, field=field,
            ) from None
    if isinstance(value, float):
        if not math.isfinite(value):
            raise FormatError("the value is not a finite number", line=line, field=field)
        return value
    if isinstance(value, str):
        return parse_number(value, line=line, field=field)
    raise FormatError(f"expected a number, got {shown(value)}", line=line, field=field)


def parse_thickness(value: object, *, line: int | None) -> float:
    """Relative thickness as a fraction from ``0.21``, ``"21 %"`` or ``"21%"``.

    A bare number above 1 is refused: it could be a percentage or a mistake.
    """
    if isinstance(value, str) and (match := _PERCENT.fullmatch(value.strip())):
        return _as_number(match.group("number"), line=line, field="thickness") / 100.0
    fraction = _as_number(value, line=line, field="thickness")
    if fraction > 1.0:
        raise FormatError(
            f"thickness {fraction:g} is ambiguous: give a fraction (0.21) or mark a "
            f"percentage with '%' ('{fraction:g} %')",
            line=line,
            field="thickness",
        )
    return fraction


def _text(value: object, *, line: int | None, field: str) -> str:
    if not isinstance(value, str):
        raise FormatError(f"expected text, got {shown(value)}", line=line, field=field)
    text = value.strip()
    if not text:
        raise FormatError("value is empty", line=line, field=field)
    if field in IDENTITY_KEYS:
        try:
            check_name(field, text)
        except InvalidText as exc:
            raise FormatError(exc.detail, line=line, field=field) from None
    else:
        control = find_control(text)
        if control is not None:
            raise FormatError(control, line=line, field=field)
    return text


def normalise(key: str, value: object, *, line: int | None) -> object:
    """Check and normalise one metadata value (from a file or from ``defaults``)."""
    if key not in METADATA_KEYS:
        raise FormatError(
            f"unknown metadata key; valid keys: {', '.join(METADATA_KEYS)}", line=line, field=key
        )
    if value is None:
        return None
    if key == "thickness":
        return parse_thickness(value, line=line)
    if key in ("reynolds", "mach"):
        return _as_number(value, line=line, field=key)
    if key == "measured_on" and isinstance(value, _dt.date) and not isinstance(
        value, _dt.datetime
    ):
        return value.isoformat()  # a stored date, as the store hands it back
    text = _text(value, line=line, field=key)
    choices = _CHOICES.get(key)
    if choices is not None and text not in choices:
        raise FormatError(f"{shown(text)} is not one of {', '.join(choices)}", line=line, field=key)
    if key == "angle_unit":
        if text.lower() not in ANGLE_UNITS:
            raise FormatError(f"{shown(text)} is not 'deg' or 'rad'", line=line, field=key)
        return ANGLE_UNITS[text.lower()]
    if key == "measured_on":
        try:
            return _dt.date.fromisoformat(text).isoformat()
        except ValueError:
            raise FormatError(
                f"{shown(text)} is not an ISO date (YYYY-MM-DD)", line=line, field=key
            ) from None
    return text


def normalise_defaults(defaults: Mapping[str, object] | None) -> dict[str, object]:
    """Normalised caller defaults (e.g. from query parameters); None values are dropped."""
    return {
        key: normalise(key, value, line=None)
        for key, value in (defaults or {}).items()
        if value is not None
    }


def build_parsed_polar(
    *,
    metadata: Mapping[str, object],
    metadata_lines: Mapping[str, int | None],
    alpha_deg: np.ndarray,
    coefficients: Mapping[str, np.ndarray],
    row_lines: list[int] | None,
    source_line: int,
    angle_unit_assumed: bool = False,
) -> ParsedPolar:
    """Validate the table through :class:`Polar` and wrap it as a :class:`ParsedPolar`.

    ``metadata`` holds normalised values (file values over defaults). Errors of the numeric
    core are translated: a zero-based row becomes the file line ``row_lines[row]`` (or, without
    line numbers, a field ``"cl[3]"``), a condition becomes the line of its metadata entry.
    """
    airfoil = metadata.get("airfoil")
    if airfoil is None:
        raise FormatError(
            "no airfoil name: add '# airfoil: NAME' (or the 'airfoil' key) or pass it in "
            "defaults",
            field="airfoil",
        )
    conditions = {key: metadata[key] for key in CONDITION_KEYS if metadata.get(key) is not None}
    try:
        polar = Polar(
            alpha_deg=alpha_deg,
            cl=coefficients["cl"],
            cd=coefficients["cd"],
            cm=coefficients.get("cm"),
            **conditions,
        )
    except PolarValidationError as exc:
        line = None
        if exc.row is not None and row_lines is not None:
            line = row_lines[exc.row]
        field = exc.field
        if exc.row is not None and row_lines is None:
            field = f"{field}[{exc.row}]"
        detail = exc.detail
        if exc.row is None and exc.field == "alpha_deg" and "radians" in detail:
            detail = (
                detail.split(": they look like radians")[0] + ": they look like radians; "
                "state radians with an 'alpha_rad' column or 'angle_unit: rad'"
            )
        raise FormatError(detail, line=line, field=field) from None
    except ParameterError as exc:
        raise FormatError(
            str(exc),
            line=metadata_lines.get(exc.parameter),
            field=exc.parameter,
        ) from None
    family = metadata.get("family")
    sources = _stored_row_sources(alpha_deg)
    return ParsedPolar(
        airfoil=str(airfoil),
        family=None if family is None else str(family),
        polar=polar,
        provenance={key: metadata.get(key) for key in PROVENANCE_KEYS},
        source_line=source_line,
        row_sources=sources,
        row_lines=None if row_lines is None else tuple(row_lines[i] for i in sources),
        mach_stated=metadata.get("mach") is not None,
        angle_unit_assumed=angle_unit_assumed,
    )
