"""Faults against real processes, on SQLite and PostgreSQL: two server processes on one
database with concurrent uploads; ``kill -9`` of a server during uploads and of
``polarsvc import`` half-way; an online backup while a server writes. After each: the
database passes its integrity check, every acknowledged upload is stored (and nothing else
beyond the uploads in flight at the kill), every stored revision still hashes to its content
hash, and the audit trail holds exactly one ``polar.store`` event per revision.

The server scenarios run with each server as one process and as ``serve --workers 2``
(uvicorn's supervisor and two worker processes; a ``kill -9`` goes to the whole process
group, and the test checks that no process of it is left and nothing answers on its port).

Bounded: a few hundred small uploads per test. The figures of the last run are printed and
recorded in DEVELOPERS.md.
"""

from __future__ import annotations

import sqlite3
import subprocess
import threading
import time
from collections.abc import Iterator
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import httpx
import pytest
from sqlalchemy import func, select, text

from polarsvc.store import polars as polar_store
from polarsvc.store.airfoils import create_family
from polarsvc.store.audit import Actor
from polarsvc.store.db import make_engine, make_session_factory, session_scope, upgrade_database
from polarsvc.store.models import AuditEvent, PolarRevision
from tests.api.conftest import Tokens, make_tokens
from tests.serverproc import Server, polarsvc_command, start_server

THREADS = 4
UPLOADS_PER_THREAD = 25

WORKERS = pytest.mark.parametrize(
    "workers", [1, 2], ids=["one-process", "workers-2"],
)
"""Servers as one process, and as ``serve --workers 2``."""


def serve_args(database_url: str, workers: int) -> list[str]:
    """``serve`` arguments on ``database_url`` with ``workers`` processes."""
    args = ["--database-url", database_url]
    return args if workers == 1 else [*args, "--workers", str(workers)]


def label(database_url: str, workers: int) -> str:
    return f"{database_url.split(':')[0]}, {workers} worker{'s' if workers > 1 else ''}"


FAMILY = "skua-fault"


def polar_csv(index: int) -> bytes:
    """A small synthetic table (test data, no source), distinct per ``index``: ten rows of an
    attached lift line of 0.11 per deg (about 2 pi per rad), so the upload checks pass."""
    rows = "".join(
        f"{alpha:.1f},{0.25 + 0.11 * alpha + index * 1e-6!r},{0.0072 + 0.00005 * alpha**2:.6f},"
        f"-0.08\n"
        for alpha in range(-8, 12, 2)
    )
    return (
        "# SYNTHETIC TEST DATA: fictional airfoil, not for design use\n"
        f"# airfoil: SKUA-F{index % 7}\n# family: {FAMILY}\n# thickness: 0.{21 + index % 7}\n"
        f"# reynolds: {1e6 + index * 1000.0}\n# mach: 0.0\n# surface: clean\n"
        "# source_kind: synthetic\n# reference: polarsvc fault tests\n"
        "alpha_deg,cl,cd,cm\n" + rows
    ).encode()


class Uploads:
    """Uploads from several threads; remembers the acknowledged content hashes."""

    def __init__(self, tokens: Tokens) -> None:
        self.headers = {**tokens.header("curator"), "Content-Type": "text/csv"}
        self.acknowledged: set[str] = set()
        self.attempted = 0
        self.failed = 0
        self.server_errors = 0
        self.lock = threading.Lock()

    def one(self, base: str, index: int, client: httpx.Client) -> None:
        with self.lock:
            self.attempted += 1
        try:
            answer = client.post(f"{base}/api/v1/polars", content=polar_csv(index),
                                 headers=self.headers, timeout=60)
        except httpx.HTTPError:
            with self.lock:
                self.failed += 1
            return
        with self.lock:
            if answer.status_code in (200, 201):
                for stored in answer.json()["stored"]:
                    self.acknowledged.add(stored["content_hash"])
            else:
                self.failed += 1
                self.server_errors += answer.status_code >= 500

    def run(self, bases: list[str], start: int, count: int, stop: threading.Event | None = None
            ) -> None:
        with httpx.Client() as client:
            for index in range(start, start + count):
                if stop is not None and stop.is_set():
                    return
                self.one(bases[index % len(bases)], index, client)


@pytest.fixture
def prepared(database_url: str) -> Iterator[tuple[str, Tokens]]:
    engine = make_engine(database_url)
    upgrade_database(engine)
    factory = make_session_factory(engine)
    tokens = make_tokens(factory)
    with session_scope(factory, write=True) as session:
        create_family(session, name=FAMILY, actor=Actor(name="fault-tests", role="curator",
                                                        remote_addr=None))
    engine.dispose()
    yield database_url, tokens


def check_store(database_url: str) -> dict[str, int]:
    """Integrity of the database: SQLite's own check, every revision re-hashed, one store
    event per revision and none for anything else. Returns the counts."""
    engine = make_engine(database_url)
    try:
        factory = make_session_factory(engine)
        with session_scope(factory, write=False) as session:
            if engine.dialect.name == "sqlite":
                assert session.execute(text("PRAGMA integrity_check")).scalar() == "ok"
            revisions = session.scalars(select(PolarRevision)).all()
            for revision in revisions:
                polar_store.verify_revision(revision)
            stored = {r.content_hash for r in revisions}
            events = session.scalars(
                select(AuditEvent.object_key).where(AuditEvent.action == "polar.store")
            ).all()
            assert sorted(events) == sorted(stored), "one polar.store event per revision"
            total_events = session.scalar(select(func.count()).select_from(AuditEvent))
        return {"revisions": len(stored), "events": int(total_events or 0),
                "hashes": stored}  # type: ignore[dict-item]
    finally:
        engine.dispose()


def _servers(tmp_path: Path, database_url: str, count: int, workers: int) -> list[Server]:
    """``count`` servers on ``database_url``, started side by side (each waits for its health
    check)."""
    with ThreadPoolExecutor(count) as pool:
        starts = [pool.submit(start_server, serve_args(database_url, workers), cwd=tmp_path,
                              name=f"server{index}") for index in range(count)]
    servers = [start.result() for start in starts if start.exception() is None]
    if len(servers) < count:
        for server in servers:
            server.stop()
        raise next(start.exception() for start in starts if start.exception() is not None)
    return servers


@WORKERS
def test_two_servers_on_one_database_store_every_acknowledged_upload(prepared, tmp_path,
                                                                      workers):
    database_url, tokens = prepared
    servers = _servers(tmp_path, database_url, 2, workers)
    uploads = Uploads(tokens)
    started = time.monotonic()
    try:
        bases = [s.base for s in servers]
        with ThreadPoolExecutor(THREADS) as pool:
            for thread in range(THREADS):
                pool.submit(uploads.run, bases, thread * UPLOADS_PER_THREAD, UPLOADS_PER_THREAD)
    finally:
        for server in servers:
            server.stop()
    elapsed = time.monotonic() - started
    counts = check_store(database_url)
    print(f"two servers ({label(database_url, workers)}): {uploads.attempted} uploads, "
          f"{len(uploads.acknowledged)} acknowledged, {counts['revisions']} stored, "
          f"{uploads.failed} refused, {elapsed:.1f} s")
    assert uploads.server_errors == 0 and uploads.failed == 0
    assert len(uploads.acknowledged) == THREADS * UPLOADS_PER_THREAD
    assert counts["hashes"] == uploads.acknowledged


@WORKERS
def test_kill_9_during_uploads_loses_no_acknowledged_upload(prepared, tmp_path, workers):
    database_url, tokens = prepared
    server = start_server(serve_args(database_url, workers), cwd=tmp_path)
    started = time.monotonic()
    uploads = Uploads(tokens)
    stop = threading.Event()
    try:
        with ThreadPoolExecutor(THREADS) as pool:
            for thread in range(THREADS):
                pool.submit(uploads.run, [server.base], thread * 1000, 1000, stop)
            deadline = time.monotonic() + 60
            while len(uploads.acknowledged) < 40 and time.monotonic() < deadline:
                time.sleep(0.05)
            server.kill()
            stop.set()
    finally:
        server.kill()
    # the whole process group died with the supervisor: no worker left, the port closed
    assert server.group_alive() == [] and not server.port_open()
    counts = check_store(database_url)
    print(f"kill -9 during uploads ({label(database_url, workers)}): {uploads.attempted} "
          f"attempted, {len(uploads.acknowledged)} acknowledged, {counts['revisions']} stored, "
          f"{time.monotonic() - started:.1f} s")
    assert len(uploads.acknowledged) >= 40
    assert uploads.acknowledged <= counts["hashes"]
    # beyond the acknowledged: at most the uploads in flight when the server died
    assert len(counts["hashes"] - uploads.acknowledged) <= THREADS
    # the server starts again on the same database and takes uploads (one process: what is
    # checked is the database left by the kill)
    again = start_server(["--database-url", database_url], cwd=tmp_path, name="restarted")
    try:
        uploads.run([again.base], 5000, 3)
    finally:
        again.stop()
    assert len(check_store(database_url)["hashes"] - counts["hashes"]) == 3


def test_kill_9_during_an_import_leaves_whole_files_only(prepared, tmp_path):
    database_url, _ = prepared
    folder = tmp_path / "tables"
    folder.mkdir()
    files = 40
    for index in range(files):
        (folder / f"table_{index:03d}.csv").write_bytes(polar_csv(index))
    log = (tmp_path / "import.log").open("w")
    process = subprocess.Popen(
        polarsvc_command("--database-url", database_url, "import", str(folder)),
        cwd=tmp_path, stdout=log, stderr=subprocess.STDOUT,
    )
    engine = make_engine(database_url)
    try:
        deadline = time.monotonic() + 120
        stored = 0
        while time.monotonic() < deadline and process.poll() is None:
            with engine.connect() as connection:
                stored = connection.execute(
                    select(func.count()).select_from(PolarRevision)).scalar() or 0
            if stored >= 5:
                break
            time.sleep(0.05)
        process.kill()
        process.wait(timeout=20)
    finally:
        engine.dispose()
        log.close()
    counts = check_store(database_url)
    print(f"kill -9 during import ({database_url.split(':')[0]}): {counts['revisions']} of "
          f"{files} files stored when killed")
    assert 0 < counts["revisions"] < files, "the import was not interrupted half-way"
    # the same import again completes: every file stored once
    finished = subprocess.run(
        polarsvc_command("--database-url", database_url, "import", str(folder)),
        cwd=tmp_path, capture_output=True, text=True, timeout=300,
    )
    assert finished.returncode == 0, finished.stdout + finished.stderr
    assert check_store(database_url)["revisions"] == files


@WORKERS
def test_online_backup_while_a_server_writes(prepared, tmp_path, workers):
    database_url, tokens = prepared
    if not database_url.startswith("sqlite"):
        pytest.skip("db backup copies a SQLite file; PostgreSQL has its own tools")
    server = start_server(serve_args(database_url, workers), cwd=tmp_path)
    started = time.monotonic()
    uploads = Uploads(tokens)
    stop = threading.Event()
    destination = tmp_path / "backup.db"
    try:
        with ThreadPoolExecutor(THREADS) as pool:
            for thread in range(THREADS):
                pool.submit(uploads.run, [server.base], thread * 1000, 1000, stop)
            deadline = time.monotonic() + 120
            while len(uploads.acknowledged) < 20 and time.monotonic() < deadline:
                time.sleep(0.05)
            assert len(uploads.acknowledged) >= 20, (
                f"{uploads.failed} of {uploads.attempted} uploads refused before the backup")
            backup = subprocess.run(
                polarsvc_command("--database-url", database_url, "db", "backup",
                                 str(destination)),
                cwd=tmp_path, capture_output=True, text=True, timeout=120,
            )
            stop.set()
    finally:
        server.stop()
    assert backup.returncode == 0, backup.stdout + backup.stderr
    with sqlite3.connect(destination) as connection:
        assert connection.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    copied = check_store(f"sqlite:///{destination}")
    live = check_store(database_url)
    print(f"backup during writes ({label(database_url, workers)}): "
          f"{len(uploads.acknowledged)} acknowledged, {live['revisions']} stored, "
          f"{copied['revisions']} in the backup, {time.monotonic() - started:.1f} s")
    assert copied["hashes"] <= live["hashes"]
    assert uploads.acknowledged <= live["hashes"]


def test_backup_onto_the_live_file_is_refused_and_harms_nothing(prepared, tmp_path):
    database_url, tokens = prepared
    if not database_url.startswith("sqlite"):
        pytest.skip("db backup copies a SQLite file")
    server = start_server(["--database-url", database_url], cwd=tmp_path)
    uploads = Uploads(tokens)
    try:
        uploads.run([server.base], 0, 10)
        live_file = database_url.removeprefix("sqlite:///")
        backup = subprocess.run(
            polarsvc_command("--database-url", database_url, "db", "backup", live_file),
            cwd=tmp_path, capture_output=True, text=True, timeout=120,
        )
        uploads.run([server.base], 100, 10)
    finally:
        server.stop()
    assert backup.returncode != 0
    assert check_store(database_url)["hashes"] == uploads.acknowledged
