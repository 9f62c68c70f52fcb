"""Reader of delimited text tables (CSV, TSV, whitespace-separated); see :mod:`polarsvc.formats`."""

from __future__ import annotations

import csv
import re
from collections.abc import Mapping

import numpy as np

from polarsvc.formats.errors import FormatError, shown
from polarsvc.formats.metadata import ParsedPolar, build_parsed_polar, normalise, parse_number

TEXT_LAYOUTS: tuple[str, ...] = ("csv", "tsv", "whitespace")
"""Valid names of the text layouts."""

ANGLE_SPELLINGS: tuple[str, ...] = ("alpha", "aoa", "angle", "angle_of_attack", "incidence")
"""Accepted names of the angle column, each alone (unit: ``angle_unit``, else degrees with a
warning flag) or with a unit suffix ``_deg`` / ``_rad`` (also written ``(deg)``, ``[deg]`` or
`` deg``)."""

COEFFICIENT_SPELLINGS: dict[str, tuple[str, ...]] = {
    "cl": ("cl", "c_l", "lift", "lift_coefficient", "cl_lift"),
    "cd": ("cd", "c_d", "drag", "drag_coefficient", "cd_drag"),
    "cm": ("cm", "c_m", "moment", "moment_coefficient", "pitching_moment", "cm_c4",
           "cm_quarter_chord"),
}
"""Accepted names of the coefficient columns (dimensionless; a ``(-)`` or ``[-]`` suffix is
allowed)."""


def _column_names() -> dict[str, str]:
    names: dict[str, str] = {}
    for spelling in ANGLE_SPELLINGS:
        names[spelling] = "alpha"
        names[f"{spelling}_deg"] = "alpha_deg"
        names[f"{spelling}_rad"] = "alpha_rad"
    for column, spellings in COEFFICIENT_SPELLINGS.items():
        for spelling in spellings:
            names[spelling] = column
    return names


COLUMN_NAMES: dict[str, str] = _column_names()
"""Accepted header names (after :func:`header_key`) and the column each one means:
``alpha_deg``, ``alpha_rad``, ``alpha`` (no unit), ``cl``, ``cd``, ``cm``."""

_UNIT_SUFFIX = re.compile(
    r"\s*(?:[(\[]\s*(?P<bracketed>deg|degrees|rad|radians|-)\s*[)\]]|\s(?P<bare>deg|rad))$"
)
_UNITS = {"deg": "deg", "degrees": "deg", "rad": "rad", "radians": "rad"}


def header_key(cell: str) -> str:
    """A header cell reduced to the key looked up in :data:`COLUMN_NAMES`: lower case,
    quotes dropped, a unit in brackets or after a space turned into a ``_deg``/``_rad``
    suffix (``"Alpha (deg)"`` -> ``alpha_deg``), spaces and hyphens turned into ``_``."""
    name = cell.strip().strip('"').strip().lower()
    match = _UNIT_SUFFIX.search(name)
    suffix = ""
    if match is not None:
        unit = match.group("bracketed") or match.group("bare")
        name = name[: match.start()]
        suffix = "" if unit == "-" else "_" + _UNITS[unit]
    name = re.sub(r"[\s\-]+", "_", name.strip())
    return name + suffix


POSITIONAL_COLUMNS: tuple[str, ...] = ("alpha", "cl", "cd", "cm")

_METADATA_LINE = re.compile(r"#\s*(?P<key>[A-Za-z][A-Za-z0-9_]*)\s*:\s*(?P<value>.*)")
_ANGLE_COLUMNS = ("alpha_deg", "alpha_rad", "alpha")


def detect_layout(first_row: str) -> str:
    """The layout of a table from its first non-comment line: a tab means TSV, a comma CSV,
    anything else whitespace-separated."""
    if "\t" in first_row:
        return "tsv"
    if "," in first_row:
        return "csv"
    return "whitespace"


def _split(text: str, layout: str, line: int) -> list[str]:
    if layout == "csv":
        try:
            return [cell.strip() for cell in next(csv.reader([text]))]
        except csv.Error as exc:
            raise FormatError(f"not a valid CSV line ({exc})", line=line) from None
    if layout == "tsv":
        return [cell.strip() for cell in text.split("\t")]
    return text.split()


def _is_header(cells: list[str], line: int) -> bool:
    for cell in cells:
        try:
            parse_number(cell, line=line, field="")
        except FormatError:
            return True
    return False


def _map_header(cells: list[str], line: int) -> list[str]:
    columns: list[str] = []
    for cell in cells:
        name = header_key(cell)
        if name not in COLUMN_NAMES:
            hint = "; separate cells by commas, tabs or spaces" if ";" in cell else ""
            raise FormatError(
                f"unknown column {shown(cell)}; accepted names: {', '.join(COLUMN_NAMES)} "
                f"(a unit may follow as '(deg)', '[rad]'){hint}",
                line=line,
                field=cell,
            )
        column = COLUMN_NAMES[name]
        if column in columns or (column in _ANGLE_COLUMNS and set(columns) & set(_ANGLE_COLUMNS)):
            raise FormatError("the column appears twice", line=line, field=cell)
        columns.append(column)
    for required in ("cl", "cd"):
        if required not in columns:
            raise FormatError("required column is missing", line=line, field=required)
    if not set(columns) & set(_ANGLE_COLUMNS):
        raise FormatError("required column is missing", line=line, field="alpha_deg")
    return columns


def _resolve_angle_column(columns: list[str], unit: str | None, line: int) -> tuple[str, str]:
    """The angle column's name in ``columns`` and its unit ('deg' or 'rad')."""
    name = next(column for column in columns if column in _ANGLE_COLUMNS)
    if name == "alpha":
        # no unit stated anywhere: degrees, recorded as assumed (a radian column is caught
        # by the lift-slope check of polarsvc.aero.quality)
        return name, unit or "deg"
    stated = name.removeprefix("alpha_")
    if unit is not None and unit != stated:
        raise FormatError(
            f"column {name!r} contradicts angle_unit {unit!r}", line=line, field="angle_unit"
        )
    return name, stated


def parse_text_table(
    text: str, *, layout: str | None, defaults: Mapping[str, object]
) -> list[ParsedPolar]:
    """Read one polar from a text table (see :mod:`polarsvc.formats` for the layout).

    Parameters
    ----------
    text : str
        The decoded file.
    layout : {'csv', 'tsv', 'whitespace'} or None
        The delimiter layout; None detects it from the first non-comment line.
    defaults : mapping
        Normalised metadata used where the file gives none.
    """
    metadata: dict[str, object] = {}
    metadata_lines: dict[str, int | None] = {}
    rows: list[tuple[int, list[str]]] = []
    header: tuple[int, list[str]] | None = None
    for number, raw in enumerate(text.split("\n"), start=1):
        stripped = raw.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            match = _METADATA_LINE.fullmatch(stripped)
            if match is None:
                continue
            key = match.group("key").lower()
            value = normalise(key, match.group("value"), line=number)
            if key in metadata and metadata[key] != value:
                raise FormatError(
                    f"given twice with different values (first on line {metadata_lines[key]})",
                    line=number,
                    field=key,
                )
            metadata[key] = value
            metadata_lines[key] = number
            continue
        if layout is None:
            layout = detect_layout(raw)
        cells = _split(raw, layout, number)
        if header is None and not rows and _is_header(cells, number):
            header = (number, _map_header(cells, number))
        else:
            rows.append((number, cells))
    if header is None and not rows:
        raise FormatError("the file holds comments only, no table")
    merged = {**defaults, **metadata}
    unit = None if merged.get("angle_unit") is None else str(merged["angle_unit"])
    if header is not None:
        header_line, columns = header
        angle_name, angle_unit = _resolve_angle_column(columns, unit, header_line)
    else:
        if unit is None:
            raise FormatError(
                "the table has no header line, so its columns and angle unit are unknown: add "
                "a header 'alpha_deg,cl,cd,cm' (or state '# angle_unit: deg' to use the column "
                "order alpha, cl, cd[, cm])",
                line=rows[0][0],
                field="alpha_deg",
            )
        width = len(rows[0][1])
        if width not in (3, 4):
            raise FormatError(
                f"a table without header needs 3 or 4 columns (alpha, cl, cd[, cm]), got {width}",
                line=rows[0][0],
            )
        header_line, columns = 0, list(POSITIONAL_COLUMNS[:width])
        angle_name, angle_unit = "alpha", unit
    if not rows:
        raise FormatError("the table has no data rows", line=header_line or None)
    values = np.empty((len(rows), len(columns)), dtype=np.float64)
    for index, (number, cells) in enumerate(rows):
        if len(cells) != len(columns):
            raise FormatError(
                f"row has {len(cells)} cells but the table has {len(columns)} columns "
                f"({', '.join(columns)})",
                line=number,
            )
        for position, (column, cell) in enumerate(zip(columns, cells, strict=True)):
            field = "alpha_deg" if column == angle_name else column
            values[index, position] = parse_number(cell, line=number, field=field)
    table = {column: values[:, position] for position, column in enumerate(columns)}
    angle = table.pop(angle_name)
    alpha_deg = np.degrees(angle) if angle_unit == "rad" else angle
    assumed = header is not None and angle_name == "alpha" and unit is None
    return [
        build_parsed_polar(
            metadata=merged,
            metadata_lines=metadata_lines,
            alpha_deg=alpha_deg,
            coefficients=table,
            row_lines=[number for number, _ in rows],
            source_line=rows[0][0],
            angle_unit_assumed=assumed,
        )
    ]
