"""Rotor results in the derived cache: named arrays of any shapes, their content hash, and
a database created before the rotor kind existed upgrading with its rows intact."""

from __future__ import annotations

import hashlib
import json

import numpy as np
import pytest
from sqlalchemy import text
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.hashing import result_content_hash
from polarsvc.store.db import make_engine, make_session_factory, session_scope, upgrade_database
from polarsvc.store.derived import derived_arrays, put_derived
from polarsvc.store.errors import IntegrityProblem
from polarsvc.store.models import DerivedTable
from polarsvc.store.polars import store_polar

from .conftest import CURATOR, SYNTHETIC, small_polar

ARRAYS = {
    "tip_speed_ratio": np.array([4.0, 8.0]),
    "cp": np.array([[0.31, 0.30, -0.0], [0.45, 0.44, 0.2]]),
    "rated_wind_speed_m_s": np.array([np.nan]),
}


def _digest(shape: list[int], values: list[float]) -> str:
    # the array digest written out by hand from the hashing module's documented form:
    # sha256 of the canonical JSON header, a newline, and little-endian binary64 values
    import struct

    header = json.dumps({"dtype": "float64-le", "shape": shape}, separators=(",", ":"),
                        sort_keys=True).encode()
    data = b"".join(
        b"\x00\x00\x00\x00\x00\x00\xf8\x7f" if v != v else struct.pack("<d", v + 0.0)
        for v in values
    )
    return hashlib.sha256(header + b"\n" + data).hexdigest()


def test_result_hash_follows_its_documented_form():
    document = {
        "arrays": [
            ["tip_speed_ratio", _digest([2], [4.0, 8.0])],
            ["cp", _digest([2, 3], [0.31, 0.30, 0.0, 0.45, 0.44, 0.2])],
            ["rated_wind_speed_m_s", _digest([1], [float("nan")])],
        ],
        "format": "polarsvc.result.v1",
    }
    expected = hashlib.sha256(
        json.dumps(document, separators=(",", ":"), sort_keys=True).encode()
    ).hexdigest()
    assert result_content_hash(ARRAYS) == expected
    # order and names matter
    assert result_content_hash(dict(reversed(list(ARRAYS.items())))) != expected


def test_result_round_trip_and_tamper_check(seeded: sessionmaker[Session]) -> None:
    with session_scope(seeded, write=True) as session:
        revision, _ = store_polar(session, airfoil_name="SKUA-210", polar=small_polar(),
                                  provenance=SYNTHETIC, actor=CURATOR)
        row, created = put_derived(
            session, recipe={"kind": "rotor", "inputs": {"revisions": ["x"]}}, kind="rotor",
            alpha_deg=None, columns=ARRAYS, input_revision_ids=[revision.id], actor=CURATOR,
        )
        assert created
        key = row.recipe_hash
    with session_scope(seeded, write=False) as session:
        row = session.query(DerivedTable).filter_by(recipe_hash=key).one()
        alpha, arrays = derived_arrays(row)
        assert alpha is None
        assert list(arrays) == list(ARRAYS)
        for name, values in ARRAYS.items():
            np.testing.assert_array_equal(arrays[name], values)
        assert row.content_hash == result_content_hash(ARRAYS)
    with session_scope(seeded, write=True) as session:
        row = session.query(DerivedTable).filter_by(recipe_hash=key).one()
        payload = bytearray(row.payload)
        payload[0] ^= 1
        row.payload = bytes(payload)
    with session_scope(seeded, write=False) as session:
        row = session.query(DerivedTable).filter_by(recipe_hash=key).one()
        with pytest.raises(IntegrityProblem, match="hash mismatch"):
            derived_arrays(row)


def _downgrade(engine, revision: str) -> None:
    """Step the schema back to ``revision`` with the migrations' own downgrades (foreign keys
    off around it on SQLite, as the upgrade does)."""
    from alembic import command

    from polarsvc.store.db import WRITE_OPTION, alembic_config

    with engine.connect() as connection:
        raw = connection.connection.driver_connection if engine.dialect.name == "sqlite" else None
        if raw is not None:
            raw.execute("PRAGMA foreign_keys=OFF")
        try:
            connection = connection.execution_options(**{WRITE_OPTION: True})
            with connection.begin():
                command.downgrade(alembic_config(connection), revision)
        finally:
            if raw is not None:
                raw.execute("PRAGMA foreign_keys=ON")


def test_database_from_before_rotor_results_upgrades(database_url: str) -> None:
    """Rows written by the current software survive a step back to the schema before the
    rotor kind (0002) and the upgrade to the head again; the rotor kind then stores."""
    engine = make_engine(database_url)
    try:
        upgrade_database(engine)
        factory = make_session_factory(engine)
        from polarsvc.store.airfoils import create_airfoil, get_or_create_family

        with session_scope(factory, write=True) as session:
            get_or_create_family(session, name="skua", description="demo", actor=CURATOR)
            create_airfoil(session, name="SKUA-210", thickness=0.21, family="skua",
                           actor=CURATOR)
            revision, _ = store_polar(session, airfoil_name="SKUA-210", polar=small_polar(),
                                      provenance=SYNTHETIC, actor=CURATOR)
            table, _ = put_derived(
                session, recipe={"kind": "resampled"}, kind="resampled",
                alpha_deg=[-8.0, 8.0], columns={"cl": [-0.6, 1.1]},
                input_revision_ids=[revision.id], actor=CURATOR,
            )
            old_hash = table.content_hash
            revision_id = revision.id
        _downgrade(engine, "0002")
        with engine.connect() as connection:
            (version,) = connection.execute(text("SELECT version_num FROM alembic_version")).one()
            assert version == "0002"
            (count,) = connection.execute(text("SELECT count(*) FROM derived_table")).one()
            assert count == 1
        upgrade_database(engine)
        with session_scope(factory, write=True) as session:
            (count,) = session.execute(text("SELECT count(*) FROM derived_table")).one()
            assert count == 1
            row = session.query(DerivedTable).one()
            assert row.content_hash == old_hash
            put_derived(session, recipe={"kind": "rotor"}, kind="rotor", alpha_deg=None,
                        columns=ARRAYS, input_revision_ids=[revision_id], actor=CURATOR)
        with session_scope(factory, write=False) as session:
            assert {r.kind for r in session.query(DerivedTable)} == {"resampled", "rotor"}
    finally:
        engine.dispose()
