"""`polarsvc db backup` while another process keeps writing: a destination that is the live
database (or its -wal, -shm or -journal file), however spelled, is refused and the database
stays whole; a backup elsewhere is a consistent copy written through a temporary file."""

from __future__ import annotations

import os
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from polarsvc.cli import main
from polarsvc.store.db import make_engine, upgrade_database

# A writer in its own process, like a server: one token per write transaction; the name of
# each token is printed only after its transaction committed (its acknowledgement).
WRITER = """
import sys, itertools
from polarsvc.store import tokens
from polarsvc.store.audit import Actor
from polarsvc.store.db import make_engine, make_session_factory, session_scope
factory = make_session_factory(make_engine(sys.argv[1]))
actor = Actor(name="writer", role="admin", remote_addr=None)
for i in itertools.count():
    with session_scope(factory, write=True) as session:
        tokens.create_token(session, name=f"w{i}", role="reader", actor=actor)
    print(f"w{i}", flush=True)
"""


@pytest.fixture
def live_database(tmp_path: Path):
    """A migrated SQLite file with a writer process running on it; yields (path, stop) where
    ``stop()`` ends the writer and returns the acknowledged token names."""
    data = tmp_path / "data"
    data.mkdir()
    path = data / "m.db"
    url = f"sqlite:///{path}"
    engine = make_engine(url)
    upgrade_database(engine)
    engine.dispose()
    out = (tmp_path / "acks.txt").open("w")
    err = (tmp_path / "writer-errors.txt").open("w")
    writer = subprocess.Popen([sys.executable, "-c", WRITER, url], stdout=out, stderr=err)

    def acknowledged() -> list[str]:
        return (tmp_path / "acks.txt").read_text().split()

    deadline = time.monotonic() + 60
    while len(acknowledged()) < 20:
        assert writer.poll() is None, (tmp_path / "writer-errors.txt").read_text()
        assert time.monotonic() < deadline, "the writer did not start"
        time.sleep(0.05)

    def stop() -> list[str]:
        writer.terminate()
        writer.wait(timeout=30)
        out.close()
        err.close()
        return acknowledged()

    try:
        yield path, stop
    finally:
        if writer.poll() is None:
            writer.kill()
            writer.wait()
        out.close()
        err.close()


def stored_token_names(path: Path) -> set[str]:
    with sqlite3.connect(path) as connection:
        assert connection.execute("PRAGMA integrity_check").fetchone() == ("ok",)
        return {row[0] for row in connection.execute("SELECT name FROM api_token")}


def test_backup_onto_the_live_database_is_refused_and_loses_nothing(
    live_database, tmp_path, monkeypatch, capsys
):
    path, stop = live_database
    url = f"sqlite:///{path}"
    link = tmp_path / "link.db"
    link.symlink_to(path)
    monkeypatch.chdir(tmp_path)
    spellings = [
        str(path),                                # the file itself
        "data/m.db",                              # relative
        "data/../data/./m.db",                    # relative with dot segments
        str(link),                                # a symbolic link to it
        str(path) + "-wal",                       # its write-ahead log
        str(path) + "-shm",                       # its shared-memory index
        str(path) + "-journal",                   # its rollback journal
    ]
    for destination in spellings:
        assert main(["--database-url", url, "db", "backup", destination]) == 1, destination
        err = capsys.readouterr().err
        assert "refusing" in err and "live database" in err, err
    # the same database named through a relative URL
    assert main(["--database-url", "sqlite:///data/m.db", "db", "backup", str(path)]) == 1
    capsys.readouterr()
    acknowledged = stop()
    stored = stored_token_names(path)
    assert set(acknowledged) <= stored
    assert link.is_symlink() and link.resolve() == path.resolve()


def test_backup_elsewhere_while_writing_is_a_consistent_copy(live_database, tmp_path, capsys):
    path, stop = live_database
    copy = tmp_path / "backups" / "copy.db"
    assert main(["--database-url", f"sqlite:///{path}", "db", "backup", str(copy)]) == 0
    assert f"backup written to {copy}" in capsys.readouterr().out
    acknowledged = stop()
    copied = stored_token_names(copy)
    assert 20 <= len(copied) <= len(acknowledged)
    with sqlite3.connect(copy) as connection:
        events = connection.execute(
            "SELECT count(*) FROM audit_event WHERE action = 'token.create'"
        ).fetchone()[0]
        assert connection.execute("PRAGMA journal_mode").fetchone() == ("delete",)
    assert events == len(copied)  # a snapshot: each copied token with its audit event
    assert set(acknowledged) <= stored_token_names(path)
    assert sorted(os.listdir(copy.parent)) == ["copy.db"]  # no temporary file left
