"""Shared inputs of the benchmarks: the demo family read from seed_polars/ (synthetic data,
see seed_polars/README.md) and the demo blade resampled to any number of stations along the span."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from polarsvc import aero
from polarsvc.formats import parse_polar_file

SEED = Path(__file__).resolve().parents[1] / "seed_polars"
STATIONS = 50


def demo_members() -> list[aero.Polar]:
    """Every polar of the demo family (7 airfoils x 3 Reynolds numbers x 2 surfaces)."""
    members = []
    for path in sorted((SEED / "skua").glob("*.csv")):
        members.extend(p.polar for p in parse_polar_file(path.read_bytes(), filename=path.name))
    return members


def fifty_station_blade() -> dict:
    """The demo blade definition resampled to 50 stations (linear in radius)."""
    return station_blade(STATIONS, name="skerry-48-fifty")


def station_blade(count: int, *, name: str | None = None) -> dict:
    """The demo blade definition resampled to ``count`` stations (linear in radius)."""
    blade = json.loads((SEED / "skerry-48.json").read_text())
    stations = blade["stations"]
    radius = np.array([s["radius_m"] for s in stations])
    new_radius = np.linspace(radius[0], radius[-1], count)
    columns = {key: np.interp(new_radius, radius, [s[key] for s in stations])
               for key in ("chord_m", "twist_deg", "thickness")}
    blade["name"] = name or f"skerry-48-x{count}"
    blade["stations"] = [
        {"radius_m": float(r), **{k: float(v[i]) for k, v in columns.items()}}
        for i, r in enumerate(new_radius)
    ]
    return blade
