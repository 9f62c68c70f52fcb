"""What a derived table holds, stated in its own output: the section (family or airfoil,
thickness, Reynolds number, surface) and settings of a single table; for a blade set the
operating point that sets the station Reynolds numbers and, per station, radius, chord,
twist, t/c and Reynolds number.

:func:`table_description` builds the ``describes`` block of every derived response (JSON and
binary metadata); :func:`csv_comments` flattens the metadata into the ``# key: value`` lines
that open a CSV answer. Both read only the recipe and the step reports.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

REYNOLDS_DEFINITION = (
    "chord Reynolds number Re = rho W c / mu with W = sqrt(U^2 + (Omega r)^2), "
    "Omega = 2 pi rpm / 60, no induction"
)
"""How the station Reynolds numbers follow from the operating point
(:func:`polarsvc.aero.station_reynolds`)."""

STATION_FIELDS = ("index", "radius_m", "chord_m", "twist_deg", "thickness", "reynolds")
"""Per-station values stated by a blade set, in this order."""

SINGLE_KINDS = ("resampled", "extended", "augmented")


def _settings(params: Mapping[str, Any], leave_out: Sequence[str]) -> dict[str, Any]:
    return {key: value for key, value in params.items() if key not in leave_out}


def station_rows(reports: Mapping[str, Any]) -> list[dict[str, Any]]:
    """Per station of a blade set: index, radius [m], chord [m], twist [deg], t/c [-] and
    chord Reynolds number [-] (the station's own, before any clamping to the data)."""
    rows = []
    for index, report in enumerate(reports.get("stations") or ()):
        rows.append(
            {
                "index": index,
                "radius_m": report.get("radius_m"),
                "chord_m": report.get("chord_m"),
                "twist_deg": report.get("twist_deg"),
                "thickness": report.get("thickness_requested"),
                "reynolds": report.get("reynolds_requested"),
            }
        )
    return rows


def table_description(
    kind: str,
    recipe: Mapping[str, Any],
    reports: Mapping[str, Any],
    *,
    family: str | None = None,
    airfoil: str | None = None,
    blade: Mapping[str, Any] | None = None,
) -> dict[str, Any]:
    """The ``describes`` block of a derived table.

    Parameters
    ----------
    kind : str
        The recipe kind.
    recipe, reports : mapping
        The table's recipe and what its steps reported.
    family : str, optional
        Family of a blend or blade set.
    airfoil : str, optional
        Airfoil of a single-revision table.
    blade : mapping, optional
        Blade identity and geometry of a blade set (name, content hash, radii).
    """
    params = recipe.get("params") or {}
    if kind == "blended":
        return {
            "family": family,
            "thickness": params.get("thickness"),
            "reynolds": params.get("reynolds"),
            "surface": params.get("surface"),
            "settings": _settings(params, ("thickness", "reynolds", "surface")),
        }
    if kind == "blade-set":
        operating = dict(params.get("operating_point") or {})
        operating.update(params.get("air") or {})
        if "tip_speed_ratio" in reports:
            operating["tip_speed_ratio"] = reports["tip_speed_ratio"]
        operating["reynolds_definition"] = REYNOLDS_DEFINITION
        return {
            "blade": dict(blade) if blade else None,
            "family": family,
            "surface": params.get("surface"),
            "operating_point": operating,
            "settings": _settings(params, ("surface", "operating_point", "air")),
            "stations": station_rows(reports),
        }
    if kind == "rotor":
        rotor = params.get("rotor") or {}
        return {
            "blade": dict(blade) if blade else None,
            "family": family,
            "blade_set_recipe_hash": (recipe.get("inputs") or {}).get("blade_set"),
            "turbine": rotor.get("turbine"),
            "model": {key: rotor.get(key) for key in
                      ("tip_loss", "hub_loss", "tangential_induction", "high_thrust")},
            "wind_distributions": reports.get("distributions"),
            "settings": _settings(params, ()),
        }
    conditions = dict(reports.get("conditions") or {})
    return {
        "airfoil": airfoil,
        "thickness": conditions.get("thickness"),
        "reynolds": conditions.get("reynolds"),
        "mach": conditions.get("mach"),
        "surface": conditions.get("surface"),
        "settings": _settings(params, ()),
    }


def _cell(value: Any) -> str:
    if isinstance(value, bool):
        return str(value).lower()
    if value is None:
        return "none"
    if isinstance(value, float):
        return repr(value)
    return str(value)


def _flatten(prefix: str, value: Any, into: dict[str, str]) -> None:
    if isinstance(value, Mapping):
        for key, inner in value.items():
            _flatten(f"{prefix}_{key}" if prefix else str(key), inner, into)
    elif isinstance(value, list | tuple):
        into[prefix] = ",".join(_cell(v) for v in value)
    else:
        into[prefix] = _cell(value)


def csv_comments(meta: Mapping[str, Any]) -> dict[str, str]:
    """The ``# key: value`` lines opening a CSV answer, in order: the scalar metadata
    (kind, hashes, caution, ...), then the ``describes`` block flattened (nested keys joined
    by ``_``, e.g. ``settings_extension_method``); a blade set's stations as
    ``station_columns`` and one ``station_<i>`` line of comma-separated values each."""
    comments = {key: _cell(value) for key, value in meta.items()
                if isinstance(value, str | int | float)}
    described = dict(meta.get("describes") or {})
    stations = described.pop("stations", None)
    _flatten("", described, comments)
    if stations:
        comments["station_columns"] = ",".join(STATION_FIELDS)
        for row in stations:
            comments[f"station_{row['index']}"] = ",".join(
                _cell(row[name]) for name in STATION_FIELDS
            )
    return comments


def section_conditions(meta: Mapping[str, Any], station: int | None = None) -> dict[str, Any]:
    """Reynolds number, thickness, Mach number and surface of a table (or of one station of
    a blade set) as stated by its ``describes`` block: keywords for
    :class:`polarsvc.aero.Polar`; a value not stated is left out."""
    described = meta.get("describes") or {}
    stations = described.get("stations")
    if stations:
        if station is None:
            raise ValueError("a blade set holds several stations: pass station=<index>")
        source = stations[station]
    else:
        source = described
    conditions: dict[str, Any] = {
        key: float(source[key])
        for key in ("reynolds", "thickness", "mach")
        if source.get(key) is not None
    }
    if described.get("surface") is not None:
        conditions["surface"] = described["surface"]
    return conditions
