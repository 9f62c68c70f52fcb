"""Table file formats of polarsvc: reading uploaded polars, writing exports.

Text tables
-----------
A text table is UTF-8 (a byte-order mark is allowed) with one polar per file::

    # airfoil: SKUA-210
    # family: skua
    # thickness: 0.21
    # reynolds: 6000000.0
    # mach: 0.0
    # surface: clean
    # source_kind: wind-tunnel
    # reference: report 12-07, run 31
    alpha_deg,cl,cd,cm
    -4.0,-0.21,0.0081,-0.071
    0.0,0.25,0.0072,-0.082

* Layout: CSV (comma), TSV (tab) or whitespace-separated. Always detected from the first
  non-comment line (a tab means TSV, else a comma means CSV, else whitespace), whatever text
  content type or file name is declared; only ``layout=`` ("csv", "tsv", "whitespace")
  states it.
* Blank lines are skipped. A line whose first non-blank character is ``#`` is a comment.
  A comment of the form ``# key: value`` where ``key`` is one word (letters, digits,
  underscore) is metadata and the key must be one of :data:`METADATA_KEYS`:

  ``airfoil``, ``family`` (names); ``thickness`` (t/c as a fraction ``0.21``, or a percentage
  marked with ``%``: ``21 %``; a bare number above 1 is refused as ambiguous); ``reynolds``;
  ``mach``; ``surface`` (clean, tripped, rough; default clean); ``source_kind`` (wind-tunnel,
  cfd, panel-method, synthetic, other); ``reference``; ``facility``; ``measured_on`` (ISO date
  YYYY-MM-DD); ``contributor``; ``notes``; ``angle_unit`` (deg or rad). A key given twice with
  different values is refused. Other comments are free text.
* Header: the first non-comment line is a header when any of its cells is not a number.
  Names are case-insensitive; spaces and hyphens count as ``_`` (see :data:`COLUMN_NAMES`):

  - angle: ``alpha``, ``aoa``, ``angle``, ``angle_of_attack``, ``incidence``, each with a
    unit suffix ``_deg``/``_rad`` or a unit written ``(deg)``, ``[deg]``, `` deg`` (radians
    are converted to degrees). Without a unit in the name the unit is ``angle_unit``
    (``# angle_unit: deg|rad`` or from the caller), else degrees, recorded as a warning
    flag (angles that are really radians are caught by the lift-slope check);
  - lift: ``cl``, ``c_l``, ``lift``, ``lift_coefficient``, ``cl_lift``;
  - drag: ``cd``, ``c_d``, ``drag``, ``drag_coefficient``, ``cd_drag``;
  - moment (optional): ``cm``, ``c_m``, ``moment``, ``moment_coefficient``,
    ``pitching_moment``, ``cm_c4``, ``cm_quarter_chord``.

  A coefficient name may end in ``(-)`` or ``[-]``. Unknown or repeated columns are refused.
* Without a header the columns are alpha, cl, cd[, cm] in that order, and only when the angle
  unit is stated (``# angle_unit: deg``); otherwise the file is refused.
* Cells are plain decimal numbers (``-1.5``, ``2e-3``); NaN, infinity, a decimal comma and
  ragged rows are refused.
* Angles are degrees at every interface, cm is about the quarter chord, nose-up positive.

JSON documents
--------------
One object, or a list of objects, of the form::

    {"airfoil": "SKUA-210", "family": "skua",
     "conditions": {"reynolds": 6e6, "mach": 0.0, "surface": "clean", "thickness": 0.21},
     "provenance": {"source_kind": "cfd", "reference": "...", "facility": "...",
                    "measured_on": "2026-03-01", "contributor": "...", "notes": "..."},
     "table": {"alpha_deg": [...], "cl": [...], "cd": [...], "cm": [...]}}

``table`` takes ``alpha_rad`` instead of ``alpha_deg`` (converted). Unknown keys are refused;
NaN and Infinity literals are refused. Error locations name the line where the object starts
and the key path (``table.cl[3]``, ``conditions.thickness``).

Checks and errors
-----------------
Every failure raises :class:`FormatError` with ``line`` (1-based) and ``field``. The table
itself is validated by :class:`polarsvc.aero.Polar` (finite values, cd > 0, angles within
-180..180, duplicate angles with different values, angles that look like radians); its row
indices are translated into file line numbers.

Exports
-------
:func:`polar_to_csv` writes the text layout above (CSV, header ``alpha_deg,cl,cd[,cm]``,
floats with ``repr`` so a re-import is bit-exact); :func:`polar_to_json` the JSON document;
:func:`table_to_csv` a multi-station table in long layout, one row per station and angle::

    # <key>: <value>          (caller's header comments)
    station,alpha_deg,cl,cd,cm
    0,-180.0,0.0,0.5,0.0
    ...

The station column holds 0, 1, 2, ... or the values passed (e.g. radius, with
``station_column="radius_m"``). Rows are ordered by station, then angle.
"""

from __future__ import annotations

from collections.abc import Mapping

from polarsvc.formats.cells import encode_rows
from polarsvc.formats.errors import FormatError, shown
from polarsvc.formats.jsondoc import parse_json_document
from polarsvc.formats.metadata import (
    METADATA_KEYS,
    PROVENANCE_KEYS,
    SOURCE_KINDS,
    ParsedPolar,
    normalise_defaults,
)
from polarsvc.formats.text import COLUMN_NAMES, TEXT_LAYOUTS, parse_text_table
from polarsvc.formats.writers import (
    csv_comment_lines,
    polar_to_csv,
    polar_to_json,
    table_csv_rows,
    table_to_csv,
)

__all__ = [
    "COLUMN_NAMES",
    "LAYOUTS",
    "METADATA_KEYS",
    "PROVENANCE_KEYS",
    "SOURCE_KINDS",
    "FormatError",
    "ParsedPolar",
    "csv_comment_lines",
    "encode_rows",
    "parse_polar_file",
    "polar_to_csv",
    "polar_to_json",
    "table_csv_rows",
    "table_to_csv",
]

LAYOUTS: tuple[str, ...] = (*TEXT_LAYOUTS, "json")
"""Valid values of ``layout``."""

DEFAULT_MAX_BYTES = 5_000_000

_CONTENT_TYPES: dict[str, str | None] = {
    "text/csv": "csv",
    "application/csv": "csv",
    "text/tab-separated-values": "tsv",
    "application/json": "json",
    "text/json": "json",
    "text/plain": None,
    "application/octet-stream": None,
    "application/vnd.ms-excel": "csv",
}
"""Accepted content types and the layout each states (None: detect)."""


def _layout_from(content_type: str | None, filename: str | None) -> str | None:
    """``"json"`` when the content type or file name says JSON, else None: the delimiter of
    a text table is always detected from its first line, whatever text type is declared
    (a whitespace table sent as ``text/csv`` is read as whitespace)."""
    if content_type:
        media = content_type.split(";", 1)[0].strip().lower()
        if media not in _CONTENT_TYPES:
            raise FormatError(
                f"content type {shown(media)} is not a table; send one of "
                f"{', '.join(_CONTENT_TYPES)}",
                field="content_type",
            )
        if _CONTENT_TYPES[media] == "json":
            return "json"
    if filename and filename.lower().endswith(".json"):
        return "json"
    return None


def _decode(data: bytes, max_bytes: int) -> str:
    if len(data) > max_bytes:
        raise FormatError(f"the file has {len(data)} bytes, more than the limit of {max_bytes}")
    if not data.strip():
        raise FormatError("the file is empty")
    nul = data.find(b"\x00")
    if nul >= 0:
        raise FormatError(
            "the file holds NUL bytes: it is binary, not a text table",
            line=data.count(b"\n", 0, nul) + 1,
        )
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise FormatError(
            f"the file is not UTF-8 text (byte {data[exc.start]:#04x} at offset {exc.start})",
            line=data.count(b"\n", 0, exc.start) + 1,
        ) from None


def parse_polar_file(
    data: bytes,
    *,
    filename: str | None = None,
    content_type: str | None = None,
    defaults: Mapping[str, object] | None = None,
    max_bytes: int = DEFAULT_MAX_BYTES,
    layout: str | None = None,
    angle_unit: str | None = None,
) -> list[ParsedPolar]:
    """Read the polars of an uploaded file.

    Parameters
    ----------
    data : bytes
        The file.
    filename : str, optional
        Its name; ``.csv``, ``.tsv`` and ``.json`` state the layout.
    content_type : str, optional
        Its media type; types that are not tables (e.g. ``image/png``) are refused.
    defaults : mapping, optional
        Metadata (keys :data:`METADATA_KEYS`) used where the file gives none, e.g. from
        query parameters.
    max_bytes : int
        Largest accepted size [bytes].
    layout : {'csv', 'tsv', 'whitespace', 'json'}, optional
        States the layout; wins over content type and file name.
    angle_unit : {'deg', 'rad'}, optional
        Unit of an angle column named without unit, or of a table without header.

    Returns
    -------
    list of ParsedPolar
        One for a text table, one per object for JSON.

    Raises
    ------
    FormatError
        On any problem, naming the line and field.
    """
    if layout is not None and layout not in LAYOUTS:
        raise FormatError(f"{shown(layout)} is not one of {', '.join(LAYOUTS)}", field="layout")
    stated = layout or _layout_from(content_type, filename)
    text = _decode(data, max_bytes)
    given = normalise_defaults(
        {**(defaults or {}), **({"angle_unit": angle_unit} if angle_unit else {})}
    )
    if stated == "json" or (stated is None and text.lstrip()[:1] in ("{", "[")):
        return parse_json_document(text, defaults=given)
    return parse_text_table(text, layout=stated, defaults=given)
