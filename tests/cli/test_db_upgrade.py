"""`polarsvc db upgrade` (and `serve`) on a database whose schema revision this software
does not know: one line naming the revision and the known head, a dedicated exit code, and
the database left as it was."""

from __future__ import annotations

import pytest
from alembic.script import ScriptDirectory
from sqlalchemy import text

from polarsvc.cli import EXIT_SCHEMA_MISMATCH, main
from polarsvc.store.db import alembic_config, make_engine, upgrade_database
from polarsvc.store.errors import SchemaMismatch

FUTURE = "9999_written_by_a_newer_version"


def known_head() -> str:
    return ScriptDirectory.from_config(alembic_config()).get_current_head()


@pytest.fixture
def future_database(database_url: str) -> str:
    engine = make_engine(database_url)
    upgrade_database(engine)
    with engine.begin() as connection:
        connection.execute(text("UPDATE alembic_version SET version_num = :v"), {"v": FUTURE})
    engine.dispose()
    return database_url


def stored_revision(url: str) -> str:
    engine = make_engine(url)
    try:
        with engine.connect() as connection:
            return connection.execute(text("SELECT version_num FROM alembic_version")).scalar_one()
    finally:
        engine.dispose()


def test_db_upgrade_on_an_unknown_revision_says_so_in_one_line(future_database, capsys):
    code = main(["--database-url", future_database, "db", "upgrade"])
    err = capsys.readouterr().err
    assert code == EXIT_SCHEMA_MISMATCH == 4
    assert len(err.strip().splitlines()) == 1, err
    assert FUTURE in err and known_head() in err and "Traceback" not in err
    assert stored_revision(future_database) == FUTURE


def test_other_commands_and_serve_refuse_the_same_way(
    future_database, capsys, tmp_path, monkeypatch
):
    monkeypatch.chdir(tmp_path)
    assert main(["--database-url", future_database, "token", "list"]) == EXIT_SCHEMA_MISMATCH
    assert main(["--database-url", future_database, "serve", "--port", "0"]) == 4
    err = capsys.readouterr().err
    assert err.count(FUTURE) == 2 and "Traceback" not in err


def test_upgrade_database_raises_the_typed_error(future_database):
    engine = make_engine(future_database)
    try:
        with pytest.raises(SchemaMismatch) as raised:
            upgrade_database(engine)
    finally:
        engine.dispose()
    assert raised.value.revision == FUTURE and raised.value.head == known_head()
