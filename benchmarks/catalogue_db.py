"""Building large synthetic catalogues fast, for the listing benchmarks.

``build_catalogue(path, polars=50_000)`` writes a SQLite database (migrated to the head
revision) holding ``polars / 500`` families x 10 airfoils x 50 polars (25 Reynolds numbers x
clean and rough), every revision with its canonical table bytes, its real content hash
(:func:`polarsvc.hashing.polar_content_hash`) and one audit event, as an import would leave
them. The rows go in by bulk INSERTs of the store's own models in one transaction; a 50k
catalogue builds in about a minute instead of the 6-7 minutes of importing file by file.

The tables are synthetic (thin-aerofoil lift slope 2 pi per radian with a soft stall, a
parabolic drag polar, a constant moment), labelled ``synthetic``; fictional family names
``skua-NNN``.
"""

from __future__ import annotations

import datetime as dt
import math
import sqlite3
from pathlib import Path

import numpy as np
from sqlalchemy import insert

from polarsvc.aero import Polar
from polarsvc.aero.quality import table_flags
from polarsvc.hashing import canonical_array_bytes, canonical_json, polar_content_hash
from polarsvc.store.db import (
    make_engine,
    make_session_factory,
    session_scope,
    upgrade_database,
)
from polarsvc.store.models import Airfoil, AuditEvent, Family, PolarRevision

AIRFOILS_PER_FAMILY = 10
POLARS_PER_AIRFOIL = 50
BUILDER_VERSION = 2
ALPHA_DEG = np.round(np.arange(-10.0, 20.0001, 0.4), 10)  # 76 angles


def _table(thickness: float, reynolds: float, rough: bool) -> tuple[np.ndarray, ...]:
    alpha = np.radians(ALPHA_DEG)
    stall = math.radians(12.0 + 10.0 * (0.3 - thickness) + (0.0 if rough else 2.0))
    cl = 2.0 * math.pi * np.sin(alpha) / (1.0 + np.exp((np.abs(alpha) - stall) * 12.0))
    cl = cl + 0.3 * (1.0 - thickness)
    cd = 0.006 + (0.004 if rough else 0.0) + 0.01 * (6e6 / reynolds) ** 0.2 + 0.8 * alpha**2
    cm = np.full_like(alpha, -0.05 - 0.1 * thickness)
    return ALPHA_DEG.copy(), cl, cd, cm


def cache_path(folder: Path, polars: int) -> Path:
    """Where the catalogue of ``polars`` polars is kept between runs."""
    return folder / f"catalogue-{polars}-v{BUILDER_VERSION}.db"


def build_catalogue(path: Path, *, polars: int) -> Path:
    """Write the catalogue to ``path`` (replaced) and return it; see the module docstring."""
    if polars % (AIRFOILS_PER_FAMILY * POLARS_PER_AIRFOIL):
        raise ValueError(f"polars must be a multiple of {AIRFOILS_PER_FAMILY * POLARS_PER_AIRFOIL}")
    path.parent.mkdir(parents=True, exist_ok=True)
    partial = path.with_name(path.name + ".partial")
    for suffix in ("", "-wal", "-shm"):
        Path(str(partial) + suffix).unlink(missing_ok=True)
    engine = make_engine(f"sqlite:///{partial}")
    upgrade_database(engine)
    factory = make_session_factory(engine)
    families = polars // (AIRFOILS_PER_FAMILY * POLARS_PER_AIRFOIL)
    now = dt.datetime(2026, 12, 1, tzinfo=dt.UTC)
    provenance = {"source_kind": "synthetic", "reference": "benchmarks/catalogue_db.py",
                  "facility": None, "measured_on": None, "contributor": "benchmark",
                  "notes": "synthetic catalogue for listing benchmarks"}
    reynolds_values = np.geomspace(5e5, 1.2e7, POLARS_PER_AIRFOIL // 2)
    with session_scope(factory, write=True) as session:
        session.execute(insert(Family), [
            {"id": f + 1, "name": f"skua-{f:03d}", "description": "synthetic family",
             "created_at": now} for f in range(families)])
        airfoil_rows = []
        for f in range(families):
            for a in range(AIRFOILS_PER_FAMILY):
                thickness = round(0.15 + 0.025 * a, 4)
                airfoil_rows.append({
                    "id": f * AIRFOILS_PER_FAMILY + a + 1, "name": f"SKUA-{f:03d}-{a:02d}",
                    "family_id": f + 1, "thickness": thickness, "description": "",
                    "coordinates": None, "created_at": now})
        session.execute(insert(Airfoil), airfoil_rows)
        revision_id = 0
        revisions, events = [], []
        flags_of: dict[tuple[float, float, bool], str] = {}
        for airfoil in airfoil_rows:
            for rough in (False, True):
                for reynolds in reynolds_values:
                    revision_id += 1
                    alpha, cl, cd, cm = _table(airfoil["thickness"], float(reynolds), rough)
                    surface = "rough" if rough else "clean"
                    polar = Polar(alpha, cl, cd, cm, reynolds=float(reynolds), mach=0.0,
                                  thickness=airfoil["thickness"], surface=surface,
                                  assume_degrees=True)
                    content_hash = polar_content_hash(
                        polar, airfoil_name=airfoil["name"], provenance=provenance)
                    key = (airfoil["thickness"], float(reynolds), rough)
                    if key not in flags_of:
                        flags_of[key] = canonical_json(
                            [f.as_dict() for f in table_flags(polar)]).decode("utf-8")
                    revisions.append({
                        "id": revision_id, "content_hash": content_hash,
                        "airfoil_id": airfoil["id"], "reynolds": float(reynolds), "mach": 0.0,
                        "surface": surface, "n_rows": int(alpha.size), "has_cm": True,
                        "alpha_deg": canonical_array_bytes(polar.alpha_deg),
                        "cl": canonical_array_bytes(polar.cl),
                        "cd": canonical_array_bytes(polar.cd),
                        "cm": canonical_array_bytes(polar.cm),
                        **provenance, "supersedes_id": None,
                        "review_state": "approved" if revision_id % 7 == 0 else "draft",
                        "review_reason": None, "replaced_by_id": None,
                        "quality_flags": flags_of[key], "quality_override": None,
                        "created_at": now, "created_by": "benchmark"})
                    events.append({
                        "occurred_at": now, "actor_name": "benchmark", "actor_role": "curator",
                        "action": "polar.store", "object_kind": "polar_revision",
                        "object_key": content_hash, "before_hash": None,
                        "after_hash": content_hash, "remote_addr": None,
                        "detail": canonical_json({"airfoil": airfoil["name"]}).decode()})
                    if len(revisions) == 2000:
                        session.execute(insert(PolarRevision), revisions)
                        session.execute(insert(AuditEvent), events)
                        revisions, events = [], []
        if revisions:
            session.execute(insert(PolarRevision), revisions)
            session.execute(insert(AuditEvent), events)
    engine.dispose()
    connection = sqlite3.connect(partial)
    try:
        connection.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    finally:
        connection.close()
    partial.replace(path)
    return path
