"""Portable export bundles: a folder of open-format files holding families, airfoils, polar
revisions, blade definitions and the audit trail, and its verified import.

Layout (format tag :data:`FORMAT_TAG`)::

    manifest.json                    format, software version, created_at, scope, and for
                                     every other file its path, size [bytes] and sha256
    families.json                    [{name, description, created_at}]
    airfoils.json                    [{name, family, thickness, description, coordinates,
                                       created_at}]
    revisions.json                   one entry per revision, in storage order (below)
    polars/<airfoil>/<hash>.csv      the table of each revision (polarsvc.formats.polar_to_csv,
                                     floats written with repr: bit-exact on re-reading)
    blades.json                      [{content_hash, name, definition, created_at, created_by}]
    audit.csv                        the audit events of the scope, every column

A ``revisions.json`` entry holds ``content_hash``, ``airfoil``, ``file`` (the CSV path),
``conditions`` (reynolds, mach, surface), ``provenance`` (all six fields), ``supersedes``
and ``replaced_by`` (content hashes or null), ``review_state``, ``review_reason``,
``created_at`` and ``created_by``. ``revisions.json`` is authoritative for the provenance;
each CSV carries the provenance values that survive its one-line ``# key: value`` form (no
line break, no outer blanks, not empty) and the import checks that every value a CSV states
agrees with ``revisions.json``. The directory ``<airfoil>`` is the airfoil name with every
character outside ``A-Z a-z 0-9 . _ -`` replaced by ``_`` (and a leading ``.`` too); the
real name is in ``revisions.json`` and in the CSV.

Timestamps are ISO 8601 in UTC (``2026-01-02T03:04:05.123456+00:00``); JSON files are UTF-8
with sorted keys. ``audit.csv`` is RFC 4180 CSV with a header row (:data:`AUDIT_COLUMNS`)
where every value is quoted and an empty unquoted field means null (so that null and the
empty string stay distinct).

``manifest.json`` lists the files sorted by path; ``files_sha256`` is the SHA-256 hex of the
canonical JSON (:func:`polarsvc.hashing.canonical_json`) of that list of
``{"path", "sha256", "size"}`` objects. The manifest does not list itself.

Scope: the whole database, or one family (its airfoils, their revisions, the blades whose
definition names the family in ``"family"``, and the audit events whose object is one of
those). API tokens are never exported; derived tables are not either (they are a cache,
recomputed from their recipes on demand).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import re
import shutil
import uuid
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.orm import Session, sessionmaker

from polarsvc import __version__
from polarsvc.formats import FormatError, ParsedPolar, parse_polar_file, polar_to_csv
from polarsvc.hashing import PROVENANCE_FIELDS, canonical_json
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import blades as blade_store
from polarsvc.store import polars as polar_store
from polarsvc.store.audit import Actor, record_event, replaying_history
from polarsvc.store.db import session_scope
from polarsvc.store.errors import StoreError
from polarsvc.store.models import (
    REVIEW_STATES,
    Airfoil,
    ApiToken,
    AuditEvent,
    BladeDefinition,
    Family,
    PolarRevision,
)

__all__ = [
    "AUDIT_COLUMNS",
    "FORMAT_TAG",
    "IMPORT_ACTION",
    "BundleError",
    "BundleFile",
    "BundleManifest",
    "ImportReport",
    "export_bundle",
    "import_bundle",
    "verify_bundle",
]

FORMAT_TAG = "polarsvc-bundle/1"
"""The ``format`` of the bundles written and read here."""
IMPORT_ACTION = "bundle.import"
"""Audit action of the one event recording an import."""

MANIFEST_FILE = "manifest.json"
FAMILIES_FILE = "families.json"
AIRFOILS_FILE = "airfoils.json"
REVISIONS_FILE = "revisions.json"
BLADES_FILE = "blades.json"
AUDIT_FILE = "audit.csv"
POLAR_FOLDER = "polars"

AUDIT_COLUMNS: tuple[str, ...] = (
    "id",
    "occurred_at",
    "actor_name",
    "actor_role",
    "action",
    "object_kind",
    "object_key",
    "before_hash",
    "after_hash",
    "remote_addr",
    "detail",
)
"""Columns of ``audit.csv``, in order (every column of the audit table)."""

_AUDIT_NULLABLE = frozenset({"before_hash", "after_hash", "remote_addr"})
_AUDIT_LENGTHS: dict[str, int] = {
    column.name: column.type.length
    for column in AuditEvent.__table__.columns
    if isinstance(getattr(column.type, "length", None), int)
}
"""Longest text of each bounded audit column (PostgreSQL enforces them, SQLite does not)."""
_HASH = re.compile(r"[0-9a-f]{64}")
_UNSAFE_PATH_CHARACTERS = re.compile(r"[^A-Za-z0-9._-]")


class BundleError(ValueError):
    """A bundle cannot be written or read, or its import is refused.

    Attributes
    ----------
    file : str or None
        The bundle file at fault (relative path, e.g. ``polars/SKUA-210/<hash>.csv``), or
        None when the problem is not one file's (e.g. the target database is not empty).
    """

    def __init__(self, file: str | None, message: str):
        self.file = file
        self.detail = message
        super().__init__(f"{file}: {message}" if file is not None else message)


@dataclass(frozen=True)
class BundleFile:
    """One file of a bundle as listed in its manifest."""

    path: str
    size: int
    sha256: str

    def as_dict(self) -> dict[str, Any]:
        return {"path": self.path, "sha256": self.sha256, "size": self.size}


@dataclass(frozen=True)
class BundleManifest:
    """The manifest of a bundle: format, origin, scope and the checksummed file list.

    ``family`` is None for a whole-database bundle. ``files`` is sorted by path.
    """

    format: str
    software_version: str
    created_at: dt.datetime
    family: str | None
    files: tuple[BundleFile, ...]

    @property
    def files_sha256(self) -> str:
        """SHA-256 hex of the canonical JSON of the sorted file list."""
        listing = [item.as_dict() for item in sorted(self.files, key=lambda f: f.path)]
        return hashlib.sha256(canonical_json(listing)).hexdigest()

    @property
    def scope(self) -> dict[str, Any]:
        if self.family is None:
            return {"kind": "database", "family": None}
        return {"kind": "family", "family": self.family}

    def as_dict(self) -> dict[str, Any]:
        return {
            "format": self.format,
            "software_version": self.software_version,
            "created_at": _timestamp_text(self.created_at),
            "scope": self.scope,
            "files": [item.as_dict() for item in self.files],
            "files_sha256": self.files_sha256,
        }

    @classmethod
    def from_dict(cls, document: object) -> BundleManifest:
        """Read a manifest document; :class:`BundleError` naming ``manifest.json``."""
        where = _Where(MANIFEST_FILE)
        top = where.mapping(document, "manifest")
        format_tag = top.get("format")
        if format_tag != FORMAT_TAG:
            raise BundleError(
                MANIFEST_FILE, f"unknown format {format_tag!r}; this version reads {FORMAT_TAG!r}"
            )
        scope = where.mapping(top.get("scope"), "scope")
        kind = where.text(scope, "kind", "scope")
        if kind not in ("database", "family"):
            raise BundleError(MANIFEST_FILE, f"scope.kind: {kind!r} is not database or family")
        family = where.text(scope, "family", "scope") if kind == "family" else None
        files = []
        listing = top.get("files")
        if not isinstance(listing, list):
            raise BundleError(MANIFEST_FILE, "files: expected a list")
        for index, entry in enumerate(listing):
            item = where.mapping(entry, f"files[{index}]")
            size = item.get("size")
            digest = item.get("sha256")
            if isinstance(size, bool) or not isinstance(size, int) or size < 0:
                raise BundleError(MANIFEST_FILE, f"files[{index}].size: expected a count")
            if not isinstance(digest, str) or not _HASH.fullmatch(digest):
                raise BundleError(MANIFEST_FILE, f"files[{index}].sha256: not a sha256 hex")
            files.append(BundleFile(where.text(item, "path", f"files[{index}]"), size, digest))
        manifest = cls(
            format=format_tag,
            software_version=where.text(top, "software_version", "manifest"),
            created_at=where.timestamp(top, "created_at", "manifest"),
            family=family,
            files=tuple(sorted(files, key=lambda f: f.path)),
        )
        if len({item.path for item in files}) != len(files):
            raise BundleError(MANIFEST_FILE, "files: a path is listed twice")
        if top.get("files_sha256") != manifest.files_sha256:
            raise BundleError(
                MANIFEST_FILE,
                f"files_sha256 {top.get('files_sha256')!r} does not match the file list "
                f"({manifest.files_sha256})",
            )
        return manifest


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


# ---------------------------------------------------------------------------------------
# small helpers: timestamps, JSON, paths, CSV of the audit trail


def _timestamp_text(value: dt.datetime) -> str:
    return value.astimezone(dt.UTC).isoformat()


def _json_bytes(document: Any) -> bytes:
    text = json.dumps(document, indent=2, sort_keys=True, ensure_ascii=False, allow_nan=False)
    return (text + "\n").encode("utf-8")


def _sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _path_component(name: str) -> str:
    """A file-system-safe folder name for an airfoil (the real name is kept elsewhere)."""
    safe = _UNSAFE_PATH_CHARACTERS.sub("_", name)
    return "_" + safe[1:] if safe.startswith(".") else safe


def _csv_cell(value: str | None) -> str:
    return "" if value is None else '"' + value.replace('"', '""') + '"'


def _write_csv(rows: Iterable[Sequence[str | None]]) -> str:
    """CSV text with every value quoted and None as an empty unquoted field."""
    return "".join(",".join(_csv_cell(value) for value in row) + "\n" for row in rows)


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


def _read_csv(text: str, file: str) -> list[list[str | None]]:
    """Rows of a CSV whose values are all quoted; an empty unquoted field is None."""
    rows: list[list[str | None]] = []
    row: list[str | None] = []
    position, line, end = 0, 1, len(text)
    while position < end:
        value: str | None
        if text[position] == '"':
            parts = []
            position += 1
            while True:
                close = text.find('"', position)
                if close < 0:
                    raise BundleError(file, f"line {line}: a quoted value is not closed")
                parts.append(text[position:close])
                if text.startswith('"', close + 1):
                    parts.append('"')
                    position = close + 2
                    continue
                position = close + 1
                break
            value = "".join(parts)
            line += value.count("\n")
        else:
            stop = position
            while stop < end and text[stop] not in ",\r\n":
                stop += 1
            if stop > position:
                raise BundleError(
                    file, f"line {line}: unquoted value {text[position:stop][:40]!r} "
                    "(every value is quoted; an empty field means null)"
                )
            value = None
        row.append(value)
        if text.startswith(",", position):
            position += 1
            if position == end:
                row.append(None)
            continue
        if text.startswith("\r\n", position):
            position += 2
        elif text.startswith("\n", position):
            position += 1
        elif position < end:
            raise BundleError(file, f"line {line}: unexpected text after a quoted value")
        rows.append(row)
        row = []
        line += 1
    if row:
        rows.append(row)
    return rows


class _Where:
    """Typed access to JSON values, with errors naming the file and the entry."""

    def __init__(self, file: str):
        self.file = file

    def fail(self, where: str, message: str) -> BundleError:
        return BundleError(self.file, f"{where}: {message}")

    def mapping(self, value: object, where: str) -> Mapping[str, Any]:
        if not isinstance(value, dict):
            raise self.fail(where, "expected an object")
        return value

    def entries(self, document: object) -> list[Mapping[str, Any]]:
        if not isinstance(document, list):
            raise BundleError(self.file, "expected a list of objects")
        return [self.mapping(entry, f"entry {index}") for index, entry in enumerate(document)]

    def text(self, entry: Mapping[str, Any], key: str, where: str) -> str:
        value = entry.get(key)
        if not isinstance(value, str):
            raise self.fail(f"{where}.{key}", f"expected text, got {type(value).__name__}")
        return value

    def optional_text(self, entry: Mapping[str, Any], key: str, where: str) -> str | None:
        if key not in entry:
            raise self.fail(f"{where}.{key}", "missing (give null for none)")
        return None if entry[key] is None else self.text(entry, key, where)

    def optional_hash(self, entry: Mapping[str, Any], key: str, where: str) -> str | None:
        value = self.optional_text(entry, key, where)
        if value is not None and not _HASH.fullmatch(value):
            raise self.fail(f"{where}.{key}", f"{value[:70]!r} is not a content hash")
        return value

    def number(self, entry: Mapping[str, Any], key: str, where: str) -> float:
        value = entry.get(key)
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.fail(f"{where}.{key}", f"expected a number, got {type(value).__name__}")
        return float(value)

    def timestamp(self, entry: Mapping[str, Any], key: str, where: str) -> dt.datetime:
        text = self.text(entry, key, where)
        try:
            value = dt.datetime.fromisoformat(text)
        except ValueError:
            raise self.fail(f"{where}.{key}", f"{text[:40]!r} is not an ISO timestamp") from None
        if value.tzinfo is None or value.utcoffset() is None:
            raise self.fail(f"{where}.{key}", f"{text!r} has no UTC offset")
        return value.astimezone(dt.UTC)


# ---------------------------------------------------------------------------------------
# export


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
        path = f"{POLAR_FOLDER}/{_path_component(airfoil.name)}/{revision.content_hash}.csv"
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


# ---------------------------------------------------------------------------------------
# reading and checking a bundle (no database)


def _read_files(source: Path) -> tuple[BundleManifest, dict[str, bytes]]:
    manifest_path = source / MANIFEST_FILE
    if not source.is_dir():
        raise BundleError(str(source), "is not a folder")
    if not manifest_path.is_file():
        raise BundleError(MANIFEST_FILE, "missing")
    try:
        document = json.loads(manifest_path.read_bytes().decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise BundleError(MANIFEST_FILE, f"not valid JSON ({exc})") from None
    manifest = BundleManifest.from_dict(document)
    present = {
        path.relative_to(source).as_posix()
        for path in source.rglob("*")
        if path.is_file() or path.is_symlink()
    }
    present.discard(MANIFEST_FILE)
    listed = {item.path for item in manifest.files}
    for path in sorted(listed - present):
        raise BundleError(path, "listed in the manifest but missing")
    for path in sorted(present - listed):
        raise BundleError(path, "present but not listed in the manifest")
    files = {}
    for item in manifest.files:
        file_path = source.joinpath(*item.path.split("/"))
        if file_path.is_symlink():
            raise BundleError(item.path, "is a symbolic link; a bundle holds plain files")
        data = file_path.read_bytes()
        if len(data) != item.size:
            raise BundleError(item.path, f"has {len(data)} bytes, the manifest says {item.size}")
        digest = _sha256(data)
        if digest != item.sha256:
            raise BundleError(item.path, f"sha256 {digest} differs from the manifest's")
        files[item.path] = data
    for required in (FAMILIES_FILE, AIRFOILS_FILE, REVISIONS_FILE, BLADES_FILE, AUDIT_FILE):
        if required not in files:
            raise BundleError(required, "missing from the manifest")
    return manifest, files


def verify_bundle(source: Path) -> BundleManifest:
    """Check a bundle's manifest against its files (format, presence, sizes, sha256).

    Content hashes of the revisions are checked by :func:`import_bundle`, which recomputes
    them through the store.

    Raises
    ------
    BundleError
        Naming the file at fault.
    """
    manifest, _ = _read_files(Path(source))
    return manifest


@dataclass(frozen=True)
class _Revision:
    content_hash: str
    airfoil: str
    file: str
    parsed: ParsedPolar
    provenance: dict[str, Any]
    supersedes: str | None
    review_state: str
    review_reason: str | None
    replaced_by: str | None
    created_at: dt.datetime
    created_by: str


@dataclass(frozen=True)
class _Content:
    families: list[dict[str, Any]]
    airfoils: list[dict[str, Any]]
    revisions: list[_Revision]
    blades: list[dict[str, Any]]
    audit: list[dict[str, Any]]


def _load_json(files: Mapping[str, bytes], path: str) -> Any:
    try:
        return json.loads(files[path].decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise BundleError(path, f"not valid JSON ({exc})") from None


def _unique(where: _Where, entries: list[dict[str, Any]], key: str) -> list[dict[str, Any]]:
    seen: set[str] = set()
    for index, entry in enumerate(entries):
        if entry[key] in seen:
            raise where.fail(f"entry {index}.{key}", f"{entry[key]!r} is listed twice")
        seen.add(entry[key])
    return entries


def _parse_families(files: Mapping[str, bytes]) -> list[dict[str, Any]]:
    where = _Where(FAMILIES_FILE)
    result = []
    for index, entry in enumerate(where.entries(_load_json(files, FAMILIES_FILE))):
        label = f"entry {index}"
        result.append(
            {
                "name": where.text(entry, "name", label),
                "description": where.text(entry, "description", label),
                "created_at": where.timestamp(entry, "created_at", label),
            }
        )
    return _unique(where, result, "name")


def _parse_airfoils(files: Mapping[str, bytes]) -> list[dict[str, Any]]:
    where = _Where(AIRFOILS_FILE)
    result = []
    for index, entry in enumerate(where.entries(_load_json(files, AIRFOILS_FILE))):
        label = f"entry {index}"
        coordinates = entry.get("coordinates")
        if coordinates is not None:
            where.mapping(coordinates, f"{label}.coordinates")
        result.append(
            {
                "name": where.text(entry, "name", label),
                "family": where.optional_text(entry, "family", label),
                "thickness": where.number(entry, "thickness", label),
                "description": where.text(entry, "description", label),
                "coordinates": coordinates,
                "created_at": where.timestamp(entry, "created_at", label),
            }
        )
    return _unique(where, result, "name")


def _parse_table(path: str, data: bytes) -> ParsedPolar:
    try:
        parsed = parse_polar_file(data, filename=path, layout="csv")
    except FormatError as exc:
        raise BundleError(path, str(exc)) from None
    if len(parsed) != 1:
        raise BundleError(path, f"holds {len(parsed)} tables, expected one")
    return parsed[0]


def _check_table_agrees(
    path: str, parsed: ParsedPolar, airfoil: str, conditions: Mapping[str, Any],
    provenance: Mapping[str, Any], family: str | None,
) -> None:
    """Every value the CSV states must equal the one in revisions.json / airfoils.json."""
    stated: dict[str, tuple[object, object]] = {
        "airfoil": (parsed.airfoil, airfoil),
        "reynolds": (parsed.polar.reynolds, conditions.get("reynolds")),
        "mach": (parsed.polar.mach, conditions.get("mach")),
        "surface": (parsed.polar.surface, conditions.get("surface")),
    }
    if parsed.family is not None:
        stated["family"] = (parsed.family, family)
    for key, value in parsed.provenance.items():
        if value is not None:
            recorded = provenance.get(key)
            stated[key] = (value, recorded.isoformat() if isinstance(recorded, dt.date)
                           else recorded)
    for key, (in_table, recorded) in stated.items():
        if in_table != recorded:
            raise BundleError(
                path, f"states {key} {in_table!r} but {REVISIONS_FILE} records {recorded!r}"
            )


def _parse_revisions(
    files: Mapping[str, bytes], airfoil_families: Mapping[str, str | None]
) -> list[_Revision]:
    where = _Where(REVISIONS_FILE)
    result: list[_Revision] = []
    seen: set[str] = set()
    referenced: set[str] = set()
    for index, entry in enumerate(where.entries(_load_json(files, REVISIONS_FILE))):
        label = f"entry {index}"
        content_hash = where.optional_hash(entry, "content_hash", label)
        if content_hash is None:
            raise where.fail(f"{label}.content_hash", "missing")
        label = f"revision {content_hash}"
        airfoil = where.text(entry, "airfoil", label)
        if airfoil not in airfoil_families:
            raise where.fail(f"{label}.airfoil", f"{airfoil!r} is not in {AIRFOILS_FILE}")
        path = where.text(entry, "file", label)
        if path not in files or not path.startswith(f"{POLAR_FOLDER}/"):
            raise where.fail(f"{label}.file", f"{path!r} is not a table file of the bundle")
        if path in referenced:
            raise where.fail(f"{label}.file", f"{path!r} is named by two revisions")
        referenced.add(path)
        conditions = where.mapping(entry.get("conditions"), f"{label}.conditions")
        provenance_entry = where.mapping(entry.get("provenance"), f"{label}.provenance")
        if set(provenance_entry) != set(PROVENANCE_FIELDS):
            raise where.fail(f"{label}.provenance", f"expected the keys {PROVENANCE_FIELDS}")
        provenance = {
            key: where.optional_text(provenance_entry, key, f"{label}.provenance")
            for key in PROVENANCE_FIELDS
        }
        supersedes = where.optional_hash(entry, "supersedes", label)
        if supersedes is not None and supersedes not in seen:
            raise where.fail(
                f"{label}.supersedes", f"{supersedes} is not an earlier revision of the bundle"
            )
        state = where.text(entry, "review_state", label)
        if state not in REVIEW_STATES:
            raise where.fail(f"{label}.review_state", f"{state!r} is not one of {REVIEW_STATES}")
        reason = where.optional_text(entry, "review_reason", label)
        replaced_by = where.optional_hash(entry, "replaced_by", label)
        if replaced_by is not None and state != "deprecated":
            raise where.fail(f"{label}.replaced_by", "only a deprecated revision is replaced")
        if state == "draft" and reason is not None:
            raise where.fail(f"{label}.review_reason", "a draft has no review reason")
        parsed = _parse_table(path, files[path])
        _check_table_agrees(
            path, parsed, airfoil, conditions, provenance, airfoil_families[airfoil]
        )
        if content_hash in seen:
            raise where.fail(label, "listed twice")
        seen.add(content_hash)
        result.append(
            _Revision(
                content_hash=content_hash,
                airfoil=airfoil,
                file=path,
                parsed=parsed,
                provenance=provenance,
                supersedes=supersedes,
                review_state=state,
                review_reason=reason,
                replaced_by=replaced_by,
                created_at=where.timestamp(entry, "created_at", label),
                created_by=where.text(entry, "created_by", label),
            )
        )
    for revision in result:
        if revision.replaced_by is not None and revision.replaced_by not in seen:
            raise where.fail(
                f"revision {revision.content_hash}.replaced_by",
                f"{revision.replaced_by} is not a revision of the bundle",
            )
    for path in sorted(files):
        if path.startswith(f"{POLAR_FOLDER}/") and path not in referenced:
            raise BundleError(path, f"is not named by any entry of {REVISIONS_FILE}")
    return result


def _parse_blades(files: Mapping[str, bytes]) -> list[dict[str, Any]]:
    where = _Where(BLADES_FILE)
    result = []
    for index, entry in enumerate(where.entries(_load_json(files, BLADES_FILE))):
        label = f"entry {index}"
        content_hash = where.optional_hash(entry, "content_hash", label)
        if content_hash is None:
            raise where.fail(f"{label}.content_hash", "missing")
        result.append(
            {
                "content_hash": content_hash,
                "name": where.text(entry, "name", label),
                "definition": where.mapping(entry.get("definition"), f"{label}.definition"),
                "created_at": where.timestamp(entry, "created_at", label),
                "created_by": where.text(entry, "created_by", label),
            }
        )
    return _unique(where, result, "content_hash")


def _parse_audit(files: Mapping[str, bytes]) -> list[dict[str, Any]]:
    try:
        text = files[AUDIT_FILE].decode("utf-8")
    except UnicodeDecodeError as exc:
        raise BundleError(AUDIT_FILE, f"not UTF-8 ({exc})") from None
    rows = _read_csv(text, AUDIT_FILE)
    if not rows or tuple(rows[0]) != AUDIT_COLUMNS:
        raise BundleError(AUDIT_FILE, f"line 1: the header must be {','.join(AUDIT_COLUMNS)}")
    where = _Where(AUDIT_FILE)
    result = []
    for number, row in enumerate(rows[1:], start=2):
        label = f"row {number}"
        if len(row) != len(AUDIT_COLUMNS):
            raise where.fail(label, f"{len(row)} values, expected {len(AUDIT_COLUMNS)}")
        values = dict(zip(AUDIT_COLUMNS, row, strict=True))
        for name, value in values.items():
            if value is None and name not in _AUDIT_NULLABLE:
                raise where.fail(f"{label}.{name}", "is null")
        for name, limit in _AUDIT_LENGTHS.items():
            value = values[name]
            if value is not None and len(value) > limit:
                raise where.fail(f"{label}.{name}", f"longer than {limit} characters")
        values["occurred_at"] = where.timestamp(values, "occurred_at", label)
        result.append(values)
    return result


def _parse_content(files: Mapping[str, bytes]) -> _Content:
    airfoils = _parse_airfoils(files)
    return _Content(
        families=_parse_families(files),
        airfoils=airfoils,
        revisions=_parse_revisions(files, {a["name"]: a["family"] for a in airfoils}),
        blades=_parse_blades(files),
        audit=_parse_audit(files),
    )


# ---------------------------------------------------------------------------------------
# import


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
    # Audit events are append-only and record_event stamps them "now": the bundle's events
    # are inserted as new rows carrying their original values (new ids, original order).
    session.add_all(
        AuditEvent(**{name: row[name] for name in AUDIT_COLUMNS if name != "id"})
        for row in content.audit
    )
    session.flush()


def import_bundle(factory: sessionmaker[Session], source: Path, *, actor: Actor) -> ImportReport:
    """Check a bundle and import it into an empty database, in one write transaction.

    Every file is checked against the manifest, every table is read and compared with
    ``revisions.json``, and every revision and blade is stored through the storage
    functions, whose recomputed content hashes must equal the recorded ones. Review states,
    supersedes / replaced-by links and creation times are reproduced; the bundle's audit
    events are inserted as they were, followed by one event ``bundle.import`` by ``actor``.
    A refused bundle leaves the database unchanged.

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
        _restore(session, content, actor)
        record_event(
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
    return report
