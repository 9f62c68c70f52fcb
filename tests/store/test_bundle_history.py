# ruff: noqa: F811 (fixtures imported from test_bundle are parameters here)
"""Bundle import does not trust audit.csv: the bundle's events are imported as history under
one ``bundle.import`` event naming the manifest hash, labelled so that a forged actor never
passes as a local one; the history must agree with the content (every revision, blade,
family and airfoil has its creating event and every such event names one of them, by the
revision's recorded creator) or the bundle is refused; imported events get ids in time order.

A forger here rewrites audit.csv and then the manifest's checksums (the manifest is not
signed: anyone can recompute SHA-256, FIPS 180-4, with :mod:`hashlib`)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import select
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.bundle import (
    IMPORT_ACTION,
    BundleError,
    _read_csv,
    _write_csv,
    export_bundle,
    import_bundle,
)
from polarsvc.store.audit import Actor, query_events
from polarsvc.store.db import session_scope
from polarsvc.store.models import AuditEvent
from polarsvc.store.tokens import create_token

from .test_bundle import (  # noqa: F401 (fixtures)
    IMPORTER,
    _assert_refused,
    rewrite_manifest,
    source,
    target_factory,
)

LOCAL_ADMIN = "skerry-admin"


def _rows(bundle: Path) -> list[list[str | None]]:
    return _read_csv((bundle / "audit.csv").read_text(encoding="utf-8"), "audit.csv")


def _write_rows(bundle: Path, rows: list[list[str | None]]) -> None:
    (bundle / "audit.csv").write_text(_write_csv(rows), encoding="utf-8")
    rewrite_manifest(bundle, "audit.csv")


def _exported(source: dict[str, Any], tmp_path: Path) -> Path:
    bundle = tmp_path / "bundle"
    export_bundle(source["factory"], bundle)
    return bundle


def _events(factory: sessionmaker[Session]) -> list[AuditEvent]:
    with session_scope(factory, write=False) as session:
        return list(session.scalars(select(AuditEvent).order_by(AuditEvent.id)))


def test_history_is_imported_under_one_import_event(source, target_factory, tmp_path):
    bundle = _exported(source, tmp_path)
    rows = _rows(bundle)[1:]
    report = import_bundle(target_factory, bundle, actor=IMPORTER)
    events = _events(target_factory)
    head, history = events[0], events[1:]
    assert (head.action, head.object_key, head.actor_name) == (
        IMPORT_ACTION, report.bundle_sha256, IMPORTER.name
    )
    assert len(history) == len(rows)
    for event, row in zip(history, rows, strict=True):
        original = dict(zip(("id", "occurred_at", "actor_name", "actor_role", "action",
                             "object_kind", "object_key", "before_hash", "after_hash",
                             "remote_addr", "detail"), row, strict=True))
        assert event.actor_role == "imported"
        assert event.actor_name == f"imported:{original['actor_name']}"
        assert event.remote_addr is None
        assert (event.action, event.object_kind, event.object_key, event.after_hash) == (
            original["action"], original["object_kind"], original["object_key"],
            original["after_hash"],
        )
        detail = json.loads(event.detail)
        imported = detail["imported"]
        assert imported["bundle"] == report.bundle_sha256
        assert imported["import_event"] == head.id
        assert imported["actor"] == {"name": original["actor_name"],
                                     "role": original["actor_role"]}
        assert imported["id"] == int(original["id"])
        assert imported["occurred_at"] == original["occurred_at"]
        assert detail["original_detail"] == json.loads(original["detail"])


def test_a_forged_actor_does_not_pass_as_a_local_one(source, target_factory, tmp_path):
    bundle = _exported(source, tmp_path)
    rows = _rows(bundle)
    header, body = rows[0], rows[1:]
    actor_column, role_column = header.index("actor_name"), header.index("actor_role")
    for row in body:  # every event claims to be the local administrator's
        row[actor_column], row[role_column] = LOCAL_ADMIN, "admin"
    _write_rows(bundle, [header, *body])
    # the creators recorded in revisions.json and blades.json no longer match: refused
    _assert_refused(target_factory, bundle, "audit.csv", "created by")


def test_forged_actors_consistent_with_the_content_stay_labelled(
    source, target_factory, tmp_path
):
    """Even a forger who rewrites revisions.json as well gets events that read as imported
    history, never as the local actor's own."""
    bundle = _exported(source, tmp_path)
    rows = _rows(bundle)
    header, body = rows[0], rows[1:]
    actor_column, role_column = header.index("actor_name"), header.index("actor_role")
    for row in body:
        if row[header.index("action")] == "token.create":
            row[actor_column], row[role_column] = LOCAL_ADMIN, "admin"
    _write_rows(bundle, [header, *body])
    with session_scope(target_factory, write=True) as session:
        create_token(session, name="local-ci", role="reader",
                     actor=Actor(name=LOCAL_ADMIN, role="admin"))
    import_bundle(target_factory, bundle, actor=IMPORTER)
    with session_scope(target_factory, write=False) as session:
        local = query_events(session, actor=LOCAL_ADMIN, limit=1000)
        assert [e.action for e in local] == ["token.create", IMPORT_ACTION]  # both local
        assert local[0].object_key == "local-ci"
        forged = query_events(session, actor=f"imported:{LOCAL_ADMIN}", limit=1000)
        assert forged and all(e.actor_role == "imported" for e in forged)


def test_an_invented_store_event_is_refused(source, target_factory, tmp_path):
    bundle = _exported(source, tmp_path)
    rows = _rows(bundle)
    header = rows[0]
    invented = list(next(r for r in rows[1:] if r[header.index("action")] == "polar.store"))
    invented[header.index("id")] = "999999"
    invented[header.index("object_key")] = "ab" * 32
    invented[header.index("after_hash")] = "ab" * 32
    _write_rows(bundle, [*rows, invented])
    _assert_refused(target_factory, bundle, "audit.csv", "not in the bundle")


def test_a_review_of_an_unknown_revision_is_refused(source, target_factory, tmp_path):
    bundle = _exported(source, tmp_path)
    rows = _rows(bundle)
    header = rows[0]
    invented = list(next(r for r in rows[1:] if r[header.index("action")] == "polar.review"))
    invented[header.index("id")] = "999999"
    invented[header.index("object_key")] = "cd" * 32
    _write_rows(bundle, [*rows, invented])
    _assert_refused(target_factory, bundle, "audit.csv", "not in the bundle")


def test_a_revision_without_its_store_event_is_refused(source, target_factory, tmp_path):
    bundle = _exported(source, tmp_path)
    rows = _rows(bundle)
    header = rows[0]
    victim = source["superseding"]
    kept = [r for r in rows[1:] if not (r[header.index("action")] == "polar.store"
                                        and r[header.index("object_key")] == victim)]
    assert len(kept) == len(rows) - 2
    _write_rows(bundle, [header, *kept])
    _assert_refused(target_factory, bundle, "audit.csv", victim)


def test_a_store_event_listed_twice_is_refused(source, target_factory, tmp_path):
    bundle = _exported(source, tmp_path)
    rows = _rows(bundle)
    header = rows[0]
    twice = list(next(r for r in rows[1:] if r[header.index("action")] == "blade.store"))
    twice[header.index("id")] = "999999"
    _write_rows(bundle, [*rows, twice])
    _assert_refused(target_factory, bundle, "audit.csv", "2 store events")


def test_imported_history_keeps_ids_in_time_order(source, target_factory, tmp_path):
    """The target already holds an event made now; the bundle's events (made earlier) come
    after it, so they are stamped with the import time: id order is time order."""
    bundle = _exported(source, tmp_path)
    with session_scope(target_factory, write=True) as session:
        create_token(session, name="local-ci", role="reader", actor=IMPORTER)
    import_bundle(target_factory, bundle, actor=IMPORTER)
    events = _events(target_factory)
    times = [e.occurred_at for e in events]
    assert times == sorted(times)
    assert [e.id for e in events] == sorted(e.id for e in events)


@pytest.mark.parametrize("column", ["occurred_at", "id"])
def test_an_unreadable_history_row_is_refused(source, target_factory, tmp_path, column):
    bundle = _exported(source, tmp_path)
    rows = _rows(bundle)
    rows[1][rows[0].index(column)] = "yesterday"
    _write_rows(bundle, rows)
    with pytest.raises(BundleError) as caught:
        import_bundle(target_factory, bundle, actor=IMPORTER)
    assert caught.value.file == "audit.csv"
