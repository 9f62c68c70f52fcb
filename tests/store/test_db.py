"""Engines, sessions, migrations and backup."""

from __future__ import annotations

import sqlite3
import threading
from pathlib import Path

import pytest
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from sqlalchemy import Engine, event, inspect, select, text
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.store import db
from polarsvc.store.db import (
    default_database_url,
    make_engine,
    online_backup,
    session_scope,
    upgrade_database,
)
from polarsvc.store.models import Base, Family, PolarRevision
from polarsvc.store.polars import store_polar

from .conftest import CURATOR, SYNTHETIC, small_polar

TABLES = {
    "alembic_version",
    "airfoil",
    "api_token",
    "audit_event",
    "blade_definition",
    "derived_input",
    "derived_table",
    "family",
    "polar_revision",
    "airfoil_alias",
}


def test_migrations_create_the_schema(engine: Engine) -> None:
    assert set(inspect(engine).get_table_names()) == TABLES
    with engine.connect() as connection:
        from alembic.script import ScriptDirectory

        from polarsvc.store.db import alembic_config

        head = ScriptDirectory.from_config(alembic_config()).get_current_head()
        assert head is not None and head != "0001"  # the chain grows past the initial schema
        assert connection.scalar(text("SELECT version_num FROM alembic_version")) == head


def test_migrated_schema_matches_the_models(engine: Engine) -> None:
    # alembic autogenerate as the reference: no difference between models and migration
    with engine.connect() as connection:
        context = MigrationContext.configure(connection, opts={"compare_type": True})
        assert compare_metadata(context, Base.metadata) == []


def test_upgrade_is_idempotent_and_downgrade_works(engine: Engine) -> None:
    upgrade_database(engine)
    with engine.connect() as connection:
        assert connection.scalar(text("SELECT count(*) FROM alembic_version")) == 1
    from alembic import command

    with engine.begin() as connection:
        command.downgrade(db.alembic_config(connection), "base")
    assert set(inspect(engine).get_table_names()) == {"alembic_version"}
    upgrade_database(engine)
    assert set(inspect(engine).get_table_names()) == TABLES


def test_sqlite_connection_settings(tmp_path: Path) -> None:
    engine = make_engine(f"sqlite:///{tmp_path / 'settings.db'}")
    with engine.connect() as connection:
        assert connection.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert connection.exec_driver_sql("PRAGMA busy_timeout").scalar() == 30000
        assert connection.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
        # SQLite documentation, PRAGMA synchronous: NORMAL is 1
        assert connection.exec_driver_sql("PRAGMA synchronous").scalar() == 1
        assert connection.connection.driver_connection.isolation_level is None
    engine.dispose()


def test_write_sessions_begin_immediate(session_factory: sessionmaker[Session]) -> None:
    engine = session_factory.kw["bind"]
    if engine.dialect.name != "sqlite":
        pytest.skip("BEGIN IMMEDIATE is SQLite's")
    statements: list[str] = []

    def capture(conn, cursor, statement, parameters, context, executemany) -> None:
        if statement.startswith("BEGIN"):
            statements.append(statement)

    event.listen(engine, "before_cursor_execute", capture)
    with session_scope(session_factory, write=True) as session:
        session.scalars(select(Family)).all()
    with session_scope(session_factory, write=False) as session:
        session.scalars(select(Family)).all()
    event.remove(engine, "before_cursor_execute", capture)
    assert statements == ["BEGIN IMMEDIATE", "BEGIN"]


def test_session_scope_rolls_back(seeded: sessionmaker[Session]) -> None:
    with pytest.raises(RuntimeError), session_scope(seeded, write=True) as session:
        store_polar(
            session,
            airfoil_name="SKUA-210",
            polar=small_polar(),
            provenance=SYNTHETIC,
            actor=CURATOR,
        )
        raise RuntimeError("abandon")
    with session_scope(seeded, write=False) as session:
        assert session.scalars(select(PolarRevision)).all() == []


def test_default_database_url(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv(db.DATABASE_URL_ENV, "postgresql+psycopg://u@h/d")
    assert default_database_url() == "postgresql+psycopg://u@h/d"
    monkeypatch.delenv(db.DATABASE_URL_ENV)
    monkeypatch.chdir(tmp_path)
    url = default_database_url()
    assert url == f"sqlite:///{(tmp_path / 'polarsvc-data' / 'polarsvc.db').resolve()}"
    assert (tmp_path / "polarsvc-data").is_dir()


def test_online_backup_while_writing(seeded: sessionmaker[Session], tmp_path: Path) -> None:
    engine = seeded.kw["bind"]
    if engine.dialect.name != "sqlite":
        with pytest.raises(ValueError, match="SQLite"):
            online_backup(engine, tmp_path / "copy.db")
        return
    stop = threading.Event()
    written: list[int] = []
    errors: list[BaseException] = []

    def writer() -> None:
        try:
            i = 0
            while not stop.is_set() or i < 5:
                with session_scope(seeded, write=True) as session:
                    store_polar(
                        session,
                        airfoil_name="SKUA-210",
                        polar=small_polar(i * 1e-3),
                        provenance=SYNTHETIC,
                        actor=CURATOR,
                    )
                i += 1
                written.append(i)
        except BaseException as exc:  # reported below
            errors.append(exc)

    thread = threading.Thread(target=writer)
    thread.start()
    while len(written) < 3:
        threading.Event().wait(0.01)
    copy = online_backup(engine, tmp_path / "backups" / "copy.db")
    stop.set()
    thread.join()
    assert errors == []
    with sqlite3.connect(copy) as connection:
        assert connection.execute("PRAGMA integrity_check").fetchone() == ("ok",)
        copied = connection.execute("SELECT count(*) FROM polar_revision").fetchone()[0]
        events = connection.execute(
            "SELECT count(*) FROM audit_event WHERE action = 'polar.store'"
        ).fetchone()[0]
    # a consistent snapshot: every copied revision has its audit event, and the writer
    # went on after the copy
    assert 3 <= copied == events <= len(written)
    with session_scope(seeded, write=False) as session:
        assert len(session.scalars(select(PolarRevision)).all()) == len(written)
    assert not (tmp_path / "backups" / "copy.db.partial").exists()


def test_concurrent_upgrades_on_an_empty_database(database_url: str) -> None:
    # several workers starting together (advisory lock on PostgreSQL, write lock on SQLite)
    engines = [make_engine(database_url) for _ in range(4)]
    errors: list[BaseException] = []
    barrier = threading.Barrier(len(engines))

    def start(engine: Engine) -> None:
        try:
            barrier.wait()
            upgrade_database(engine)
        except BaseException as exc:  # reported below
            errors.append(exc)

    threads = [threading.Thread(target=start, args=(engine,)) for engine in engines]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert errors == []
    assert set(inspect(engines[0]).get_table_names()) == TABLES
    for engine in engines:
        engine.dispose()
