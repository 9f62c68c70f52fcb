"""Station package: a blade set as a zip archive a solver's input deck can be generated from
with a few lines of script (zipfile, json and a CSV reader suffice).

Layout (schema ``polarsvc-station-package/1``)::

    manifest.json              everything about the set (below)
    README.txt                 this layout and the caution, in plain words
    stations/station_00.csv    one table per station, in station order
    stations/station_01.csv
    ...

Each station file opens with ``# key: value`` lines (station index, radius_m, chord_m,
twist_deg, thickness, reynolds, blade, set content hash, caution), then the header
``alpha_deg,cl,cd[,cm][,...]`` and one row per angle of the common grid. Every float is
written with :func:`repr`, the shortest text that reads back to the same float64.

``manifest.json`` holds: ``schema``; ``caution``; ``blade`` (name, content hash, rotor and
hub radius, blade count); ``family``; ``surface``; ``operating_point`` (wind speed, rotor
speed, air density and viscosity, tip speed ratio, how station Reynolds numbers follow);
``settings`` (extension, rotation, interpolation, grid); ``content_hash`` and
``recipe_hash`` of the set, its ``recipe`` and ``inputs`` (stored revisions with their review
states), ``draws_on_deprecated``; ``conventions``; ``columns`` (the header of every station
file) and ``angles`` (rows per file); ``stations``: per station ``index``, ``radius_m``,
``chord_m``, ``twist_deg``, ``thickness``, ``reynolds``, ``file``, ``sha256`` (of the file's
bytes), ``dynamic_stall`` (the station's dynamic-stall inputs when the set carries them,
else null) and ``report`` (everything the steps reported for the station).

The archive is deterministic: the same set gives the same bytes.
"""

from __future__ import annotations

import hashlib
import io
import json
import zipfile
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from polarsvc.aero import Polar
from polarsvc.describe import section_conditions

PACKAGE_SCHEMA = "polarsvc-station-package/1"
MANIFEST_NAME = "manifest.json"
README_NAME = "README.txt"
STATION_DIR = "stations"
MEDIA_TYPE = "application/zip"
DYNAMIC_STALL_KEY = "dynamic_stall"
"""Key of a station report holding the station's dynamic-stall inputs, copied to the
manifest when present."""

_FIXED_TIME = (1980, 1, 1, 0, 0, 0)


class PackageError(ValueError):
    """A station package is malformed or a file does not match its recorded hash; the
    message names the file."""


def _station_file_name(index: int, count: int) -> str:
    width = max(2, len(str(count - 1)))
    return f"{STATION_DIR}/station_{index:0{width}d}.csv"


def _station_text(
    alpha_deg: np.ndarray,
    columns: Mapping[str, np.ndarray],
    index: int,
    station: Mapping[str, Any],
    header: Mapping[str, Any],
) -> str:
    lines = [f"# station: {index}"]
    for key in ("radius_m", "chord_m", "twist_deg", "thickness", "reynolds"):
        lines.append(f"# {key}: {station.get(key)!r}")
    lines.extend(f"# {key}: {value}" for key, value in header.items())
    lines.append(",".join(["alpha_deg", *columns]))
    block = np.column_stack([alpha_deg, *(values[index] for values in columns.values())])
    lines.extend(",".join(repr(v) for v in row) for row in block.tolist())
    return "\n".join(lines) + "\n"


def _readme(manifest: Mapping[str, Any]) -> str:
    blade = manifest.get("blade") or {}
    return (
        f"Station package of blade {blade.get('name')} (set {manifest['content_hash']}).\n\n"
        f"{__doc__.split('Layout', 1)[1].split('The archive is', 1)[0].strip()}\n\n"
        f"CAUTION. {manifest['caution']}\n"
    )


def _add(archive: zipfile.ZipFile, name: str, data: bytes) -> None:
    info = zipfile.ZipInfo(name, date_time=_FIXED_TIME)
    info.compress_type = zipfile.ZIP_DEFLATED
    info.external_attr = 0o644 << 16
    archive.writestr(info, data)


def build_station_package(
    alpha_deg: np.ndarray, columns: Mapping[str, np.ndarray], meta: Mapping[str, Any]
) -> bytes:
    """The zip archive of a blade set (see the module docstring).

    Parameters
    ----------
    alpha_deg : ndarray, shape (n_alpha,)
        Common angle grid [deg].
    columns : mapping of str to ndarray, shape (n_stations, n_alpha)
        Coefficient arrays (cl, cd, cm and whatever else the set carries), written in order.
    meta : mapping
        The metadata of the blade-set response (``describes``, ``reports``, hashes, recipe,
        inputs, caution).

    Raises
    ------
    PackageError
        If the table is not a blade set.
    """
    described = meta.get("describes") or {}
    stations = described.get("stations") or []
    reports = (meta.get("reports") or {}).get("stations") or []
    arrays = {name: np.asarray(values, dtype=np.float64) for name, values in columns.items()}
    if not stations or any(a.ndim != 2 or a.shape[0] != len(stations) for a in arrays.values()):
        raise PackageError("a station package is made of a blade set (stations x angles)")
    alpha = np.asarray(alpha_deg, dtype=np.float64)
    blade = described.get("blade") or {}
    header = {
        "blade": blade.get("name"),
        "set_content_hash": meta["content_hash"],
        "caution": meta["caution"],
    }
    files: dict[str, bytes] = {}
    entries = []
    for index, station in enumerate(stations):
        name = _station_file_name(index, len(stations))
        data = _station_text(alpha, arrays, index, station, header).encode("utf-8")
        files[name] = data
        report = reports[index] if index < len(reports) else {}
        entries.append(
            {
                **station,
                "file": name,
                "sha256": hashlib.sha256(data).hexdigest(),
                "dynamic_stall": report.get(DYNAMIC_STALL_KEY),
                "report": report,
            }
        )
    manifest = {
        "schema": PACKAGE_SCHEMA,
        "caution": meta["caution"],
        "blade": blade,
        "family": described.get("family"),
        "surface": described.get("surface"),
        "operating_point": described.get("operating_point"),
        "settings": described.get("settings"),
        "content_hash": meta["content_hash"],
        "recipe_hash": meta.get("recipe_hash"),
        "recipe": meta.get("recipe"),
        "inputs": meta.get("inputs"),
        "draws_on_deprecated": meta.get("draws_on_deprecated"),
        "conventions": meta.get("conventions"),
        "columns": ["alpha_deg", *arrays],
        "angles": int(alpha.size),
        "stations": entries,
    }
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        _add(archive, MANIFEST_NAME,
             json.dumps(manifest, indent=1, allow_nan=False).encode("utf-8"))
        _add(archive, README_NAME, _readme(manifest).encode("utf-8"))
        for name, data in files.items():
            _add(archive, name, data)
    return buffer.getvalue()


@dataclass(frozen=True)
class StationPackage:
    """A station package read back: the manifest, the common angles [deg] and each column as
    stations x angles."""

    manifest: dict[str, Any]
    alpha_deg: np.ndarray
    columns: dict[str, np.ndarray]

    @property
    def content_hash(self) -> str:
        return str(self.manifest["content_hash"])

    def to_polar(self, station: int) -> Polar:
        """One station's table as a :class:`polarsvc.aero.Polar` with its Reynolds number,
        thickness and surface."""
        cm = self.columns.get("cm")
        return Polar(
            self.alpha_deg, self.columns["cl"][station], self.columns["cd"][station],
            None if cm is None else cm[station], assume_degrees=True,
            **section_conditions({"describes": self.manifest}, station),
        )


def _read_table(name: str, text: str, columns: list[str]) -> np.ndarray:
    rows = [line for line in text.splitlines() if line and not line.startswith("#")]
    if not rows or rows[0].split(",") != columns:
        raise PackageError(f"{name}: header differs from the manifest's columns {columns}")
    try:
        return np.array([[float(cell) for cell in row.split(",")] for row in rows[1:]])
    except ValueError as exc:
        raise PackageError(f"{name}: {exc}") from None


def read_station_package(source: bytes | str | Path) -> StationPackage:
    """Read a station package (bytes or a file path) and check every file against the hash
    the manifest records.

    Raises
    ------
    PackageError
        Naming the file that is missing, malformed or altered.
    """
    data = source if isinstance(source, bytes) else Path(source).read_bytes()
    try:
        archive = zipfile.ZipFile(io.BytesIO(data))
    except zipfile.BadZipFile as exc:
        raise PackageError(f"not a zip archive: {exc}") from None
    with archive:
        try:
            manifest = json.loads(archive.read(MANIFEST_NAME))
        except KeyError:
            raise PackageError(f"{MANIFEST_NAME} is missing") from None
        if manifest.get("schema") != PACKAGE_SCHEMA:
            raise PackageError(f"{MANIFEST_NAME}: unknown schema {manifest.get('schema')!r}")
        columns = list(manifest["columns"])
        tables = []
        for entry in manifest["stations"]:
            try:
                raw = archive.read(entry["file"])
            except KeyError:
                raise PackageError(f"{entry['file']} is missing") from None
            if hashlib.sha256(raw).hexdigest() != entry["sha256"]:
                raise PackageError(f"{entry['file']} does not match its sha256 in the manifest")
            tables.append(_read_table(entry["file"], raw.decode("utf-8"), columns))
    alpha = tables[0][:, 0]
    stacked = np.stack(tables)
    return StationPackage(
        manifest=manifest,
        alpha_deg=alpha,
        columns={name: stacked[:, :, i + 1] for i, name in enumerate(columns[1:])},
    )
