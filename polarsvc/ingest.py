"""Storing uploaded files: parse (polarsvc.formats), create missing families and airfoils,
store each polar as a revision (polarsvc.store). One implementation for the HTTP upload, the
command-line import and the demo seeding.

A file is stored whole or not at all: the caller's transaction is rolled back on any error.
"""

from __future__ import annotations

import json
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sqlalchemy.orm import Session, sessionmaker

from polarsvc.formats import FormatError, parse_polar_file
from polarsvc.formats.metadata import ParsedPolar
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import blades as blade_store
from polarsvc.store import polars as polar_store
from polarsvc.store.audit import Actor
from polarsvc.store.db import session_scope
from polarsvc.store.errors import NotFound, StoreError

TABLE_SUFFIXES = (".csv", ".tsv", ".txt", ".dat", ".json")


@dataclass(frozen=True)
class StoredOutcome:
    """What happened to one polar of a file."""

    airfoil: str
    content_hash: str
    created: bool
    reynolds: float | None
    surface: str
    source_line: int

    def as_dict(self) -> dict[str, Any]:
        return {
            "airfoil": self.airfoil,
            "content_hash": self.content_hash,
            "created": self.created,
            "reynolds": self.reynolds,
            "surface": self.surface,
            "source_line": self.source_line,
        }


def parse_upload(
    data: bytes,
    *,
    filename: str | None = None,
    content_type: str | None = None,
    defaults: Mapping[str, object] | None = None,
    max_bytes: int = 5_000_000,
    supersedes: str | None = None,
) -> list[ParsedPolar]:
    """Parse an uploaded file without touching the database (so a server parses before it
    takes the write lock).

    Raises
    ------
    FormatError
        The file cannot be read (names line and field), or ``supersedes`` is given for a
        file of several polars.
    """
    parsed = parse_polar_file(
        data, filename=filename, content_type=content_type, defaults=defaults,
        max_bytes=max_bytes,
    )
    if supersedes is not None and len(parsed) != 1:
        raise FormatError(
            f"'supersedes' applies to a file of one polar; this file holds {len(parsed)}",
            field="supersedes",
        )
    return parsed


def store_parsed(
    session: Session,
    parsed: Sequence[ParsedPolar],
    *,
    actor: Actor,
    supersedes: str | None = None,
) -> list[StoredOutcome]:
    """Store parsed polars in the caller's transaction (see :func:`store_file`)."""
    outcomes = []
    for item in parsed:
        _ensure_airfoil(session, item.airfoil, item.family, item.polar.thickness, actor,
                        item.source_line)
        revision, created = polar_store.store_polar(
            session,
            airfoil_name=item.airfoil,
            polar=item.polar,
            provenance=item.provenance,
            supersedes_hash=supersedes,
            actor=actor,
        )
        outcomes.append(
            StoredOutcome(
                airfoil=item.airfoil,
                content_hash=revision.content_hash,
                created=created,
                reynolds=revision.reynolds,
                surface=revision.surface,
                source_line=item.source_line,
            )
        )
    return outcomes


def store_file(
    session: Session,
    data: bytes,
    *,
    actor: Actor,
    filename: str | None = None,
    content_type: str | None = None,
    defaults: Mapping[str, object] | None = None,
    max_bytes: int = 5_000_000,
    supersedes: str | None = None,
) -> list[StoredOutcome]:
    """Parse ``data`` and store every polar in it, in the caller's transaction.

    An airfoil that does not exist yet is created when the file states its thickness
    (and its family, created too if missing). ``supersedes`` (a revision hash) applies to a
    file holding one polar.

    Raises
    ------
    FormatError
        The file cannot be read (names line and field).
    StoreError
        An airfoil is unknown and the file gives no thickness, or a conflict.
    """
    parsed = parse_upload(
        data, filename=filename, content_type=content_type, defaults=defaults,
        max_bytes=max_bytes, supersedes=supersedes,
    )
    return store_parsed(session, parsed, actor=actor, supersedes=supersedes)


def store_upload(
    factory: sessionmaker[Session],
    data: bytes,
    *,
    actor: Actor,
    filename: str | None = None,
    content_type: str | None = None,
    defaults: Mapping[str, object] | None = None,
    max_bytes: int = 5_000_000,
    supersedes: str | None = None,
) -> list[StoredOutcome]:
    """Parse ``data`` first, then store it whole in one write transaction of its own: the
    write lock is held for the storing only. Blocking; a server calls it from a worker
    thread."""
    parsed = parse_upload(
        data, filename=filename, content_type=content_type, defaults=defaults,
        max_bytes=max_bytes, supersedes=supersedes,
    )
    with session_scope(factory, write=True) as session:
        return store_parsed(session, parsed, actor=actor, supersedes=supersedes)


def _ensure_airfoil(
    session: Session, name: str, family: str | None, thickness: float | None, actor: Actor,
    line: int,
) -> None:
    try:
        airfoil_store.get_airfoil(session, name)
        return
    except NotFound:
        if thickness is None:
            raise FormatError(
                f"airfoil {name!r} is not in the database; state its thickness "
                "(# thickness: 0.21) so it can be created, or create it first",
                line=line,
                field="thickness",
            ) from None
    if family is not None:
        airfoil_store.get_or_create_family(session, name=family, actor=actor)
    airfoil_store.create_airfoil(
        session, name=name, thickness=thickness, family=family, actor=actor
    )


@dataclass(frozen=True)
class FileReport:
    """Outcome of one file of a bulk import."""

    path: Path
    stored: int
    identical: int
    error: str | None

    @property
    def status(self) -> str:
        if self.error is not None:
            return "refused"
        if self.stored == 0:
            return "identical"
        return "stored"


def table_files(paths: Iterable[Path]) -> list[Path]:
    """Files to import: the given files, and the table files found under given folders."""
    found: list[Path] = []
    for path in paths:
        if path.is_dir():
            found.extend(
                sorted(p for p in path.rglob("*") if p.suffix.lower() in TABLE_SUFFIXES
                       and p.is_file())
            )
        else:
            found.append(path)
    return found


def import_files(
    factory: sessionmaker[Session],
    paths: Iterable[Path],
    *,
    actor: Actor,
    defaults: Mapping[str, object] | None = None,
    max_bytes: int = 5_000_000,
) -> Iterator[FileReport]:
    """Import files one transaction each, yielding a report per file as it finishes
    (the caller shows progress). A refused file leaves the database unchanged."""
    for path in paths:
        try:
            outcomes = store_upload(
                factory, path.read_bytes(), actor=actor, filename=path.name,
                defaults=defaults, max_bytes=max_bytes,
            )
        except (FormatError, StoreError, OSError, ValueError, ArithmeticError) as exc:
            yield FileReport(path=path, stored=0, identical=0, error=str(exc))
            continue
        created = sum(o.created for o in outcomes)
        yield FileReport(
            path=path, stored=created, identical=len(outcomes) - created, error=None
        )


def load_demo(factory: sessionmaker[Session], seed_dir: Path, *, actor: Actor) -> dict[str, int]:
    """Load the demo family, its polars and blade from ``seed_dir`` (idempotent)."""
    family_file = seed_dir / "family.json"
    family_doc = json.loads(family_file.read_text(encoding="utf-8"))
    with session_scope(factory, write=True) as session:
        airfoil_store.get_or_create_family(
            session, name=family_doc["family"], description=family_doc.get("notes", ""),
            actor=actor,
        )
        for airfoil in family_doc["airfoils"]:
            airfoil_store.create_airfoil(
                session, name=airfoil["name"], thickness=airfoil["thickness"],
                family=family_doc["family"], description=airfoil.get("description", ""),
                actor=actor,
            )
    reports = list(import_files(factory, table_files([seed_dir / family_doc["family"]]),
                                actor=actor))
    refused = [r for r in reports if r.error]
    if refused:
        raise FormatError(f"demo file {refused[0].path.name} refused: {refused[0].error}")
    blades = 0
    for blade_file in sorted(seed_dir.glob("*.json")):
        if blade_file == family_file:
            continue
        definition = json.loads(blade_file.read_text(encoding="utf-8"))
        if "stations" not in definition:
            continue
        with session_scope(factory, write=True) as session:
            _, created = blade_store.store_blade(
                session, name=definition["name"], definition=definition, actor=actor
            )
            blades += int(created)
    return {
        "files": len(reports),
        "stored": sum(r.stored for r in reports),
        "identical": sum(r.identical for r in reports),
        "blades": blades,
    }
