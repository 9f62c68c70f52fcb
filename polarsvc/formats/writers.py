"""Writers of the table formats; see :mod:`polarsvc.formats` for the layouts.

Every float is written with :func:`repr`, the shortest text that reads back to the same
float64, so that reading an export reproduces the table bit for bit.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from numpy.typing import ArrayLike

from polarsvc.aero import Polar
from polarsvc.formats.cells import encode_station_blocks
from polarsvc.formats.errors import FormatError
from polarsvc.formats.metadata import PROVENANCE_KEYS, normalise

EXTRA_KEYS: tuple[str, ...] = ("family", *PROVENANCE_KEYS)
"""Keys a caller may add through ``provenance`` / ``extra_metadata``; the others (airfoil and
the conditions) come from the arguments and the polar itself."""

_KEY = re.compile(r"[A-Za-z][A-Za-z0-9_]*")


def _number(value: float) -> str:
    return repr(float(value))


def _comment(key: str, value: object) -> str:
    text = str(value)
    if "\n" in text or "\r" in text:
        raise FormatError("a metadata value cannot span lines", field=key)
    return f"# {key}: {text}"


def _stored_name(key: str, value: object) -> str:
    """A stored name as written: kept literally, also one stored before the name grammar
    (:mod:`polarsvc.names`) existed, so that every database can be exported; reading the
    file back applies the grammar."""
    if not isinstance(value, str) or not value.strip():
        raise FormatError("expected a non-empty name", field=key)
    return value


def _metadata(
    polar: Polar,
    airfoil: str,
    provenance: Mapping[str, object] | None,
    extra_metadata: Mapping[str, object] | None,
) -> dict[str, Any]:
    """Normalised metadata in the written order; values that are None are left out."""
    given = {**(provenance or {}), **(extra_metadata or {})}
    for key in given:
        if key not in EXTRA_KEYS:
            raise FormatError(
                f"cannot be set here; valid keys: {', '.join(EXTRA_KEYS)}", field=key
            )
    entries: dict[str, Any] = {"airfoil": _stored_name("airfoil", airfoil)}
    if given.get("family") is not None:
        entries["family"] = _stored_name("family", given["family"])
    entries.update(polar.conditions())
    for key in PROVENANCE_KEYS:
        entries[key] = normalise(key, given.get(key), line=None)
    return {key: value for key, value in entries.items() if value is not None}


def _columns(polar: Polar) -> dict[str, np.ndarray]:
    columns = {"alpha_deg": polar.alpha_deg, "cl": polar.cl, "cd": polar.cd}
    if polar.cm is not None:
        columns["cm"] = polar.cm
    return columns


def polar_to_csv(
    polar: Polar,
    *,
    airfoil: str,
    provenance: Mapping[str, object] | None = None,
    extra_metadata: Mapping[str, object] | None = None,
) -> str:
    """The polar as a CSV table with ``# key: value`` metadata lines.

    Parameters
    ----------
    polar : Polar
        The table and its conditions (thickness, reynolds, mach, surface).
    airfoil : str
        Airfoil name.
    provenance, extra_metadata : mapping, optional
        Values for ``family`` and the provenance keys; ``extra_metadata`` wins on a clash.

    Returns
    -------
    str
        Metadata lines, the header ``alpha_deg,cl,cd[,cm]`` and one line per row.

    Raises
    ------
    FormatError
        On an unknown or invalid metadata key or a value that spans lines.
    """
    lines = [
        _comment(key, _number(value) if isinstance(value, float) else value)
        for key, value in _metadata(polar, airfoil, provenance, extra_metadata).items()
    ]
    columns = _columns(polar)
    lines.append(",".join(columns))
    rows = zip(*columns.values(), strict=True)
    lines.extend(",".join(_number(value) for value in row) for row in rows)
    return "\n".join(lines) + "\n"


def polar_to_json(
    polar: Polar,
    *,
    airfoil: str,
    provenance: Mapping[str, object] | None = None,
    extra_metadata: Mapping[str, object] | None = None,
) -> dict[str, Any]:
    """The polar as a JSON-ready polar document (same arguments as :func:`polar_to_csv`).

    Floats are Python floats; :func:`json.dumps` writes them with :func:`repr`.
    """
    entries = _metadata(polar, airfoil, provenance, extra_metadata)
    document: dict[str, Any] = {"airfoil": entries["airfoil"]}
    if "family" in entries:
        document["family"] = entries["family"]
    document["conditions"] = polar.conditions()
    document["provenance"] = {key: entries.get(key) for key in PROVENANCE_KEYS}
    document["table"] = {key: column.tolist() for key, column in _columns(polar).items()}
    return document


def _station_blocks(
    alpha_deg: ArrayLike,
    columns: Mapping[str, ArrayLike],
    stations: Sequence[float] | ArrayLike | None,
    station_column: str,
) -> tuple[np.ndarray, dict[str, np.ndarray], list[str]]:
    """Checked angle grid, 2-D coefficient blocks and station labels of a long table."""
    alpha = np.asarray(alpha_deg, dtype=np.float64)
    if alpha.ndim != 1:
        raise FormatError(f"expected shape (n_alpha,), got {alpha.shape}", field="alpha_deg")
    if not columns:
        raise FormatError("at least one coefficient column is needed", field="columns")
    blocks: dict[str, np.ndarray] = {}
    for name, values in columns.items():
        if not _KEY.fullmatch(name) or name in (station_column, "alpha_deg"):
            raise FormatError("not a valid column name", field=name)
        block = np.atleast_2d(np.asarray(values, dtype=np.float64))
        if block.ndim != 2 or block.shape[1] != alpha.size:
            raise FormatError(
                f"expected shape (n_stations, {alpha.size}), got {block.shape}", field=name
            )
        blocks[name] = block
    n_stations = {block.shape[0] for block in blocks.values()}
    if len(n_stations) != 1:
        raise FormatError(f"columns disagree on the station count {sorted(n_stations)}")
    count = n_stations.pop()
    values = np.arange(count) if stations is None else np.asarray(stations)
    if values.shape != (count,):
        raise FormatError(f"expected {count} station values, got {values.shape}", field="stations")
    if not _KEY.fullmatch(station_column):
        raise FormatError("not a valid column name", field="station_column")
    labels = [
        _number(label) if isinstance(label, float) else str(label) for label in values.tolist()
    ]
    return alpha, blocks, labels


def csv_comment_lines(comments: Mapping[str, object] | None) -> str:
    """``# key: value`` lines (each ending with a newline); keys are single words.

    Raises
    ------
    FormatError
        On a key that is not one word or a value that spans lines.
    """
    lines = []
    for key, value in (comments or {}).items():
        if not _KEY.fullmatch(key):
            raise FormatError("a comment key is a single word", field=key)
        lines.append(_comment(key, value) + "\n")
    return "".join(lines)


def table_csv_rows(
    alpha_deg: ArrayLike,
    columns: Mapping[str, ArrayLike],
    *,
    stations: Sequence[float] | ArrayLike | None = None,
    station_column: str = "station",
) -> bytes:
    """The column header line and the data lines of :func:`table_to_csv` (no comments), as
    UTF-8 bytes: the part that depends on the numbers only, so it can be cached by content."""
    alpha, blocks, labels = _station_blocks(alpha_deg, columns, stations, station_column)
    header = ",".join([station_column, "alpha_deg", *blocks]) + "\n"
    return header.encode("utf-8") + encode_station_blocks(labels, alpha, list(blocks.values()))


def table_to_csv(
    alpha_deg: ArrayLike,
    columns: Mapping[str, ArrayLike],
    *,
    header_comments: Mapping[str, object] | None = None,
    stations: Sequence[float] | ArrayLike | None = None,
    station_column: str = "station",
) -> str:
    """A multi-station table in long layout: one line per (station, angle).

    Parameters
    ----------
    alpha_deg : array_like, shape (n_alpha,)
        Common angle-of-attack grid [deg].
    columns : mapping of str to array_like, shape (n_stations, n_alpha) or (n_alpha,)
        Coefficient columns in the order to write (e.g. ``cl``, ``cd``, ``cm``).
    header_comments : mapping, optional
        Written first as ``# key: value`` lines; keys are single words.
    stations : array_like, shape (n_stations,), optional
        Values of the station column (e.g. radius in m); default 0, 1, 2, ...
    station_column : str
        Name of the station column, e.g. ``station`` or ``radius_m``.

    Returns
    -------
    str
        Comment lines, the header ``station,alpha_deg,<columns>``, then rows ordered by
        station, then angle. Numbers are encoded whole arrays at a time
        (:mod:`polarsvc.formats.cells`) and read back bit for bit.
    """
    rows = table_csv_rows(alpha_deg, columns, stations=stations, station_column=station_column)
    return csv_comment_lines(header_comments) + rows.decode("utf-8")
