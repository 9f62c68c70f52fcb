"""The demo data in seed_polars/: it parses, it is what generate.py makes, and it has the
properties its model was built to show.

The ordering checks below are properties of the synthetic demo model (documented in
seed_polars/generate.py), not facts about real airfoils.
"""

from __future__ import annotations

import importlib.util
import json
from pathlib import Path

import numpy as np
import pytest

from polarsvc.formats import parse_polar_file

SEED_DIR = Path(__file__).resolve().parents[2] / "seed_polars"


def _load_generator():
    spec = importlib.util.spec_from_file_location("seed_generate", SEED_DIR / "generate.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


generate = _load_generator()
SEED_FILES = sorted((SEED_DIR / "skua").glob("*.csv"))


def _parse(path: Path):
    (parsed,) = parse_polar_file(path.read_bytes(), filename=path.name)
    return parsed


def test_every_member_condition_has_a_file():
    expected = {
        f"{generate.file_stem(name, reynolds, surface)}.csv"
        for name in generate.AIRFOILS
        for reynolds in generate.REYNOLDS
        for surface in generate.SURFACES
    }
    assert {path.name for path in SEED_FILES} == expected
    assert len(expected) == 7 * 3 * 2


@pytest.mark.parametrize("path", SEED_FILES, ids=lambda path: path.stem)
def test_seed_file_parses_with_full_metadata(path):
    parsed = _parse(path)
    name = path.stem.split("_")[0]
    assert parsed.airfoil == name
    assert parsed.family == "skua"
    assert parsed.polar.thickness == generate.AIRFOILS[name]
    assert parsed.polar.has_cm
    assert parsed.provenance["source_kind"] == "synthetic"
    assert parsed.provenance["contributor"] == "Skerry Rotor Aero (fictional)"
    assert "not for design use" in parsed.provenance["notes"]
    assert np.all(parsed.polar.cd > 0.0)
    if name == "SKUA-CYL":
        assert parsed.polar.covers_full_range
        assert parsed.polar.cd[0] == parsed.polar.cd[-1]  # periodic: -180 and +180 agree
        assert not np.any(parsed.polar.cl) and not np.any(parsed.polar.cm)
    else:
        assert parsed.polar.alpha_deg[0] == -20.0 and parsed.polar.alpha_deg[-1] == 25.0


def test_committed_files_are_what_generate_makes(tmp_path):
    written = generate.generate(tmp_path)
    committed = sorted(
        path.relative_to(SEED_DIR) for path in SEED_DIR.rglob("*")
        if path.suffix in (".csv", ".json")
    )
    assert sorted(path.relative_to(tmp_path) for path in written) == committed
    for relative in committed:
        assert (tmp_path / relative).read_bytes() == (SEED_DIR / relative).read_bytes(), relative


def _cl_max(name: str, reynolds: float, surface: str) -> float:
    path = SEED_DIR / "skua" / f"{generate.file_stem(name, reynolds, surface)}.csv"
    return float(_parse(path).polar.cl.max())


AIRFOIL_NAMES = [name for name in generate.AIRFOILS if name != "SKUA-CYL"]


@pytest.mark.parametrize("reynolds", generate.REYNOLDS)
@pytest.mark.parametrize("surface", generate.SURFACES)
def test_thicker_members_have_lower_cl_max(reynolds, surface):
    # property of the demo model (seed_polars/generate.py), not a published value
    cl_max = [_cl_max(name, reynolds, surface) for name in AIRFOIL_NAMES]
    assert cl_max == sorted(cl_max, reverse=True) and len(set(cl_max)) == len(cl_max)


@pytest.mark.parametrize("name", AIRFOIL_NAMES)
def test_roughness_lowers_and_reynolds_raises_cl_max(name):
    # properties of the demo model (seed_polars/generate.py), not published values
    for reynolds in generate.REYNOLDS:
        assert _cl_max(name, reynolds, "rough") < _cl_max(name, reynolds, "clean")
    clean = [_cl_max(name, reynolds, "clean") for reynolds in generate.REYNOLDS]
    assert clean == sorted(clean)


def test_blade_definition():
    blade = json.loads((SEED_DIR / "skerry-48.json").read_text())
    stations = blade["stations"]
    radius = np.array([station["radius_m"] for station in stations])
    chord = np.array([station["chord_m"] for station in stations])
    thickness = np.array([station["thickness"] for station in stations])
    assert 18 <= len(stations) <= 22
    assert radius[0] == blade["hub_radius_m"] and radius[-1] < blade["rotor_radius_m"]
    assert np.all(np.diff(radius) > 0) and np.all(np.diff(thickness) <= 0)
    assert thickness[0] == 1.0 and thickness[-1] == 0.18
    assert radius[np.argmax(chord)] / blade["rotor_radius_m"] == pytest.approx(0.2)
    operating = blade["operating_point"]
    tip_speed_ratio = (operating["rotor_speed_rpm"] * 2 * np.pi / 60 * blade["rotor_radius_m"]
                       / operating["wind_speed_m_s"])
    assert tip_speed_ratio == pytest.approx(6.5, abs=0.1)  # lambda = Omega R / U (definition)


def test_family_lists_every_member_with_its_thickness():
    family = json.loads((SEED_DIR / "family.json").read_text())
    assert {member["name"]: member["thickness"] for member in family["airfoils"]} == (
        generate.AIRFOILS
    )
