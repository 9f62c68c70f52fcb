"""The append-only audit trail: one event per write, in the same transaction as the write."""

from __future__ import annotations

import contextlib
import datetime as dt
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from polarsvc.hashing import canonical_json
from polarsvc.store.models import AuditEvent

DEFAULT_QUERY_LIMIT = 100
MAX_QUERY_LIMIT = 10000


@dataclass(frozen=True)
class Actor:
    """Who performs a write: token name, role and (when known) the client address."""

    name: str
    role: str
    remote_addr: str | None = None


SYSTEM_ACTOR = Actor(name="system", role="admin", remote_addr=None)
"""The actor of writes made by the service itself (start-up seeding, command line)."""

_REPLAY_KEY = "polarsvc.audit.replaying"


@contextlib.contextmanager
def replaying_history(session: Session) -> Iterator[None]:
    """Within this block :func:`record_event` adds nothing to ``session``.

    Only for re-creating objects whose audit events already exist and are re-inserted as
    they were by the caller, in the same transaction (the bundle import): the storage
    functions then run unchanged without writing a second, misdated copy of the history.
    """
    previous = session.info.get(_REPLAY_KEY, False)
    session.info[_REPLAY_KEY] = True
    try:
        yield
    finally:
        session.info[_REPLAY_KEY] = previous


def record_event(
    session: Session,
    *,
    actor: Actor,
    action: str,
    object_kind: str,
    object_key: str,
    before_hash: str | None = None,
    after_hash: str | None = None,
    detail: Mapping[str, Any] | None = None,
) -> AuditEvent:
    """Append one audit event to the session's transaction (flushed, not committed).

    Parameters
    ----------
    actor : Actor
        Who writes.
    action : str
        What was done, e.g. ``"polar.store"``, ``"polar.review"``, ``"token.revoke"``.
    object_kind, object_key : str
        The object written, e.g. ``"polar_revision"`` and its content hash.
    before_hash, after_hash : str, optional
        Content hashes before and after the write, where they apply.
    detail : mapping, optional
        Anything else worth keeping, stored as canonical JSON.
    """
    event = AuditEvent(
        actor_name=actor.name,
        actor_role=actor.role,
        action=action,
        object_kind=object_kind,
        object_key=object_key,
        before_hash=before_hash,
        after_hash=after_hash,
        remote_addr=actor.remote_addr,
        detail=canonical_json(dict(detail or {})).decode("utf-8"),
    )
    if session.info.get(_REPLAY_KEY):
        return event  # see replaying_history: the caller re-inserts the original event
    session.add(event)
    session.flush()
    return event


def query_events(
    session: Session,
    *,
    since: dt.datetime | None = None,
    until: dt.datetime | None = None,
    object_key: str | None = None,
    actor: str | None = None,
    limit: int = DEFAULT_QUERY_LIMIT,
    after_id: int | None = None,
    exclude_object_kinds: Sequence[str] = (),
) -> Sequence[AuditEvent]:
    """Audit events in the order they were recorded (oldest first).

    Parameters
    ----------
    since, until : datetime, optional
        Timezone-aware bounds: ``since <= occurred_at < until``.
    object_key : str, optional
        Only events about this object (e.g. a content hash or token name).
    actor : str, optional
        Only events by this actor name.
    limit : int
        At most this many events, 1..10000.
    after_id : int, optional
        Only events recorded after the one with this id (keyset pagination: pass the id
        of the last event of the previous page).
    exclude_object_kinds : sequence of str
        Leave out events about objects of these kinds (e.g. ``api_token``).

    Raises
    ------
    ValueError
        If ``limit`` is outside 1..10000.
    """
    if not 1 <= limit <= MAX_QUERY_LIMIT:
        raise ValueError(f"parameter 'limit': must lie in 1..{MAX_QUERY_LIMIT}, got {limit}")
    statement = select(AuditEvent)
    if since is not None:
        statement = statement.where(AuditEvent.occurred_at >= since)
    if until is not None:
        statement = statement.where(AuditEvent.occurred_at < until)
    if object_key is not None:
        statement = statement.where(AuditEvent.object_key == object_key)
    if actor is not None:
        statement = statement.where(AuditEvent.actor_name == actor)
    if after_id is not None:
        statement = statement.where(AuditEvent.id > int(after_id))
    if exclude_object_kinds:
        statement = statement.where(AuditEvent.object_kind.not_in(list(exclude_object_kinds)))
    statement = statement.order_by(AuditEvent.id).limit(limit)
    return session.scalars(statement).all()
