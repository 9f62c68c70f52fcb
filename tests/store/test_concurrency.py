"""Concurrent writers: nothing lost, no duplicate, no "database is locked"."""

from __future__ import annotations

import threading
from collections.abc import Callable

import numpy as np
from sqlalchemy import func, select
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.store.db import session_scope
from polarsvc.store.derived import put_derived
from polarsvc.store.models import AuditEvent, DerivedTable, PolarRevision
from polarsvc.store.polars import store_polar

from .conftest import CURATOR, SYNTHETIC, small_polar

THREADS = 8
UPLOADS_PER_THREAD = 6


def _run_together(work: Callable[[int], None]) -> list[BaseException]:
    barrier = threading.Barrier(THREADS)
    errors: list[BaseException] = []

    def run(index: int) -> None:
        try:
            barrier.wait()
            work(index)
        except BaseException as exc:  # reported by the caller
            errors.append(exc)

    threads = [threading.Thread(target=run, args=(i,)) for i in range(THREADS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    return errors


def _count(session: Session, model: type) -> int:
    return session.scalar(select(func.count()).select_from(model)) or 0


def test_concurrent_uploads_lose_nothing(seeded: sessionmaker[Session]) -> None:
    created: list[tuple[int, int, bool]] = []
    shared: list[tuple[str, bool]] = []
    lock = threading.Lock()
    with session_scope(seeded, write=False) as session:
        events_before = _count(session, AuditEvent)

    def work(thread: int) -> None:
        for upload in range(UPLOADS_PER_THREAD):
            distinct = small_polar(1e-4 * (thread * UPLOADS_PER_THREAD + upload))
            with session_scope(seeded, write=True) as session:
                _, was_created = store_polar(
                    session,
                    airfoil_name="SKUA-210",
                    polar=distinct,
                    provenance=SYNTHETIC,
                    actor=CURATOR,
                )
            with session_scope(seeded, write=True) as session:
                revision, shared_created = store_polar(
                    session,
                    airfoil_name="SKUA-300",
                    polar=small_polar(),
                    provenance=SYNTHETIC,
                    actor=CURATOR,
                )
                key = revision.content_hash
            with lock:
                created.append((thread, upload, was_created))
                shared.append((key, shared_created))

    errors = _run_together(work)
    assert errors == []  # in particular no OperationalError "database is locked"
    assert len(created) == THREADS * UPLOADS_PER_THREAD and all(c for *_, c in created)
    assert len({key for key, _ in shared}) == 1
    assert sum(1 for _, was_created in shared if was_created) == 1
    with session_scope(seeded, write=False) as session:
        assert _count(session, PolarRevision) == THREADS * UPLOADS_PER_THREAD + 1
        # exactly one audit event per created revision
        assert _count(session, AuditEvent) == events_before + THREADS * UPLOADS_PER_THREAD + 1


def test_concurrent_put_of_one_recipe_leaves_one_row(seeded: sessionmaker[Session]) -> None:
    with session_scope(seeded, write=True) as session:
        revision, _ = store_polar(
            session,
            airfoil_name="SKUA-210",
            polar=small_polar(),
            provenance=SYNTHETIC,
            actor=CURATOR,
        )
    alpha = np.linspace(-180.0, 180.0, 721)
    results: list[tuple[int, bool]] = []
    lock = threading.Lock()

    def work(_: int) -> None:
        with session_scope(seeded, write=True) as session:
            table, was_created = put_derived(
                session,
                recipe={"kind": "resampled", "step_deg": 0.5},
                kind="resampled",
                alpha_deg=alpha,
                columns={"cl": np.sin(np.radians(alpha))},
                input_revision_ids=[revision.id],
                actor=CURATOR,
            )
            table_id = table.id
        with lock:
            results.append((table_id, was_created))

    assert _run_together(work) == []
    assert len({table_id for table_id, _ in results}) == 1
    assert sum(1 for _, was_created in results if was_created) == 1
    with session_scope(seeded, write=False) as session:
        assert _count(session, DerivedTable) == 1
