"""Importing a checked bundle into an empty database, in one write transaction."""

from __future__ import annotations

from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.bundle.layout import (
    AIRFOILS_FILE,
    BLADES_FILE,
    FAMILIES_FILE,
    IMPORT_ACTION,
    REVISIONS_FILE,
    BundleError,
)
from polarsvc.bundle.read import (
    _Content,
    _parse_content,
    _read_files,
    check_history,
    original_actor,
)
from polarsvc.hashing import canonical_json
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import blades as blade_store
from polarsvc.store import polars as polar_store
from polarsvc.store.audit import Actor, record_event, replaying_history
from polarsvc.store.db import refresh_planner_statistics, session_scope
from polarsvc.store.errors import StoreError
from polarsvc.store.models import (
    NAME_LENGTH,
    Airfoil,
    AuditEvent,
    BladeDefinition,
    Family,
    PolarRevision,
)


@dataclass(frozen=True)
class ImportReport:
    """What an import did.

    ``unchanged`` is True when the database already held exactly the bundle's content; then
    nothing was written (no rows, no audit event).
    """

    bundle_sha256: str
    family: str | None
    families: int
    airfoils: int
    revisions: int
    blades: int
    audit_events: int
    unchanged: bool = False

    def as_dict(self) -> dict[str, Any]:
        return {
            "bundle_sha256": self.bundle_sha256,
            "family": self.family,
            "families": self.families,
            "airfoils": self.airfoils,
            "revisions": self.revisions,
            "blades": self.blades,
            "audit_events": self.audit_events,
            "unchanged": self.unchanged,
        }



def _holds_same_content(session: Session, content: _Content) -> bool:
    families = set(session.scalars(select(Family.name)))
    airfoils = set(session.scalars(select(Airfoil.name)))
    blades = set(session.scalars(select(BladeDefinition.content_hash)))
    stored = {
        revision.content_hash: (
            revision.review_state,
            revision.review_reason,
            None if revision.replaced_by is None else revision.replaced_by.content_hash,
        )
        for revision in session.scalars(select(PolarRevision))
    }
    wanted = {
        r.content_hash: (r.review_state, r.review_reason, r.replaced_by)
        for r in content.revisions
    }
    return (
        families == {f["name"] for f in content.families}
        and airfoils == {a["name"] for a in content.airfoils}
        and blades == {b["content_hash"] for b in content.blades}
        and stored == wanted
    )


def _restore(session: Session, content: _Content, actor: Actor) -> None:
    """Re-create the bundle's objects through the storage functions, without audit events
    (the bundle's own events are inserted afterwards)."""
    # The storage functions create objects "now" and as drafts; the historical fields they
    # cannot set (created_at of every row, the review state through its allowed transition)
    # are set below on the same ORM rows, in the same transaction.
    with replaying_history(session):
        for entry in content.families:
            try:
                family, _ = airfoil_store.get_or_create_family(
                    session, name=entry["name"], description=entry["description"], actor=actor
                )
            except StoreError as exc:
                raise BundleError(FAMILIES_FILE, f"family {entry['name']!r}: {exc}") from None
            family.created_at = entry["created_at"]
        for entry in content.airfoils:
            try:
                airfoil, _ = airfoil_store.create_airfoil(
                    session, name=entry["name"], thickness=entry["thickness"],
                    family=entry["family"], description=entry["description"],
                    coordinates=entry["coordinates"], actor=actor,
                )
            except StoreError as exc:
                raise BundleError(AIRFOILS_FILE, f"airfoil {entry['name']!r}: {exc}") from None
            airfoil.created_at = entry["created_at"]
        stored: dict[str, PolarRevision] = {}
        for item in content.revisions:
            try:
                revision, created = polar_store.store_polar(
                    session,
                    airfoil_name=item.airfoil,
                    polar=item.parsed.polar,
                    provenance=item.provenance,
                    supersedes_hash=item.supersedes,
                    actor=Actor(name=item.created_by, role=actor.role),
                )
            except StoreError as exc:
                raise BundleError(item.file, str(exc)) from None
            if revision.content_hash != item.content_hash:
                raise BundleError(
                    item.file,
                    f"the table with the provenance of {REVISIONS_FILE} hashes to "
                    f"{revision.content_hash}, not the recorded {item.content_hash}",
                )
            if not created:
                raise BundleError(REVISIONS_FILE, f"revision {item.content_hash} listed twice")
            revision.created_at = item.created_at
            stored[item.content_hash] = revision
        for item in content.revisions:
            if item.review_state == "draft":
                continue
            try:
                polar_store.set_review_state(
                    session,
                    content_hash=item.content_hash,
                    state=item.review_state,
                    reason=item.review_reason,
                    replaced_by_hash=item.replaced_by,
                    # the decision was accepted where the bundle was written
                    replacement_reason="as recorded in the bundle",
                    actor=actor,
                )
            except StoreError as exc:
                raise BundleError(
                    REVISIONS_FILE, f"revision {item.content_hash}: review: {exc}"
                ) from None
        for entry in content.blades:
            try:
                blade, created = blade_store.store_blade(
                    session, name=entry["name"], definition=entry["definition"],
                    actor=Actor(name=entry["created_by"], role=actor.role),
                )
            except StoreError as exc:
                raise BundleError(BLADES_FILE, f"blade {entry['content_hash']}: {exc}") from None
            if blade.content_hash != entry["content_hash"]:
                raise BundleError(
                    BLADES_FILE,
                    f"blade {entry['content_hash']}: its name and definition hash to "
                    f"{blade.content_hash}",
                )
            if not created:
                raise BundleError(BLADES_FILE, f"blade {entry['content_hash']} listed twice")
            blade.created_at = entry["created_at"]
    session.flush()


HISTORY_ROLE = "imported"
"""The actor role of events imported from a bundle (no token can hold it)."""
HISTORY_PREFIX = "imported:"
"""Prefix of the actor name of imported events (a local actor's name never carries it)."""


def _add_history(
    session: Session, content: _Content, bundle_sha256: str, import_event: AuditEvent
) -> None:
    """Insert the bundle's events as history after ``import_event``, in their recorded
    order: stamped now (so ids keep time order) by an ``imported:<name>`` actor of role
    ``imported``; the recorded id, time, actor, address and detail are kept in the detail."""
    rows = sorted(content.audit, key=lambda row: (row["occurred_at"], row["id"]))
    for row in rows:
        first = original_actor(row)
        detail = {
            "imported": {
                "bundle": bundle_sha256,
                "import_event": import_event.id,
                "id": row["id"],
                "occurred_at": row["occurred_at"].isoformat(),
                "actor": first,
                "remote_addr": row["remote_addr"],
            },
            "original_detail": row["detail"],
        }
        session.add(
            AuditEvent(
                actor_name=(HISTORY_PREFIX + first["name"])[:NAME_LENGTH],
                actor_role=HISTORY_ROLE,
                action=row["action"],
                object_kind=row["object_kind"],
                object_key=row["object_key"],
                before_hash=row["before_hash"],
                after_hash=row["after_hash"],
                remote_addr=None,
                detail=canonical_json(detail).decode("utf-8"),
            )
        )
        session.flush()  # one row at a time: each stamped after the one before


def import_bundle(factory: sessionmaker[Session], source: Path, *, actor: Actor) -> ImportReport:
    """Check a bundle and import it into an empty database, in one write transaction.

    Every file is checked against the manifest, every table is read and compared with
    ``revisions.json``, and every revision and blade is stored through the storage
    functions, whose recomputed content hashes must equal the recorded ones. Review states,
    supersedes / replaced-by links and creation times are reproduced. The bundle's audit
    events must agree with its content (:func:`polarsvc.bundle.read.check_history`); they
    are imported as history after one event ``bundle.import`` by ``actor`` that names the
    manifest hash: stamped at import time (ids keep time order), by actors
    ``imported:<name>`` of role ``imported`` (never a local actor), the recorded id, time,
    actor, address and detail kept in each event's detail. A refused bundle leaves the
    database unchanged.

    Parameters
    ----------
    factory : sessionmaker
        Sessions on the target database.
    source : Path
        The bundle folder.
    actor : Actor
        Who imports (recorded in the ``bundle.import`` event).

    Returns
    -------
    ImportReport
        Counts of what was imported; ``unchanged`` when the database already held exactly
        this content (nothing is written then).

    Raises
    ------
    BundleError
        Naming the file at fault; or (``file`` None) when the database already holds
        families, airfoils, revisions or blades that differ from the bundle's.
    """
    manifest, files = _read_files(Path(source))
    content = _parse_content(files)
    check_history(content)
    report = ImportReport(
        bundle_sha256=manifest.files_sha256,
        family=manifest.family,
        families=len(content.families),
        airfoils=len(content.airfoils),
        revisions=len(content.revisions),
        blades=len(content.blades),
        audit_events=len(content.audit),
    )
    with session_scope(factory, write=True) as session:
        counts = {
            model.__tablename__: session.scalar(select(func.count()).select_from(model)) or 0
            for model in (Family, Airfoil, PolarRevision, BladeDefinition)
        }
        if any(counts.values()):
            if _holds_same_content(session, content):
                return replace(report, unchanged=True)
            held = ", ".join(f"{count} {name}" for name, count in counts.items() if count)
            raise BundleError(
                None,
                f"the database is not empty ({held}) and differs from the bundle; a bundle is "
                "imported into an empty database",
            )
        import_event = record_event(
            session,
            actor=actor,
            action=IMPORT_ACTION,
            object_kind="bundle",
            object_key=manifest.files_sha256,
            after_hash=manifest.files_sha256,
            detail={
                "format": manifest.format,
                "software_version": manifest.software_version,
                "created_at": manifest.created_at,
                "scope": manifest.scope,
                **{key: value for key, value in report.as_dict().items()
                   if key not in ("bundle_sha256", "family", "unchanged")},
            },
        )
        _restore(session, content, actor)
        _add_history(session, content, manifest.files_sha256, import_event)
    refresh_planner_statistics(factory)
    return report
