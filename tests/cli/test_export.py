"""`polarsvc export` writes every stored field, and `polarsvc import` of the export gives back
every field of every revision: the demo data plus a revision carrying every provenance field
(a measurement date included), as CSV and as JSON."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from sqlalchemy import select

from polarsvc.cli import main
from polarsvc.ingest import load_demo, store_file
from polarsvc.store import polars as polar_store
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import make_engine, make_session_factory, session_scope
from polarsvc.store.models import PolarRevision

SEED_DIR = Path(__file__).resolve().parents[2] / "seed_polars"

MEASURED = b"""# airfoil: TUNNEL-240
# family: skua
# thickness: 24 %
# reynolds: 3000000
# mach: 0.12
# surface: rough
# source_kind: wind-tunnel
# reference: campaign report 7, table 3
# facility: low-speed tunnel, closed test section
# measured_on: 2026-03-01
# contributor: Skerry Rotor Aero (fictional)
# notes: trip strip at 5 % chord on both sides
alpha_deg,cl,cd,cm
-4,-0.2,0.0131,-0.051
0,0.23,0.0122,-0.058
4,0.66,0.0135,-0.063
8,1.04,0.0178,-0.064
12,1.27,0.0310,-0.060
"""


def revision_fields(url: str) -> dict[str, dict[str, object]]:
    """Every stored field of every revision that an export carries, by content hash."""
    engine = make_engine(url)
    try:
        with session_scope(make_session_factory(engine), write=False) as session:
            rows = session.scalars(select(PolarRevision)).all()
            fields = {}
            for row in rows:
                polar = polar_store.load_polar(row)
                fields[row.content_hash] = {
                    "airfoil": row.airfoil.name,
                    "family": row.airfoil.family.name if row.airfoil.family else None,
                    "thickness": row.airfoil.thickness,
                    "reynolds": row.reynolds,
                    "mach": row.mach,
                    "surface": row.surface,
                    **polar_store.revision_provenance(row),
                    "table": {
                        name: None if values is None else np.asarray(values).tobytes()
                        for name, values in (
                            ("alpha_deg", polar.alpha_deg), ("cl", polar.cl),
                            ("cd", polar.cd), ("cm", polar.cm),
                        )
                    },
                }
            return fields
    finally:
        engine.dispose()


@pytest.fixture
def source_url(database_url: str) -> str:
    engine = make_engine(database_url)
    try:
        from polarsvc.store.db import upgrade_database

        upgrade_database(engine)
        factory = make_session_factory(engine)
        load_demo(factory, SEED_DIR, actor=SYSTEM_ACTOR)
        with session_scope(factory, write=True) as session:
            store_file(session, MEASURED, filename="tunnel-240.csv", actor=SYSTEM_ACTOR)
    finally:
        engine.dispose()
    return database_url


@pytest.mark.parametrize("fmt", ["csv", "json"])
def test_export_then_import_gives_back_every_field_of_every_revision(
    source_url, tmp_path, fmt, capsys
):
    original = revision_fields(source_url)
    measured = [f for f in original.values() if f["airfoil"] == "TUNNEL-240"]
    assert len(measured) == 1 and str(measured[0]["measured_on"]) == "2026-03-01"
    folder = tmp_path / "exported"
    assert main(["--database-url", source_url, "export", str(folder), "--format", fmt]) == 0
    written = sorted(folder.glob(f"*.{fmt}"))
    assert len(written) == len(original)
    target = f"sqlite:///{tmp_path / 'reimported.db'}"
    assert main(["--database-url", target, "import", "--create-families", str(folder)]) == 0
    assert revision_fields(target) == original
