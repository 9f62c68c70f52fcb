"""Reading and checking a bundle without a database: its files against the manifest, and
every JSON and CSV file into the content to import."""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from polarsvc.bundle.layout import (
    _AUDIT_LENGTHS,
    _AUDIT_NULLABLE,
    AIRFOILS_FILE,
    AUDIT_COLUMNS,
    AUDIT_FILE,
    BLADES_FILE,
    FAMILIES_FILE,
    MANIFEST_FILE,
    POLAR_FOLDER,
    REVISIONS_FILE,
    BundleError,
)
from polarsvc.bundle.manifest import BundleManifest
from polarsvc.bundle.text import _read_csv, _sha256, _Where
from polarsvc.formats import FormatError, ParsedPolar, parse_polar_file
from polarsvc.hashing import PROVENANCE_FIELDS
from polarsvc.store.models import REVIEW_STATES


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
        identifier = values["id"]
        if not (identifier.isascii() and identifier.isdigit()) or len(identifier) > 18:
            raise where.fail(f"{label}.id", f"{identifier[:40]!r} is not an event id")
        values["id"] = int(identifier)
        try:
            detail = json.loads(values["detail"])
        except json.JSONDecodeError:
            detail = None
        if not isinstance(detail, dict):
            raise where.fail(f"{label}.detail", "is not a JSON object")
        values["detail"] = detail
        result.append(values)
    if len({row["id"] for row in result}) != len(result):
        raise BundleError(AUDIT_FILE, "an event id is listed twice")
    return result


CREATING_ACTIONS: dict[str, str] = {
    "family.create": "family",
    "airfoil.create": "airfoil",
    "polar.store": "polar_revision",
    "blade.store": "blade_definition",
}
"""The event that creates each kind of bundle object (one per object, by its creator)."""


def check_history(content: _Content) -> None:
    """The audit history must agree with the content, or the bundle is refused.

    Every family, airfoil, revision and blade has exactly one creating event
    (:data:`CREATING_ACTIONS`) and every such event names an object of the bundle; revisions
    and blades were created by the actor their entries record; every event about a family,
    airfoil, revision or blade names one of the bundle's; a reviewed revision has a review
    event.

    Raises
    ------
    BundleError
        Naming ``audit.csv`` and the object or row at fault.
    """
    objects: dict[str, dict[str, str | None]] = {
        "family": {f["name"]: None for f in content.families},
        "airfoil": {a["name"]: None for a in content.airfoils},
        "polar_revision": {r.content_hash: r.created_by for r in content.revisions},
        "blade_definition": {b["content_hash"]: b["created_by"] for b in content.blades},
    }
    created: dict[tuple[str, str], list[dict[str, Any]]] = {}
    reviewed: set[str] = set()
    for row in content.audit:
        kind, key = row["object_kind"], row["object_key"]
        if kind in objects and key not in objects[kind]:
            raise BundleError(
                AUDIT_FILE,
                f"event {row['id']} ({row['action']}) names {kind} {key!r}, which is not in "
                "the bundle",
            )
        expected_kind = CREATING_ACTIONS.get(row["action"])
        if expected_kind is not None:
            if kind != expected_kind:
                raise BundleError(
                    AUDIT_FILE, f"event {row['id']} ({row['action']}) names a {kind}"
                )
            created.setdefault((kind, key), []).append(row)
        if row["action"] == "polar.review" and kind == "polar_revision":
            reviewed.add(key)
    for kind, members in objects.items():
        for key, creator in members.items():
            events = created.get((kind, key), [])
            if len(events) != 1:
                raise BundleError(
                    AUDIT_FILE,
                    f"{kind} {key!r} has {len(events)} store events, expected exactly one",
                )
            recorded = original_actor(events[0])["name"]
            if creator is not None and recorded != creator:
                raise BundleError(
                    AUDIT_FILE,
                    f"{kind} {key!r} is recorded as created by {creator!r} but its store "
                    f"event {events[0]['id']} names {recorded!r}",
                )
    for revision in content.revisions:
        if revision.review_state != "draft" and revision.content_hash not in reviewed:
            raise BundleError(
                AUDIT_FILE,
                f"revision {revision.content_hash} is {revision.review_state} but no review "
                "event records it",
            )


def original_actor(row: Mapping[str, Any]) -> dict[str, str]:
    """The actor (name and role) of an event as it was first recorded: for history imported
    earlier, the one kept in its detail."""
    imported = row["detail"].get("imported") if row["actor_role"] == "imported" else None
    if isinstance(imported, dict) and isinstance(imported.get("actor"), dict):
        actor = imported["actor"]
        return {"name": str(actor.get("name")), "role": str(actor.get("role"))}
    return {"name": row["actor_name"], "role": row["actor_role"]}


def _parse_content(files: Mapping[str, bytes]) -> _Content:
    airfoils = _parse_airfoils(files)
    return _Content(
        families=_parse_families(files),
        airfoils=airfoils,
        revisions=_parse_revisions(files, {a["name"]: a["family"] for a in airfoils}),
        blades=_parse_blades(files),
        audit=_parse_audit(files),
    )
