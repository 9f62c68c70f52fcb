"""Concurrent uploads from several threads through the service on SQLite: nothing lost, no
"database is locked" (SQLite WAL with BEGIN IMMEDIATE writers, see DEVELOPERS.md)."""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor

from sqlalchemy import func, select

from polarsvc.store.db import session_scope
from polarsvc.store.models import AuditEvent, PolarRevision
from tests.plausible import plausible_rows

THREADS = 8
UPLOADS_PER_THREAD = 6


def polar_file(thread: int, index: int) -> bytes:
    """A small invented table (test data, no source), distinct per thread and index."""
    lift = 0.0001 * (thread * UPLOADS_PER_THREAD + index)
    thickness = 0.20 + 0.01 * (thread % 20)  # one airfoil per thickness in a family
    return (
        f"# airfoil: SKUA-C{thread}\n# family: skua\n# thickness: {thickness:.2f}\n"
        f"# reynolds: {2e6 + index * 1e5}\n# mach: 0\n# source_kind: synthetic\n"
        + plausible_rows(lift)
    ).encode()


def test_concurrent_uploads_lose_nothing(client, tokens, prepared_db):
    headers = {**tokens.header("curator"), "Content-Type": "text/csv"}
    created = client.post("/api/v1/families", json={"name": "skua"},
                          headers=tokens.header("curator"))
    assert created.status_code == 201
    shared = polar_file(99, 0)

    def work(thread: int) -> list[int]:
        codes = []
        for index in range(UPLOADS_PER_THREAD):
            codes.append(client.post("/api/v1/polars", content=polar_file(thread, index),
                                     headers=headers).status_code)
            codes.append(client.post("/api/v1/polars", content=shared, headers=headers
                                     ).status_code)
        return codes

    with ThreadPoolExecutor(THREADS) as pool:
        codes = [code for result in pool.map(work, range(THREADS)) for code in result]
    assert all(code in (200, 201) for code in codes), sorted(set(codes))
    with session_scope(prepared_db[1], write=False) as session:
        stored = session.scalar(select(func.count()).select_from(PolarRevision))
        store_events = session.scalar(
            select(func.count()).select_from(AuditEvent).where(AuditEvent.action == "polar.store")
        )
    assert stored == THREADS * UPLOADS_PER_THREAD + 1
    assert store_events == stored
