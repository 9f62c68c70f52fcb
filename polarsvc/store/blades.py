"""Blade definitions: immutable revisions keyed by content hash."""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from polarsvc.hashing import blade_content_hash, canonical_json
from polarsvc.store._lookup import check_name, find_by_hash, insert_or_winner
from polarsvc.store.audit import Actor, record_event
from polarsvc.store.errors import InvalidValue, NotFound
from polarsvc.store.models import BladeDefinition
from polarsvc.store.paging import (
    DEFAULT_PAGE_SIZE,
    Page,
    check_limit,
    count_rows,
    decode_cursor,
    keyset_after,
    take_page,
)


def store_blade(
    session: Session, *, name: str, definition: Mapping[str, Any], actor: Actor
) -> tuple[BladeDefinition, bool]:
    """Store a blade definition revision, or return the identical stored one.

    Parameters
    ----------
    name : str
        The blade's name; several revisions may share it.
    definition : mapping
        JSON-able description (stations, radii [m], chords [m], airfoils...); stored as
        canonical JSON (:func:`polarsvc.hashing.canonical_json`).

    Returns
    -------
    (BladeDefinition, bool)
        The revision and whether it was created.

    Raises
    ------
    InvalidValue
        If the definition cannot be written as canonical JSON (NaN, unsupported types).
    """
    check_name("name", name)
    try:
        text = canonical_json(dict(definition)).decode("utf-8")
        content_hash = blade_content_hash(name=name, definition=definition)
    except (TypeError, ValueError) as exc:
        raise InvalidValue("definition", str(exc)) from None
    existing = _by_full_hash(session, content_hash)
    if existing is not None:
        return existing, False
    blade = BladeDefinition(
        name=name, content_hash=content_hash, definition=text, created_by=actor.name
    )
    blade, created = insert_or_winner(session, blade, lambda: _by_full_hash(session, content_hash))
    if not created:
        return blade, False
    record_event(
        session,
        actor=actor,
        action="blade.store",
        object_kind="blade_definition",
        object_key=content_hash,
        after_hash=content_hash,
        detail={"name": name},
    )
    return blade, True


def _by_full_hash(session: Session, content_hash: str) -> BladeDefinition | None:
    return session.scalars(
        select(BladeDefinition).where(BladeDefinition.content_hash == content_hash)
    ).one_or_none()


def blade_definition(blade: BladeDefinition) -> dict[str, Any]:
    """The stored definition as a mapping."""
    return json.loads(blade.definition)


def recompute_blade_hash(blade: BladeDefinition) -> str:
    """The content hash recomputed from the stored name and definition (equal to
    ``blade.content_hash`` unless the stored row was altered)."""
    return blade_content_hash(name=blade.name, definition=blade_definition(blade))


def get_blade(session: Session, key: str) -> BladeDefinition:
    """The blade revision whose hash is ``key`` or starts with it (at least 8 digits)."""
    return find_by_hash(session, BladeDefinition, "blade definition", key)


def latest_blade(session: Session, name: str) -> BladeDefinition:
    """The most recently stored revision of the blade called ``name``."""
    blade = session.scalars(
        select(BladeDefinition)
        .where(BladeDefinition.name == name)
        .order_by(BladeDefinition.id.desc())
        .limit(1)
    ).first()
    if blade is None:
        raise NotFound("blade", name)
    return blade


def list_blades(session: Session, *, name: str | None = None) -> Sequence[BladeDefinition]:
    """Blade revisions by name then storage order, optionally of one name."""
    statement = select(BladeDefinition)
    if name is not None:
        statement = statement.where(BladeDefinition.name == name)
    return session.scalars(statement.order_by(BladeDefinition.name, BladeDefinition.id)).all()


def page_blades(
    session: Session, *, after: str | None = None, limit: int = DEFAULT_PAGE_SIZE
) -> Page[BladeDefinition]:
    """One page of blade revisions by name then storage order; the total is counted."""
    limit = check_limit(limit)
    statement = select(BladeDefinition)
    if after is not None:
        name, blade_id = decode_cursor(after, (str, int))
        statement = statement.where(
            keyset_after((BladeDefinition.name, BladeDefinition.id), (name, blade_id))
        )
    statement = statement.order_by(BladeDefinition.name, BladeDefinition.id).limit(limit + 1)
    rows = session.scalars(statement).all()
    total = count_rows(session, select(func.count(BladeDefinition.id)), ("blades",))
    return take_page(rows, limit, lambda b: (b.name, b.id), total)


def blade_names(session: Session, *, limit: int = 1000) -> list[str]:
    """Distinct blade names in order (at most ``limit``), without reading definitions."""
    statement = (
        select(BladeDefinition.name).distinct().order_by(BladeDefinition.name).limit(limit)
    )
    return list(session.scalars(statement).all())
