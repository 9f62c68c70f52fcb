"""The demo blade skerry-48 with its section tables built from the seed family (synthetic,
see seed_polars/README.md), for rotor tests."""

from __future__ import annotations

import functools
import json
from pathlib import Path

import numpy as np

from polarsvc import recipes
from polarsvc.formats import parse_polar_file
from polarsvc.rotor import RotorGeometry

SEED = Path(__file__).resolve().parents[2] / "seed_polars"


@functools.cache
def demo_blade() -> dict:
    return json.loads((SEED / "skerry-48.json").read_text())


@functools.cache
def demo_tables() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """alpha_deg, cl, cd of the default blade set of the demo blade (Snel augmentation)."""
    members = []
    for path in sorted((SEED / "skua").glob("*.csv")):
        members.extend(p.polar for p in parse_polar_file(path.read_bytes(), filename=path.name))
    blade = demo_blade()
    result = recipes.build_blade_set(members, blade, recipes.blade_set_params(blade))
    return result.alpha_deg, result.columns["cl"], result.columns["cd"]


def demo_geometry() -> RotorGeometry:
    blade = demo_blade()
    stations = blade["stations"]
    return RotorGeometry(
        radius_m=[s["radius_m"] for s in stations],
        chord_m=[s["chord_m"] for s in stations],
        twist_deg=[s["twist_deg"] for s in stations],
        blade_count=blade["blade_count"],
        rotor_radius_m=blade["rotor_radius_m"],
        hub_radius_m=blade["hub_radius_m"],
    )


def demo_turbine():
    """The fictional 3 MW-class machine of the demo blade (seed_polars/skerry-48.json)."""
    from polarsvc.rotor import TurbineData

    return TurbineData.from_mapping(demo_blade()["turbine"])
