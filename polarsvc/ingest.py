"""Storing uploaded files: parse (polarsvc.formats), check quality (polarsvc.aero.quality),
create missing airfoils in existing families, store each polar as a revision
(polarsvc.store). One implementation for the HTTP upload, the
command-line import and the demo seeding.

A file is stored whole or not at all: the caller's transaction is rolled back on any error.
"""

from __future__ import annotations

import dataclasses
import json
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session, sessionmaker

from polarsvc.aero.quality import UNOVERRIDABLE, QualityFlag, context_flags, table_flags
from polarsvc.formats import FormatError, parse_polar_file
from polarsvc.formats.metadata import ParsedPolar
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import blades as blade_store
from polarsvc.store import polars as polar_store
from polarsvc.store.audit import Actor
from polarsvc.store.db import refresh_planner_statistics, session_scope
from polarsvc.store.errors import NotFound, StoreError
from polarsvc.store.models import Airfoil, PolarRevision

TABLE_SUFFIXES = (".csv", ".tsv", ".txt", ".dat", ".json")


class QualityRefused(FormatError):
    """A polar of the file raised error-level quality flags and no override was given (or
    a flag no override lifts). ``flags`` holds every flag of that polar, each with its
    file ``line`` and ``field``; the message names the first error's line and field."""

    def __init__(self, airfoil: str, flags: list[dict[str, Any]], *, overridable: bool):
        self.flags = flags
        errors = [f for f in flags if f["level"] == "error"]
        first = errors[0]
        listed = "; ".join(
            f"{_where(f)}{f['message']} [{f['code']}]" for f in errors
        )
        advice = (
            "a curator may store it anyway by giving the reason as override_quality "
            "(--override-quality on the command line)"
            if overridable
            else "no override applies to these values"
        )
        super().__init__(
            f"polar of airfoil {airfoil!r} refused by quality checks: {listed}; {advice}",
            line=first.get("line"),
            field=first.get("field"),
        )


def _where(flag: Mapping[str, Any]) -> str:
    parts = []
    if flag.get("line") is not None:
        parts.append(f"line {flag['line']}")
    if flag.get("field") is not None:
        parts.append(f"field '{flag['field']}'")
    return f"{', '.join(parts)}: " if parts else ""


@dataclass(frozen=True)
class StoredOutcome:
    """What happened to one polar of a file."""

    airfoil: str
    content_hash: str
    created: bool
    reynolds: float | None
    surface: str
    source_line: int
    flags: tuple[dict[str, Any], ...] = ()
    filename: str | None = None

    def as_dict(self) -> dict[str, Any]:
        return {
            "airfoil": self.airfoil,
            "content_hash": self.content_hash,
            "created": self.created,
            "reynolds": self.reynolds,
            "surface": self.surface,
            "source_line": self.source_line,
            "quality_flags": list(self.flags),
            "filename": self.filename,
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
    override_quality: str | None = None,
    filename: str | None = None,
) -> list[StoredOutcome]:
    """Store parsed polars in the caller's transaction (see :func:`store_file`)."""
    override = (override_quality or "").strip() or None
    outcomes = []
    for item in parsed:
        airfoil = _ensure_airfoil(session, item, actor)
        flags = polar_flags(session, item, airfoil)
        errors = [f for f in flags if f["level"] == "error"]
        hard = [f for f in errors if f["code"] in UNOVERRIDABLE]
        if hard or (errors and override is None):
            raise QualityRefused(item.airfoil, flags, overridable=not hard)
        revision, created = polar_store.store_polar(
            session,
            airfoil_name=airfoil.name,
            polar=item.polar,
            provenance=item.provenance,
            supersedes_hash=supersedes,
            quality_flags=flags,
            quality_override=override if errors else None,
            actor=actor,
        )
        outcomes.append(
            StoredOutcome(
                airfoil=airfoil.name,
                content_hash=revision.content_hash,
                created=created,
                reynolds=revision.reynolds,
                surface=revision.surface,
                source_line=item.source_line,
                flags=tuple(polar_store.revision_flags(revision)),
                filename=filename,
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
    override_quality: str | None = None,
) -> list[StoredOutcome]:
    """Parse ``data`` and store every polar in it, in the caller's transaction.

    An airfoil that does not exist yet is created when the file states its thickness; its
    family must exist already (a misspelt family name is refused, not created).
    ``supersedes`` (a revision hash) applies to a file holding one polar.

    Every polar gets quality flags (:mod:`polarsvc.aero.quality`: the table, and its place
    in the family). Error-level flags refuse the file, naming line and field, unless
    ``override_quality`` gives the curator's reason for storing it anyway (kept with the
    revision and in its audit event); warnings are stored with the revision.

    Raises
    ------
    FormatError
        The file cannot be read (names line and field), its family does not exist, or
        :class:`QualityRefused`.
    StoreError
        An airfoil is unknown and the file gives no thickness, or a conflict.
    """
    parsed = parse_upload(
        data, filename=filename, content_type=content_type, defaults=defaults,
        max_bytes=max_bytes, supersedes=supersedes,
    )
    return store_parsed(session, parsed, actor=actor, supersedes=supersedes,
                        override_quality=override_quality, filename=filename)


@dataclass(frozen=True)
class UploadedFile:
    """One file of an upload: name (or None), bytes, declared content type (or None)."""

    filename: str | None
    data: bytes
    content_type: str | None = None


def _named(exc: FormatError, upload: UploadedFile, several: bool) -> FormatError:
    """Prefix the file name to an error of one file of an upload (and set ``file``)."""
    if several or upload.filename:
        exc.args = (f"file {upload.filename!r}: {exc.args[0]}",)
        exc.file = upload.filename  # type: ignore[attr-defined]
    return exc


def store_uploads(
    factory: sessionmaker[Session],
    files: Sequence[UploadedFile],
    *,
    actor: Actor,
    defaults: Mapping[str, object] | None = None,
    max_bytes: int = 5_000_000,
    supersedes: str | None = None,
    override_quality: str | None = None,
) -> list[StoredOutcome]:
    """Parse every file first, then store them all in one write transaction of its own
    (all or nothing; the write lock is held for the storing only). An error names the file
    it comes from. Blocking; a server calls it from a worker thread."""
    if supersedes is not None and len(files) != 1:
        raise FormatError("'supersedes' applies to an upload of one file", field="supersedes")
    several = len(files) > 1
    parsed = []
    for upload in files:
        try:
            parsed.append(parse_upload(
                upload.data, filename=upload.filename, content_type=upload.content_type,
                defaults=defaults, max_bytes=max_bytes, supersedes=supersedes,
            ))
        except FormatError as exc:
            raise _named(exc, upload, several) from None
    outcomes: list[StoredOutcome] = []
    with session_scope(factory, write=True) as session:
        for upload, items in zip(files, parsed, strict=True):
            try:
                outcomes.extend(store_parsed(
                    session, items, actor=actor, supersedes=supersedes,
                    override_quality=override_quality, filename=upload.filename,
                ))
            except FormatError as exc:
                raise _named(exc, upload, several) from None
    return outcomes


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
    override_quality: str | None = None,
) -> list[StoredOutcome]:
    """:func:`store_uploads` of one file (parsed before the write transaction)."""
    parsed = parse_upload(
        data, filename=filename, content_type=content_type, defaults=defaults,
        max_bytes=max_bytes, supersedes=supersedes,
    )
    with session_scope(factory, write=True) as session:
        return store_parsed(session, parsed, actor=actor, supersedes=supersedes,
                            override_quality=override_quality, filename=filename)


def polar_flags(session: Session, item: ParsedPolar, airfoil: Airfoil) -> list[dict[str, Any]]:
    """Quality flags of a parsed polar as a member of ``airfoil``'s family, each as a dict
    with the file ``line`` and ``field`` it concerns."""
    polar = item.polar
    if polar.thickness is None:
        polar = dataclasses.replace(polar, thickness=airfoil.thickness, assume_degrees=True)
    family_machs: list[float] = []
    if airfoil.family_id is not None:
        family_machs = list(session.scalars(
            select(PolarRevision.mach).join(Airfoil)
            .where(Airfoil.family_id == airfoil.family_id,
                   PolarRevision.review_state != "deprecated")
            .distinct()
        ))
    found = table_flags(polar) + context_flags(
        polar, in_family=airfoil.family_id is not None, mach_stated=item.mach_stated,
        family_machs=family_machs,
    )
    if item.angle_unit_assumed:
        found.append(QualityFlag(
            "angle-unit-assumed", "warning",
            "the angle column names no unit; degrees were assumed", field="alpha_deg",
        ))
    result = []
    for flag in found:
        line, field = item.locate(flag.row, flag.field)
        result.append({**flag.as_dict(), "line": line, "field": field})
    return result


def _ensure_airfoil(session: Session, item: ParsedPolar, actor: Actor) -> Airfoil:
    """The airfoil of a parsed polar, created (in an existing family) where the file states
    its thickness."""
    try:
        airfoil = airfoil_store.get_airfoil(session, item.airfoil)
    except NotFound:
        airfoil = None
    if airfoil is not None:
        current = airfoil.family.name if airfoil.family is not None else None
        if item.family is not None and item.family != current:
            raise FormatError(
                f"airfoil {airfoil.name!r} belongs to family {current!r}, not "
                f"{item.family!r}; move it first (polarsvc airfoil move) or correct the file",
                field="family",
            )
        return airfoil
    if item.polar.thickness is None:
        raise FormatError(
            f"airfoil {item.airfoil!r} is not in the database; state its thickness "
            "(# thickness: 0.21) so it can be created, or create it first",
            line=item.source_line,
            field="thickness",
        )
    if item.family is not None:
        try:
            airfoil_store.get_family(session, item.family)
        except NotFound:
            raise FormatError(
                f"family {item.family!r} does not exist; create it first "
                f"(POST /api/v1/families {{\"name\": \"{item.family}\"}}, or "
                f"'polarsvc family create {item.family}'), or correct the name",
                field="family",
            ) from None
    airfoil, _ = airfoil_store.create_airfoil(
        session, name=item.airfoil, thickness=item.polar.thickness, family=item.family,
        actor=actor,
    )
    return airfoil


@dataclass(frozen=True)
class FileReport:
    """Outcome of one file of a bulk import."""

    path: Path
    stored: int
    identical: int
    error: str | None
    flags: tuple[dict[str, Any], ...] = ()

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
    override_quality: str | None = None,
) -> Iterator[FileReport]:
    """Import files one transaction each, yielding a report per file as it finishes
    (the caller shows progress). A refused file leaves the database unchanged. When every
    file is done the planner's statistics are refreshed
    (:func:`polarsvc.store.db.refresh_planner_statistics`)."""
    for path in paths:
        try:
            outcomes = store_upload(
                factory, path.read_bytes(), actor=actor, filename=path.name,
                defaults=defaults, max_bytes=max_bytes, override_quality=override_quality,
            )
        except (FormatError, StoreError, OSError, ValueError, ArithmeticError) as exc:
            yield FileReport(path=path, stored=0, identical=0, error=str(exc))
            continue
        created = sum(o.created for o in outcomes)
        yield FileReport(
            path=path, stored=created, identical=len(outcomes) - created, error=None,
            flags=tuple(f for o in outcomes for f in o.flags),
        )
    refresh_planner_statistics(factory)


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
