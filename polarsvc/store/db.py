"""Engines, sessions, migrations and backups.

SQLite is set up for a concurrent service (SQLAlchemy documentation, "Transactions with
SQLite and the sqlite3 driver"): the driver's own transaction handling is switched off
(``isolation_level = None``), every connection gets WAL, ``busy_timeout=30000``,
``foreign_keys=ON`` and ``synchronous=NORMAL``, and the engine's ``begin`` hook emits the
BEGIN itself: ``BEGIN IMMEDIATE`` for write transactions (execution option
:data:`WRITE_OPTION`), so a read transaction never has to upgrade to a write lock (which
``busy_timeout`` does not cover and which fails at once with "database is locked").
"""

from __future__ import annotations

import contextlib
import os
import sqlite3
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from alembic import command
from alembic.config import Config
from sqlalchemy import Engine, create_engine, event, make_url, text
from sqlalchemy.engine import URL, Connection
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.store.errors import IntegrityProblem

DATABASE_URL_ENV = "POLARSVC_DATABASE_URL"
DEFAULT_DATA_DIR = Path("polarsvc-data")
WRITE_OPTION = "polarsvc_write"
"""Execution option that makes the SQLite begin hook emit ``BEGIN IMMEDIATE``."""

MIGRATION_LOCK_KEY = 0x706F6C6172737663  # "polarsvc" in ASCII, the advisory-lock key
SQLITE_BUSY_TIMEOUT_MS = 30000
SCRIPT_LOCATION = "polarsvc.migrations:."

__all__ = [
    "DATABASE_URL_ENV",
    "WRITE_OPTION",
    "alembic_config",
    "default_database_url",
    "make_engine",
    "make_session_factory",
    "online_backup",
    "session_scope",
    "upgrade_database",
]


def default_database_url() -> str:
    """The database URL: env ``POLARSVC_DATABASE_URL``, else a SQLite file
    ``./polarsvc-data/polarsvc.db`` (the folder is created)."""
    url = os.environ.get(DATABASE_URL_ENV)
    if url:
        return url
    DEFAULT_DATA_DIR.mkdir(parents=True, exist_ok=True)
    return f"sqlite:///{(DEFAULT_DATA_DIR / 'polarsvc.db').resolve()}"


def _enable_wal(cursor: sqlite3.Cursor) -> None:
    """Switch the database file to WAL (it stays so). On a new file, workers starting
    together race for the lock this takes, and SQLite answers "database is locked" at once
    instead of waiting, so the switch is retried for up to the busy timeout."""
    deadline = time.monotonic() + SQLITE_BUSY_TIMEOUT_MS / 1000.0
    while True:
        try:
            if cursor.execute("PRAGMA journal_mode").fetchone()[0].lower() != "wal":
                cursor.execute("PRAGMA journal_mode=WAL")
            return
        except sqlite3.OperationalError as exc:
            if "locked" not in str(exc) or time.monotonic() > deadline:
                raise
            time.sleep(0.02)


def _setup_sqlite(engine: Engine) -> None:
    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection: sqlite3.Connection, connection_record: Any) -> None:
        dbapi_connection.isolation_level = None
        cursor = dbapi_connection.cursor()
        try:
            cursor.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
            _enable_wal(cursor)
            cursor.execute("PRAGMA foreign_keys=ON")
            cursor.execute("PRAGMA synchronous=NORMAL")
        finally:
            cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(connection: Connection) -> None:
        if connection.get_execution_options().get(WRITE_OPTION):
            connection.exec_driver_sql("BEGIN IMMEDIATE")
        else:
            connection.exec_driver_sql("BEGIN")


def make_engine(url: str | URL, **kwargs: Any) -> Engine:
    """An engine for ``url`` (SQLite set up as in the module docstring, PostgreSQL as given).

    Parameters
    ----------
    url : str or URL
        SQLAlchemy database URL, e.g. ``sqlite:///path/polarsvc.db`` or
        ``postgresql+psycopg://user@host/db``.
    **kwargs
        Passed on to :func:`sqlalchemy.create_engine`.
    """
    parsed = make_url(url)
    if parsed.get_backend_name() == "sqlite":
        engine = create_engine(parsed, **kwargs)
        _setup_sqlite(engine)
        return engine
    kwargs.setdefault("pool_pre_ping", True)
    return create_engine(parsed, **kwargs)


def make_session_factory(engine: Engine) -> sessionmaker[Session]:
    """A session factory for ``engine`` (objects stay readable after commit)."""
    return sessionmaker(engine, expire_on_commit=False)


@contextlib.contextmanager
def session_scope(factory: sessionmaker[Session], *, write: bool) -> Iterator[Session]:
    """A session in one transaction: committed on success, rolled back on an exception.

    Parameters
    ----------
    factory : sessionmaker
        From :func:`make_session_factory`.
    write : bool
        Whether the transaction writes. On SQLite a write transaction starts with
        ``BEGIN IMMEDIATE`` (it takes the write lock at once, waiting up to the busy
        timeout); a read transaction must not write.
    """
    with factory() as session:
        if write:
            session.connection(execution_options={WRITE_OPTION: True})
        try:
            yield session
            session.commit()
        except BaseException:
            session.rollback()
            raise


def alembic_config(connection: Connection | None = None) -> Config:
    """The Alembic configuration of the packaged migrations.

    ``script_location`` is the package resource :data:`SCRIPT_LOCATION`, resolved by Alembic
    through :mod:`importlib.resources`; naming the package ``polarsvc.migrations`` itself
    (rather than the folder ``migrations`` inside ``polarsvc``) works both from an
    installed wheel and from an editable install, where the top-level ``migrations/``
    folder is mapped onto that package name.
    """
    config = Config()
    config.set_main_option("script_location", SCRIPT_LOCATION)
    if connection is not None:
        config.attributes["connection"] = connection
    return config


def upgrade_database(engine: Engine, revision: str = "head") -> None:
    """Run the migrations up to ``revision`` inside one write transaction.

    On PostgreSQL the transaction first takes ``pg_advisory_xact_lock`` so that concurrent
    workers starting together migrate one after the other. On SQLite foreign keys are
    switched off around the transaction (a batch table rebuild would otherwise cascade
    deletes into child rows) and ``PRAGMA foreign_key_check`` is run after it.

    Raises
    ------
    IntegrityProblem
        If the SQLite foreign-key check finds violations after the upgrade.
    """
    is_sqlite = engine.dialect.name == "sqlite"
    with engine.connect() as connection:
        raw = connection.connection.driver_connection if is_sqlite else None
        if raw is not None:
            raw.execute("PRAGMA foreign_keys=OFF")
        try:
            connection = connection.execution_options(**{WRITE_OPTION: True})
            with connection.begin():
                if engine.dialect.name == "postgresql":
                    connection.execute(
                        text("SELECT pg_advisory_xact_lock(:key)"), {"key": MIGRATION_LOCK_KEY}
                    )
                command.upgrade(alembic_config(connection), revision)
            if raw is not None:
                problems = raw.execute("PRAGMA foreign_key_check").fetchall()
                if problems:
                    raise IntegrityProblem(
                        f"foreign-key check after migration found {len(problems)} "
                        f"violation(s), first: {problems[0]!r}"
                    )
        finally:
            if raw is not None:
                raw.execute("PRAGMA foreign_keys=ON")


def _sqlite_path(url: str | URL) -> Path:
    parsed = make_url(url)
    if parsed.get_backend_name() != "sqlite":
        raise ValueError(f"online backup works on SQLite databases only, not {parsed.drivername}")
    if not parsed.database or parsed.database == ":memory:":
        raise ValueError("online backup needs a SQLite database file, not an in-memory one")
    return Path(parsed.database)


def online_backup(engine_or_url: Engine | str | URL, destination_path: str | Path) -> Path:
    """Copy a live SQLite database with the sqlite3 backup API.

    Safe while the service runs: the copy is a consistent snapshot, writers are not blocked
    for longer than one step. The copy is written to a temporary file beside the
    destination and renamed into place when complete.

    Parameters
    ----------
    engine_or_url : Engine or str or URL
        The source database.
    destination_path : str or Path
        File to write; replaced if it exists.

    Returns
    -------
    Path
        The destination path.
    """
    url = engine_or_url.url if isinstance(engine_or_url, Engine) else engine_or_url
    source_path = _sqlite_path(url)
    destination = Path(destination_path)
    destination.parent.mkdir(parents=True, exist_ok=True)
    partial = destination.with_name(destination.name + ".partial")
    partial.unlink(missing_ok=True)
    source = sqlite3.connect(source_path, timeout=SQLITE_BUSY_TIMEOUT_MS / 1000)
    try:
        target = sqlite3.connect(partial)
        try:
            source.backup(target)
            target.execute("PRAGMA journal_mode=DELETE")
        finally:
            target.close()
    finally:
        source.close()
    partial.replace(destination)
    return destination
