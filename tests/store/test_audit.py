"""The audit trail is append-only: the ORM and the database both refuse changes."""

from __future__ import annotations

import datetime as dt

import pytest
from sqlalchemy import delete, text, update
from sqlalchemy.exc import DatabaseError
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.store.audit import Actor, query_events, record_event
from polarsvc.store.db import session_scope
from polarsvc.store.errors import AppendOnlyViolation
from polarsvc.store.models import AuditEvent, utc_now

from .conftest import CURATOR


def _one_event(factory: sessionmaker[Session]) -> int:
    with session_scope(factory, write=True) as session:
        event = record_event(
            session,
            actor=CURATOR,
            action="test.write",
            object_kind="thing",
            object_key="k1",
            detail={"note": "<b>literal</b>"},
        )
        return event.id


def test_orm_refuses_update_and_delete(session_factory: sessionmaker[Session]) -> None:
    event_id = _one_event(session_factory)
    with pytest.raises(AppendOnlyViolation), session_scope(session_factory, write=True) as s:
        s.get(AuditEvent, event_id).action = "changed"
        s.flush()
    with pytest.raises(AppendOnlyViolation), session_scope(session_factory, write=True) as s:
        s.delete(s.get(AuditEvent, event_id))
        s.flush()
    with session_scope(session_factory, write=False) as session:
        assert session.get(AuditEvent, event_id).action == "test.write"


@pytest.mark.parametrize(
    "statement",
    [
        text("UPDATE audit_event SET action = 'changed'"),
        text("DELETE FROM audit_event"),
        update(AuditEvent).values(actor_name="mallory"),  # ORM bulk: no mapper events
        delete(AuditEvent),
    ],
    ids=["raw-update", "raw-delete", "bulk-update", "bulk-delete"],
)
def test_database_refuses_update_and_delete(
    session_factory: sessionmaker[Session], statement
) -> None:
    _one_event(session_factory)
    with (
        pytest.raises(DatabaseError, match="append-only"),
        session_scope(session_factory, write=True) as session,
    ):
        session.execute(statement)
    with session_scope(session_factory, write=False) as session:
        events = query_events(session)
        assert [(e.action, e.actor_name) for e in events] == [("test.write", CURATOR.name)]


def test_truncate_refused_on_postgresql(session_factory: sessionmaker[Session]) -> None:
    if session_factory.kw["bind"].dialect.name != "postgresql":
        pytest.skip("SQLite has no TRUNCATE")
    _one_event(session_factory)
    with (
        pytest.raises(DatabaseError, match="append-only"),
        session_scope(session_factory, write=True) as session,
    ):
        session.execute(text("TRUNCATE audit_event"))


def test_event_fields_and_queries(session_factory: sessionmaker[Session]) -> None:
    other = Actor(name="skerry-admin", role="admin", remote_addr=None)
    start = utc_now()
    with session_scope(session_factory, write=True) as session:
        record_event(
            session,
            actor=CURATOR,
            action="a",
            object_kind="x",
            object_key="k1",
            before_hash="0" * 64,
            after_hash="1" * 64,
        )
        record_event(session, actor=other, action="b", object_kind="x", object_key="k2")
        record_event(session, actor=other, action="c", object_kind="x", object_key="k1")
    with session_scope(session_factory, write=False) as session:
        events = query_events(session)
        assert [e.action for e in events] == ["a", "b", "c"]
        first = events[0]
        assert (first.actor_role, first.remote_addr, first.detail) == ("curator", "127.0.0.1", "{}")
        assert (first.before_hash, first.after_hash) == ("0" * 64, "1" * 64)
        assert first.occurred_at.tzinfo is not None
        assert start <= first.occurred_at <= utc_now()
        assert [e.action for e in query_events(session, object_key="k1")] == ["a", "c"]
        assert [e.action for e in query_events(session, actor="skerry-admin")] == ["b", "c"]
        assert [e.action for e in query_events(session, limit=1)] == ["a"]
        later = utc_now() + dt.timedelta(hours=1)
        assert query_events(session, since=later) == []
        assert len(query_events(session, since=start, until=later)) == 3
        with pytest.raises(ValueError, match="limit"):
            query_events(session, limit=0)
