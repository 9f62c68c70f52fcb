"""Who sees whom: the names of tokens (the actors of the audit trail, the ``created_by`` of
revisions and blades) and client addresses are shown to admins only. Everyone else sees an
actor's role, and no token-management events at all (their object is a token name). One rule
for the API and the pages."""

from __future__ import annotations

import datetime as dt
import json
from typing import Any

from sqlalchemy.orm import Session

from polarsvc.api.deps import Principal
from polarsvc.store import audit as audit_store
from polarsvc.store.models import AuditEvent

IDENTITY_ROLES = frozenset({"admin"})
"""Roles that see token names and client addresses."""
TOKEN_OBJECT_KINDS = ("api_token",)
"""Audit object kinds whose key is a token name (hidden from the other roles)."""


def sees_identities(principal: Principal) -> bool:
    """Whether ``principal`` may see token names and client addresses."""
    return principal.role in IDENTITY_ROLES


def shown_name(principal: Principal, name: str | None) -> str | None:
    """A token name as ``principal`` may see it: the name for an admin, else None."""
    return name if sees_identities(principal) else None


def event_summary(event: AuditEvent, *, identities: bool) -> dict[str, Any]:
    """An audit event's public form; without ``identities`` the actor's name and the client
    address are None."""
    return {
        "id": event.id,
        "occurred_at": event.occurred_at.isoformat(),
        "actor": {"name": event.actor_name if identities else None, "role": event.actor_role},
        "action": event.action,
        "object": {"kind": event.object_kind, "key": event.object_key},
        "before_hash": event.before_hash,
        "after_hash": event.after_hash,
        "remote_addr": event.remote_addr if identities else None,
        "detail": json.loads(event.detail) if event.detail else {},
    }


LINEAGE_IDENTITY_KEYS = frozenset({"by", "uploaded_by"})
"""Keys of a lineage tree (:mod:`polarsvc.lineage`) that hold token names."""


def lineage_for(principal: Principal, tree: Any) -> Any:
    """A lineage tree as ``principal`` may see it: for others than admins, every
    :data:`LINEAGE_IDENTITY_KEYS` value is None (reviews keep the reviewer's role)."""
    if sees_identities(principal):
        return tree
    if isinstance(tree, dict):
        return {
            key: None if key in LINEAGE_IDENTITY_KEYS else lineage_for(principal, value)
            for key, value in tree.items()
        }
    if isinstance(tree, list):
        return [lineage_for(principal, item) for item in tree]
    return tree


class ActorFilterRefused(PermissionError):
    """Filtering the audit trail by actor (a token name) is an admin's query."""

    def __init__(self, role: str):
        super().__init__(f"filtering by actor needs the admin role; this is a {role}")


def audit_trail(
    session: Session,
    principal: Principal,
    *,
    since: dt.datetime | None = None,
    until: dt.datetime | None = None,
    object_key: str | None = None,
    actor: str | None = None,
    limit: int = audit_store.DEFAULT_QUERY_LIMIT,
    after_id: int | None = None,
) -> list[dict[str, Any]]:
    """The audit events ``principal`` may see, oldest first, each as :func:`event_summary`
    (after the event ``after_id`` when given: keyset pages).

    Raises
    ------
    ActorFilterRefused
        If ``actor`` is given by someone who does not see identities.
    """
    identities = sees_identities(principal)
    if actor is not None and not identities:
        raise ActorFilterRefused(principal.role)
    events = audit_store.query_events(
        session, since=since, until=until, object_key=object_key, actor=actor, limit=limit,
        exclude_object_kinds=() if identities else TOKEN_OBJECT_KINDS, after_id=after_id,
    )
    return [event_summary(event, identities=identities) for event in events]
