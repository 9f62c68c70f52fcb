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
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

from alembic import command
from alembic import util as alembic_util
from alembic.config import Config
from alembic.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import Engine, create_engine, event, make_url, text
from sqlalchemy.engine import URL, Connection
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.store.errors import (
    BackupRefused,
    IntegrityProblem,
    InvalidValue,
    SchemaMismatch,
)

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
    "check_backup_destination",
    "default_database_url",
    "is_lock_timeout",
    "make_engine",
    "make_session_factory",
    "online_backup",
    "refresh_planner_statistics",
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


def _refuse_nul_text(
    connection: Connection, cursor: Any, statement: str, parameters: Any, context: Any,
    executemany: bool,
) -> None:
    """Last line of defence behind the input checks (:mod:`polarsvc.names`): a text
    parameter holding NUL is refused on every database alike (PostgreSQL cannot store NUL,
    SQLite would), naming the bound parameter."""
    rows = parameters if executemany else (parameters,)
    positions = getattr(getattr(context, "compiled", None), "positiontup", None) or ()
    for row in rows or ():
        pairs = row.items() if isinstance(row, dict) else enumerate(row or ())
        for key, value in pairs:
            if isinstance(value, str) and "\x00" in value:
                if isinstance(key, int) and key < len(positions):
                    key = positions[key]
                field = str(key).rsplit("_", 1)[0] if str(key)[-1:].isdigit() else str(key)
                raise InvalidValue(field, "contains the control character U+0000 (NUL)")


LOCK_TIMEOUT_SQLSTATES = frozenset({"55P03", "40001", "40P01"})
"""PostgreSQL: lock not available (lock_timeout), serialization failure, deadlock."""


def is_lock_timeout(exc: BaseException) -> bool:
    """Whether a database error means "another transaction held the lock too long" (SQLite
    "database is locked" after the busy timeout; the PostgreSQL states of
    :data:`LOCK_TIMEOUT_SQLSTATES`): nothing was written and the same request can be
    retried."""
    original = getattr(exc, "orig", exc)
    if isinstance(original, sqlite3.OperationalError):
        return "database is locked" in str(original) or "database is busy" in str(original)
    return getattr(original, "sqlstate", None) in LOCK_TIMEOUT_SQLSTATES


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
    else:
        kwargs.setdefault("pool_pre_ping", True)
        engine = create_engine(parsed, **kwargs)
    event.listen(engine, "before_cursor_execute", _refuse_nul_text)
    return engine


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


def _check_known_revision(connection: Connection) -> None:
    """Refuse a database stamped with a schema revision the packaged migrations lack."""
    script = ScriptDirectory.from_config(alembic_config())
    current = MigrationContext.configure(connection).get_current_heads()
    for found in current:
        try:
            known = script.get_revision(found)
        except alembic_util.CommandError:
            known = None
        if known is None:
            raise SchemaMismatch(found, str(script.get_current_head()))


def upgrade_database(engine: Engine, revision: str = "head") -> None:
    """Run the migrations up to ``revision`` inside one write transaction.

    On PostgreSQL the transaction first takes ``pg_advisory_xact_lock`` so that concurrent
    workers starting together migrate one after the other. On SQLite foreign keys are
    switched off around the transaction (a batch table rebuild would otherwise cascade
    deletes into child rows) and ``PRAGMA foreign_key_check`` is run after it.

    Raises
    ------
    SchemaMismatch
        If the database is at a revision these migrations do not know (nothing is changed).
    IntegrityProblem
        If the SQLite foreign-key check finds violations after the upgrade.

    On SQLite the planner's statistics are refreshed afterwards
    (:func:`refresh_planner_statistics`).
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
                _check_known_revision(connection)
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
    refresh_planner_statistics(engine)


SQLITE_ANALYSIS_LIMIT = 1000
"""Rows ANALYZE reads per index on SQLite (``PRAGMA analysis_limit``): approximate
statistics in milliseconds (about 2 ms for the 50 000-revision benchmark catalogue, against
36 ms for an exact pass)."""


def refresh_planner_statistics(bind: Engine | sessionmaker[Session]) -> None:
    """Gather the query planner's statistics of a SQLite database (``ANALYZE``, bounded by
    :data:`SQLITE_ANALYSIS_LIMIT`; it fills ``sqlite_stat1``).

    SQLite keeps no statistics by itself; without them its planner guesses the sizes of
    tables and how selective each index is. Called after migrations (hence when a server
    or a command starts) and after bulk imports. PostgreSQL gathers its own (autovacuum's
    analyse), so nothing is done there.
    """
    engine = bind if isinstance(bind, Engine) else bind.kw["bind"]
    if engine.dialect.name != "sqlite":
        return
    with engine.connect() as connection:
        connection = connection.execution_options(**{WRITE_OPTION: True})
        with connection.begin():
            connection.exec_driver_sql(f"PRAGMA analysis_limit={SQLITE_ANALYSIS_LIMIT}")
            connection.exec_driver_sql("ANALYZE")


def _sqlite_path(url: str | URL) -> Path:
    parsed = make_url(url)
    if parsed.get_backend_name() != "sqlite":
        raise ValueError(f"online backup works on SQLite databases only, not {parsed.drivername}")
    if not parsed.database or parsed.database == ":memory:":
        raise ValueError("online backup needs a SQLite database file, not an in-memory one")
    return Path(parsed.database)


SQLITE_COMPANION_SUFFIXES = ("", "-wal", "-shm", "-journal")
"""The files SQLite keeps for a database: the file itself, its write-ahead log, its
shared-memory index and its rollback journal."""


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.samefile(b)
    except OSError:
        return False


def check_backup_destination(source_path: str | Path, destination_path: str | Path) -> None:
    """Refuse a backup destination that is the database itself or one of its companion
    files (:data:`SQLITE_COMPANION_SUFFIXES`), however it is spelled: relative, with ``..``
    segments or through a symbolic link. Replacing the live file while a server writes to it
    would leave the server's write-ahead log paired with another image.

    Raises
    ------
    BackupRefused
        Naming the destination and the database it would overwrite.
    """
    source = Path(source_path).resolve()
    destination = Path(destination_path)
    resolved = destination.resolve()
    for suffix in SQLITE_COMPANION_SUFFIXES:
        companion = source.with_name(source.name + suffix)
        if resolved == companion or _same_file(resolved, companion):
            what = "the live database" + (f" ({suffix[1:]} file)" if suffix else "")
            raise BackupRefused(
                f"refusing to write the backup to {destination}: it is {what} {source}; "
                "choose another file"
            )


def online_backup(engine_or_url: Engine | str | URL, destination_path: str | Path) -> Path:
    """Copy a live SQLite database with the sqlite3 backup API.

    Safe while the service runs: the copy is a consistent snapshot, writers are not blocked
    for longer than one step. The copy is written to a new temporary file beside the
    destination and renamed into place when complete (an atomic replacement), so the
    destination never holds a partial copy.

    Parameters
    ----------
    engine_or_url : Engine or str or URL
        The source database.
    destination_path : str or Path
        File to write; replaced if it exists. Never the source database or one of its
        -wal, -shm or -journal files (:func:`check_backup_destination`).

    Returns
    -------
    Path
        The destination path.

    Raises
    ------
    BackupRefused
        If the destination is the live database or one of its companion files.
    """
    url = engine_or_url.url if isinstance(engine_or_url, Engine) else engine_or_url
    source_path = _sqlite_path(url)
    destination = Path(destination_path)
    check_backup_destination(source_path, destination)
    if not source_path.is_file():
        raise FileNotFoundError(f"no SQLite database at {source_path}")
    destination.parent.mkdir(parents=True, exist_ok=True)
    handle, partial_name = tempfile.mkstemp(
        prefix=f".{destination.name}.", suffix=".partial", dir=destination.parent
    )
    os.close(handle)
    partial = Path(partial_name)
    try:
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
        # the destination is checked once more just before the rename: a link made meanwhile
        check_backup_destination(source_path, destination)
        partial.replace(destination)
    finally:
        partial.unlink(missing_ok=True)
    return destination
