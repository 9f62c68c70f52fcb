"""Writing a bundle: collecting the content of the database or of one family, and writing
its files and manifest to a new folder."""

from __future__ import annotations

import datetime as dt
import json
import shutil
import uuid
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session, sessionmaker

from polarsvc import __version__
from polarsvc.bundle.layout import (
    AIRFOILS_FILE,
    AUDIT_COLUMNS,
    AUDIT_FILE,
    BLADES_FILE,
    FAMILIES_FILE,
    FORMAT_TAG,
    MANIFEST_FILE,
    POLAR_FOLDER,
    REVISIONS_FILE,
    BundleError,
)
from polarsvc.bundle.manifest import BundleFile, BundleManifest
from polarsvc.bundle.text import _sha256, _timestamp_text, _write_csv
from polarsvc.formats import FormatError, polar_to_csv
from polarsvc.names import safe_file_stem
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import blades as blade_store
from polarsvc.store import polars as polar_store
from polarsvc.store.db import session_scope
from polarsvc.store.models import (
    Airfoil,
    ApiToken,
    AuditEvent,
    BladeDefinition,
    Family,
    PolarRevision,
)


def _json_bytes(document: Any) -> bytes:
    text = json.dumps(document, indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False)
    return (text + "\n").encode("utf-8")


def _audit_csv(events: Iterable[AuditEvent]) -> bytes:
    lines: list[Sequence[str | None]] = [AUDIT_COLUMNS]
    for event in events:
        values = {
            "id": str(event.id),
            "occurred_at": _timestamp_text(event.occurred_at),
            "actor_name": event.actor_name,
            "actor_role": event.actor_role,
            "action": event.action,
            "object_kind": event.object_kind,
            "object_key": event.object_key,
            "before_hash": event.before_hash,
            "after_hash": event.after_hash,
            "remote_addr": event.remote_addr,
            "detail": event.detail,
        }
        lines.append([values[name] for name in AUDIT_COLUMNS])
    return _write_csv(lines).encode("utf-8")



def _csv_provenance(provenance: Mapping[str, Any]) -> dict[str, str]:
    """The provenance values that survive a one-line ``# key: value`` comment unchanged."""
    written = {}
    for key, value in provenance.items():
        text = value.isoformat() if isinstance(value, dt.date) else value
        if isinstance(text, str) and text and text == text.strip() and not (
            "\n" in text or "\r" in text
        ):
            written[key] = text
    return written


def _revision_entry(revision: PolarRevision, path: str) -> dict[str, Any]:
    provenance = polar_store.revision_provenance(revision)
    measured_on = provenance["measured_on"]
    provenance["measured_on"] = None if measured_on is None else measured_on.isoformat()
    return {
        "content_hash": revision.content_hash,
        "airfoil": revision.airfoil.name,
        "file": path,
        "conditions": {
            "reynolds": revision.reynolds,
            "mach": revision.mach,
            "surface": revision.surface,
        },
        "provenance": provenance,
        "supersedes": None if revision.supersedes is None else revision.supersedes.content_hash,
        "review_state": revision.review_state,
        "review_reason": revision.review_reason,
        "replaced_by": None if revision.replaced_by is None else revision.replaced_by.content_hash,
        "created_at": _timestamp_text(revision.created_at),
        "created_by": revision.created_by,
    }


def _collect(session: Session, family: str | None) -> dict[str, bytes]:
    """The bundle's files (path -> bytes) for ``family`` or the whole database."""
    if family is None:
        families = list(session.scalars(select(Family).order_by(Family.id)))
        airfoils = list(session.scalars(select(Airfoil).order_by(Airfoil.id)))
    else:
        families = [airfoil_store.get_family(session, family)]
        airfoils = list(
            session.scalars(
                select(Airfoil).where(Airfoil.family_id == families[0].id).order_by(Airfoil.id)
            )
        )
    airfoil_ids = [airfoil.id for airfoil in airfoils]
    revisions = list(
        session.scalars(
            select(PolarRevision)
            .where(PolarRevision.airfoil_id.in_(airfoil_ids))
            .order_by(PolarRevision.id)
        )
    ) if airfoil_ids else []
    blades = list(session.scalars(select(BladeDefinition).order_by(BladeDefinition.id)))
    if family is not None:
        blades = [b for b in blades if blade_store.blade_definition(b).get("family") == family]

    files: dict[str, bytes] = {}
    exported = {revision.content_hash for revision in revisions}
    entries = []
    for revision in revisions:
        replacement = revision.replaced_by
        if replacement is not None and replacement.content_hash not in exported:
            raise BundleError(
                REVISIONS_FILE,
                f"revision {revision.content_hash} is replaced by {replacement.content_hash} "
                f"of airfoil {replacement.airfoil.name!r}, outside family {family!r}: export "
                "the whole database instead",
            )
        polar_store.verify_revision(revision)  # never export a row that disagrees with its hash
        airfoil = revision.airfoil
        path = f"{POLAR_FOLDER}/{safe_file_stem(airfoil.name)}/{revision.content_hash}.csv"
        extra = None if airfoil.family is None else {"family": airfoil.family.name}
        try:
            text = polar_to_csv(
                polar_store.load_polar(revision),
                airfoil=airfoil.name,
                provenance=_csv_provenance(polar_store.revision_provenance(revision)),
                extra_metadata=extra,
            )
        except FormatError as exc:  # e.g. a name holding a line break
            raise BundleError(path, f"cannot be written: {exc}") from None
        files[path] = text.encode("utf-8")
        entries.append(_revision_entry(revision, path))

    files[FAMILIES_FILE] = _json_bytes(
        [
            {"name": f.name, "description": f.description,
             "created_at": _timestamp_text(f.created_at)}
            for f in families
        ]
    )
    files[AIRFOILS_FILE] = _json_bytes(
        [
            {
                "name": a.name,
                "family": None if a.family is None else a.family.name,
                "thickness": a.thickness,
                "description": a.description,
                "coordinates": airfoil_store.airfoil_coordinates(a),
                "created_at": _timestamp_text(a.created_at),
            }
            for a in airfoils
        ]
    )
    files[REVISIONS_FILE] = _json_bytes(entries)
    files[BLADES_FILE] = _json_bytes(
        [
            {
                "content_hash": b.content_hash,
                "name": b.name,
                "definition": blade_store.blade_definition(b),
                "created_at": _timestamp_text(b.created_at),
                "created_by": b.created_by,
            }
            for b in blades
        ]
    )
    events = session.scalars(select(AuditEvent).order_by(AuditEvent.id))
    if family is not None:
        objects = {("family", f.name) for f in families}
        objects |= {("airfoil", a.name) for a in airfoils}
        objects |= {("polar_revision", key) for key in exported}
        objects |= {("blade_definition", b.content_hash) for b in blades}
        events = (e for e in events if (e.object_kind, e.object_key) in objects)
    files[AUDIT_FILE] = _audit_csv(events)

    token_hashes = set(session.scalars(select(ApiToken.token_hash)))
    for path, data in files.items():
        # defence in depth: token rows are never read above, but a hash must not slip in
        if any(token_hash.encode("ascii") in data for token_hash in token_hashes):
            raise BundleError(path, "would hold an API token hash; export refused")
    return files


def export_bundle(
    factory: sessionmaker[Session], destination: Path, *, family: str | None = None
) -> BundleManifest:
    """Write a bundle of the whole database, or of one family, to a new folder.

    The content is read in one transaction (REPEATABLE READ on PostgreSQL, the snapshot of a
    read transaction on SQLite), written to a temporary folder beside ``destination`` and
    renamed into place when complete.

    Parameters
    ----------
    factory : sessionmaker
        Sessions on the source database.
    destination : Path
        Folder to create; it must not exist or be empty.
    family : str, optional
        Export only this family (see the module docstring for what belongs to it).

    Returns
    -------
    BundleManifest
        The manifest written.

    Raises
    ------
    BundleError
        If ``destination`` is in the way, a revision of the family is replaced by one
        outside it, or a file would hold a token hash.
    polarsvc.store.errors.NotFound
        If ``family`` does not exist.
    polarsvc.store.errors.IntegrityProblem
        If a stored revision no longer matches its content hash.
    """
    destination = Path(destination)
    if destination.exists() and (not destination.is_dir() or any(destination.iterdir())):
        raise BundleError(str(destination), "exists and is not an empty folder")
    with session_scope(factory, write=False) as session:
        if session.get_bind().dialect.name == "postgresql":
            session.connection(execution_options={"isolation_level": "REPEATABLE READ"})
        files = _collect(session, family)
    manifest = BundleManifest(
        format=FORMAT_TAG,
        software_version=__version__,
        created_at=dt.datetime.now(dt.UTC),
        family=family,
        files=tuple(
            BundleFile(path, len(data), _sha256(data)) for path, data in sorted(files.items())
        ),
    )
    partial = destination.with_name(f"{destination.name}.partial-{uuid.uuid4().hex[:8]}")
    try:
        for path, data in files.items():
            target = partial.joinpath(*path.split("/"))
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(data)
        (partial / MANIFEST_FILE).write_bytes(_json_bytes(manifest.as_dict()))
        if destination.exists():
            destination.rmdir()
        partial.rename(destination)
    except BaseException:
        shutil.rmtree(partial, ignore_errors=True)
        raise
    return manifest
