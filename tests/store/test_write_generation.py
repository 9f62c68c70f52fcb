"""The write generation that keeps request resolutions: derived-table cache writes leave it
unchanged (they change no input), every other write moves it; on SQLite it is read from the
partial index of those writes (plan text: SQLite documentation, "EXPLAIN QUERY PLAN",
sqlite.org/eqp.html)."""

from __future__ import annotations

import numpy as np
import pytest
from sqlalchemy import Engine
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.pipeline import write_generation
from polarsvc.store.audit import Actor
from polarsvc.store.db import session_scope
from polarsvc.store.derived import put_derived
from polarsvc.store.polars import set_review_state, store_polar
from tests.store.conftest import CURATOR, SYNTHETIC, small_polar

SERVICE = Actor(name="system", role="system", remote_addr=None)


def test_cache_writes_leave_the_generation_and_other_writes_move_it(
    seeded: sessionmaker[Session],
) -> None:
    with session_scope(seeded, write=True) as session:
        revision, _ = store_polar(session, airfoil_name="SKUA-210", polar=small_polar(),
                                  provenance=SYNTHETIC, actor=CURATOR)
        revision_id, revision_hash = revision.id, revision.content_hash
    with session_scope(seeded, write=False) as session:
        before = write_generation(session)
    for step in (1.0, 2.0):
        with session_scope(seeded, write=True) as session:
            _, created = put_derived(
                session, recipe={"kind": "resampled", "step": step}, kind="resampled",
                alpha_deg=np.arange(-8.0, 8.5, step),
                columns={"cl": np.zeros(int(16 / step) + 1)},
                input_revision_ids=[revision_id], actor=SERVICE,
            )
            assert created
    with session_scope(seeded, write=False) as session:
        assert write_generation(session) == before
    with session_scope(seeded, write=True) as session:
        set_review_state(session, content_hash=revision_hash, state="approved", actor=CURATOR)
    with session_scope(seeded, write=False) as session:
        assert write_generation(session) > before


def test_generation_is_read_from_the_partial_index(engine: Engine) -> None:
    if engine.dialect.name != "sqlite":
        pytest.skip("the plan checked is SQLite's")
    from sqlalchemy import func, select, text

    from polarsvc.store.models import INPUT_WRITES, AuditEvent

    statement = select(func.max(AuditEvent.id)).where(text(INPUT_WRITES))
    compiled = statement.compile(engine)
    with engine.connect() as connection:
        plan = [row[3] for row in connection.exec_driver_sql(f"EXPLAIN QUERY PLAN {compiled}")]
    # one search of the partial index (no SCAN of the table)
    assert len(plan) == 1 and plan[0].startswith("SEARCH audit_event USING "), plan
    assert plan[0].endswith("INDEX ix_audit_event_input_writes"), plan
