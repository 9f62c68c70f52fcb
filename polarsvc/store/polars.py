"""Stored polar revisions: store, load, look up, list and review."""

from __future__ import annotations

import datetime as dt
import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from sqlalchemy import Integer, bindparam, func, select
from sqlalchemy.engine import Connection
from sqlalchemy.ext.compiler import compiles
from sqlalchemy.orm import Session, aliased, contains_eager, defer, selectinload
from sqlalchemy.sql.functions import FunctionElement

from polarsvc.aero.polar import Polar
from polarsvc.aero.quality import table_flags
from polarsvc.hashing import (
    PROVENANCE_FIELDS,
    canonical_array_bytes,
    canonical_json,
    decode_array_bytes,
    polar_content_hash,
)
from polarsvc.lru import LruCache
from polarsvc.store._lookup import (
    HASH_DIGITS,
    check_choice,
    check_text,
    find_by_hash,
    hash_condition,
    insert_or_winner,
    normalise_hash_key,
)
from polarsvc.store.airfoils import get_airfoil
from polarsvc.store.audit import Actor, record_event
from polarsvc.store.errors import (
    IntegrityProblem,
    InvalidTransition,
    InvalidValue,
    NotFound,
)
from polarsvc.store.models import REVIEW_STATES, SOURCE_KINDS, Airfoil, Family, PolarRevision
from polarsvc.store.paging import (
    DEFAULT_PAGE_SIZE,
    Page,
    check_limit,
    count_rows,
    decode_cursor,
    keyset_after,
)
from polarsvc.store.paging import take_page as _take_page

REVIEW_TRANSITIONS: dict[str, tuple[str, ...]] = {
    "draft": ("approved", "deprecated"),
    "approved": ("deprecated",),
    "deprecated": (),
}
"""Allowed review-state changes; deprecation needs a reason."""

THICKNESS_TOLERANCE = 1e-9


def normalise_provenance(provenance: Mapping[str, Any]) -> dict[str, Any]:
    """Check a provenance mapping and return it with every field present.

    ``source_kind`` is required and one of :data:`~polarsvc.store.models.SOURCE_KINDS`;
    ``measured_on`` may be a :class:`datetime.date` or an ISO ``YYYY-MM-DD`` string (it is
    returned as a date); the other fields are strings or None, kept literally (no control
    characters other than tab and line ends: :func:`polarsvc.names.check_text`).

    Raises
    ------
    InvalidValue
        Naming the offending field.
    """
    unknown = sorted(set(provenance) - set(PROVENANCE_FIELDS))
    if unknown:
        raise InvalidValue(unknown[0], f"unknown provenance field; known: {PROVENANCE_FIELDS}")
    result: dict[str, Any] = {name: provenance.get(name) for name in PROVENANCE_FIELDS}
    if result["source_kind"] is None:
        raise InvalidValue("source_kind", "is required")
    check_choice("source_kind", result["source_kind"], SOURCE_KINDS)
    measured_on = result["measured_on"]
    if isinstance(measured_on, str):
        try:
            measured_on = dt.date.fromisoformat(measured_on)
        except ValueError:
            raise InvalidValue("measured_on", f"{measured_on!r} is not a YYYY-MM-DD date") from None
    if isinstance(measured_on, dt.datetime) or not (
        measured_on is None or isinstance(measured_on, dt.date)
    ):
        raise InvalidValue("measured_on", f"must be a date, got {type(measured_on).__name__}")
    result["measured_on"] = measured_on
    for name in ("reference", "facility", "contributor", "notes"):
        check_text(name, result[name])
    return result


def revision_provenance(revision: PolarRevision | RevisionSummary) -> dict[str, Any]:
    """The provenance fields of a stored revision."""
    return {name: getattr(revision, name) for name in PROVENANCE_FIELDS}


def store_polar(
    session: Session,
    *,
    airfoil_name: str,
    polar: Polar,
    provenance: Mapping[str, Any],
    supersedes_hash: str | None = None,
    quality_flags: Sequence[Mapping[str, Any]] | None = None,
    quality_override: str | None = None,
    actor: Actor,
    audit_action: str = "polar.store",
    audit_detail: Mapping[str, Any] | None = None,
) -> tuple[PolarRevision, bool]:
    """Store a polar as a new draft revision, or return the identical stored one.

    Parameters
    ----------
    airfoil_name : str
        An existing airfoil. If ``polar.thickness`` is set it must equal the airfoil's.
    polar : Polar
        The validated table with its conditions.
    provenance : mapping
        See :func:`normalise_provenance`.
    supersedes_hash : str, optional
        Full hash or unique prefix of the revision this one supersedes (same airfoil).
    quality_flags : sequence of mappings, optional
        The flags found at upload (:mod:`polarsvc.aero.quality`, as dicts, with the file
        line where known); None computes the flags of the table alone. Stored with the
        revision; nothing is refused here (the upload path refuses error-level flags).
    quality_override : str, optional
        Why a curator stored the table despite error-level flags (kept with the revision and
        in the audit event).
    actor : Actor
        Recorded in the audit trail (one event when a revision is created, none otherwise).
    audit_action, audit_detail
        The action name of that event and extra detail (a correction records its own).

    Returns
    -------
    (PolarRevision, bool)
        The revision and whether it was created. Identical content (same hash) returns the
        stored revision untouched, also when another transaction stores it concurrently.

    Raises
    ------
    NotFound
        If the airfoil or the superseded revision does not exist.
    InvalidValue
        On bad provenance, a thickness that disagrees with the airfoil's, or a superseded
        revision of another airfoil.
    """
    airfoil = get_airfoil(session, airfoil_name)
    thickness = polar.thickness
    if thickness is not None and abs(thickness - airfoil.thickness) > THICKNESS_TOLERANCE:
        raise InvalidValue(
            "thickness",
            f"the polar says {thickness:g} but airfoil {airfoil_name!r} has {airfoil.thickness:g}",
        )
    fields = normalise_provenance(provenance)
    superseded = None
    if supersedes_hash is not None:
        superseded = get_revision(session, supersedes_hash)
        if superseded.airfoil_id != airfoil.id:
            raise InvalidValue(
                "supersedes_hash",
                f"revision {superseded.content_hash[:12]} belongs to airfoil "
                f"{superseded.airfoil.name!r}, not {airfoil_name!r}",
            )
    content_hash = polar_content_hash(
        polar,
        airfoil_name=airfoil_name,
        provenance=fields,
        supersedes_hash=None if superseded is None else superseded.content_hash,
    )
    existing = _by_full_hash(session, content_hash)
    if existing is not None:
        return existing, False
    if quality_flags is None:
        quality_flags = [f.as_dict() for f in table_flags(polar)]
    flags = [dict(f) for f in quality_flags]
    revision = PolarRevision(
        content_hash=content_hash,
        airfoil=airfoil,
        reynolds=polar.reynolds,
        mach=polar.mach,
        surface=polar.surface,
        n_rows=polar.size,
        has_cm=polar.has_cm,
        alpha_deg=canonical_array_bytes(polar.alpha_deg),
        cl=canonical_array_bytes(polar.cl),
        cd=canonical_array_bytes(polar.cd),
        cm=None if polar.cm is None else canonical_array_bytes(polar.cm),
        supersedes_id=None if superseded is None else superseded.id,
        review_state="draft",
        created_by=actor.name,
        quality_flags=canonical_json(flags).decode("utf-8"),
        quality_override=quality_override,
        **fields,
    )
    # the same content may be committed by a concurrent transaction (unique content_hash)
    revision, created = insert_or_winner(
        session, revision, lambda: _by_full_hash(session, content_hash)
    )
    if not created:
        return revision, False
    record_event(
        session,
        actor=actor,
        action=audit_action,
        object_kind="polar_revision",
        object_key=content_hash,
        before_hash=None if superseded is None else superseded.content_hash,
        after_hash=content_hash,
        detail={
            "airfoil": airfoil_name,
            "reynolds": polar.reynolds,
            "mach": polar.mach,
            "surface": polar.surface,
            "rows": polar.size,
            "supersedes": None if superseded is None else superseded.content_hash,
            "quality": {
                "errors": [f["code"] for f in flags if f.get("level") == "error"],
                "warnings": [f["code"] for f in flags if f.get("level") == "warning"],
                "override": quality_override,
            },
            **dict(audit_detail or {}),
        },
    )
    return revision, True


def revision_flags(revision: PolarRevision | RevisionSummary) -> list[dict[str, Any]]:
    """The quality flags of a revision: as stored at upload, or (for revisions stored
    before flags existed) computed from its table alone (a listing's summary, which holds
    no table, shows none for those)."""
    if revision.quality_flags is not None:
        return list(json.loads(revision.quality_flags))
    if not isinstance(revision, PolarRevision):
        return []
    return [f.as_dict() for f in table_flags(load_polar(revision))]


def _by_full_hash(session: Session, content_hash: str) -> PolarRevision | None:
    return session.scalars(
        select(PolarRevision).where(PolarRevision.content_hash == content_hash)
    ).one_or_none()


def load_polar(revision: PolarRevision) -> Polar:
    """Rebuild the :class:`Polar` of a stored revision, bit for bit.

    The thickness comes from the airfoil; the history holds one step
    ``{"step": "stored-revision", "content_hash": ...}``.

    Raises
    ------
    IntegrityProblem
        If a stored column does not hold ``n_rows`` values or ``cm`` disagrees with
        ``has_cm``.
    """
    columns = {}
    for name in ("alpha_deg", "cl", "cd", "cm"):
        blob = getattr(revision, name)
        if blob is None:
            continue
        try:
            columns[name] = decode_array_bytes(bytes(blob), (revision.n_rows,))
        except ValueError as exc:
            raise IntegrityProblem(
                f"revision {revision.content_hash}: column {name}: {exc}"
            ) from None
    if ("cm" in columns) != revision.has_cm:
        raise IntegrityProblem(
            f"revision {revision.content_hash}: has_cm={revision.has_cm} but cm is "
            f"{'present' if 'cm' in columns else 'missing'}"
        )
    return Polar(
        alpha_deg=columns["alpha_deg"],
        cl=columns["cl"],
        cd=columns["cd"],
        cm=columns.get("cm"),
        reynolds=revision.reynolds,
        mach=revision.mach,
        thickness=revision.airfoil.thickness,
        surface=revision.surface,
        history=({"step": "stored-revision", "content_hash": revision.content_hash},),
        assume_degrees=True,
    )


def _table_bytes(table: dict[str, Any]) -> int:
    return sum(array.nbytes for array in table.values()) + 512


REVISION_TABLES_MAX_BYTES = 32 * 2**20
REVISION_TABLES: LruCache[dict[str, Any]] = LruCache(
    max_entries=20000, max_size=REVISION_TABLES_MAX_BYTES, size_of=_table_bytes
)
"""Decoded tables of stored revisions by content hash (a revision's table never changes;
only its review fields do, and they are not kept here). Bounded in bytes."""


def revision_table(revision: PolarRevision) -> dict[str, Any]:
    """The stored table of a revision as read-only arrays ``alpha_deg, cl, cd[, cm]``,
    decoded and validated once per content hash (:data:`REVISION_TABLES`)."""

    def load() -> dict[str, Any]:
        polar = load_polar(revision)
        table = {"alpha_deg": polar.alpha_deg, "cl": polar.cl, "cd": polar.cd}
        if polar.cm is not None:
            table["cm"] = polar.cm
        for array in table.values():
            array.flags.writeable = False
        return table

    return REVISION_TABLES.get(revision.content_hash, load)


_BRIEF_COLUMNS = (PolarRevision.content_hash, Airfoil.name, PolarRevision.review_state)
_BRIEF_BY_FULL_HASH = (
    select(*_BRIEF_COLUMNS)
    .join(Airfoil, Airfoil.id == PolarRevision.airfoil_id)
    .where(PolarRevision.content_hash == bindparam("content_hash"))
)
"""Built once: a full hash is answered by a compiled, cached statement on a connection,
without the ORM's per-statement work (about 0.2 ms of CPU against 1.1 ms)."""


def revision_brief(session: Session | Connection, key: str) -> tuple[str, str, str]:
    """``(content_hash, airfoil name, review_state)`` of the revision named by ``key`` (a
    full hash or a unique prefix), read without the revision's table, through a session or
    straight on a connection (a full hash then costs one compiled, cached statement).

    Raises
    ------
    NotFound, AmbiguousKey, InvalidValue
        As :func:`get_revision`.
    """
    connection = session.connection() if isinstance(session, Session) else session
    normalised = normalise_hash_key(key)
    if len(normalised) == HASH_DIGITS:
        rows = connection.execute(_BRIEF_BY_FULL_HASH, {"content_hash": normalised}).all()
    else:
        statement = (
            select(*_BRIEF_COLUMNS)
            .join(Airfoil, Airfoil.id == PolarRevision.airfoil_id)
            .where(hash_condition(PolarRevision.content_hash, normalised))
            .limit(2)
        )
        rows = connection.execute(statement).all()
    if len(rows) != 1:
        with Session(bind=connection) as lookup:
            get_revision(lookup, key)  # raises the error that names the problem
    content_hash, airfoil_name, review_state = rows[0]
    return content_hash, airfoil_name, review_state


def table_of(session: Session, content_hash: str) -> dict[str, Any]:
    """The decoded table of the revision with this full content hash, from
    :data:`REVISION_TABLES` (read from the database on its first use)."""
    table = REVISION_TABLES.peek(content_hash)
    if table is None:
        table = revision_table(get_revision(session, content_hash))
    return table


def verify_revision(revision: PolarRevision) -> str:
    """Recompute a stored revision's content hash; return it, or raise
    :class:`IntegrityProblem` if it differs from the stored one.

    The hash holds the airfoil name the revision was stored under: the current name, or
    after a rename one of the airfoil's former names (aliases)."""
    supersedes = revision.supersedes.content_hash if revision.supersedes is not None else None
    polar = load_polar(revision)
    names = [revision.airfoil.name, *(a.name for a in revision.airfoil.aliases)]
    for name in names:
        recomputed = polar_content_hash(
            polar,
            airfoil_name=name,
            provenance=revision_provenance(revision),
            supersedes_hash=supersedes,
        )
        if recomputed == revision.content_hash:
            break
    if recomputed != revision.content_hash:
        raise IntegrityProblem(
            f"revision {revision.content_hash}: content now hashes to {recomputed}"
        )
    return recomputed


def get_revision(session: Session, key: str) -> PolarRevision:
    """The revision whose content hash is ``key`` or starts with it (at least 8 digits).

    Raises
    ------
    NotFound, AmbiguousKey, InvalidValue
    """
    return find_by_hash(session, PolarRevision, "polar revision", key)


TABLE_COLUMNS = ("alpha_deg", "cl", "cd", "cm")
"""The array columns of a revision; summaries never read them."""


def _summary_options(airfoil_loader: Any) -> tuple[Any, ...]:
    """Loader options of a revision summary: no table columns; the airfoil (through
    ``airfoil_loader``) and its family, and the hashes of the superseded and replacing
    revisions, loaded in bulk rather than row by row."""
    return (
        *(defer(getattr(PolarRevision, name)) for name in TABLE_COLUMNS),
        airfoil_loader.selectinload(Airfoil.family),
        selectinload(PolarRevision.supersedes).load_only(PolarRevision.content_hash),
        selectinload(PolarRevision.replaced_by).load_only(PolarRevision.content_hash),
    )


def _revision_filters(
    statement: Any,
    *,
    airfoil: str | None,
    family: str | None,
    reynolds: float | None,
    surface: str | None,
    review_state: str | None,
    source_kind: str | None = None,
) -> Any:
    if airfoil is not None:
        statement = statement.where(Airfoil.name == airfoil)
    if family is not None:
        family_id = select(Family.id).where(Family.name == family).scalar_subquery()
        statement = statement.where(Airfoil.family_id == family_id)
    if reynolds is not None:
        statement = statement.where(PolarRevision.reynolds == float(reynolds))
    if surface is not None:
        statement = statement.where(PolarRevision.surface == surface)
    if review_state is not None:
        check_choice("review_state", review_state, REVIEW_STATES)
        statement = statement.where(PolarRevision.review_state == review_state)
    if source_kind is not None:
        check_choice("source_kind", source_kind, SOURCE_KINDS)
        statement = statement.where(PolarRevision.source_kind == source_kind)
    return statement


def list_revisions(
    session: Session,
    *,
    airfoil: str | None = None,
    family: str | None = None,
    reynolds: float | None = None,
    surface: str | None = None,
    review_state: str | None = None,
    with_tables: bool = True,
) -> Sequence[PolarRevision]:
    """Revisions matching every filter given, by airfoil name, Reynolds number, surface,
    then storage order. ``reynolds`` matches exactly. With ``with_tables=False`` the table
    columns are not read (they load on first access) and the relations a summary shows are
    loaded in bulk. For long listings use :func:`page_revisions`."""
    if airfoil is not None:
        try:
            airfoil = get_airfoil(session, airfoil).name  # a former name resolves too
        except NotFound:
            return []
    statement = _revision_filters(
        select(PolarRevision).join(Airfoil), airfoil=airfoil, family=family,
        reynolds=reynolds, surface=surface, review_state=review_state,
    )
    if not with_tables:
        statement = statement.options(*_summary_options(contains_eager(PolarRevision.airfoil)))
    statement = statement.order_by(
        Airfoil.name, PolarRevision.reynolds, PolarRevision.surface, PolarRevision.id
    )
    return session.scalars(statement).all()


@dataclass(frozen=True)
class NameRef:
    """A related row seen by a summary: its name."""

    name: str


@dataclass(frozen=True)
class HashRef:
    """A related revision seen by a summary: its content hash."""

    content_hash: str


@dataclass(frozen=True)
class AirfoilRef:
    """The airfoil of a revision summary."""

    name: str
    thickness: float
    family: NameRef | None


@dataclass(frozen=True)
class RevisionSummary:
    """A revision as a listing shows it, read by one Core query (no ORM objects, no table
    columns). Attribute names are those of :class:`PolarRevision`, so the same code turns
    either into its public form."""

    id: int
    content_hash: str
    airfoil: AirfoilRef
    reynolds: float | None
    mach: float
    surface: str
    n_rows: int
    has_cm: bool
    source_kind: str
    reference: str | None
    facility: str | None
    measured_on: dt.date | None
    contributor: str | None
    notes: str | None
    supersedes: HashRef | None
    review_state: str
    review_reason: str | None
    replaced_by: HashRef | None
    created_at: dt.datetime
    created_by: str
    quality_flags: str | None = None
    quality_override: str | None = None


_SUMMARY_COLUMNS = (
    "id", "content_hash", "reynolds", "mach", "surface", "n_rows", "has_cm", "source_kind",
    "reference", "facility", "measured_on", "contributor", "notes", "review_state",
    "review_reason", "created_at", "created_by", "quality_flags", "quality_override",
)


_SUPERSEDES = aliased(PolarRevision, name="supersedes_revision")
_REPLACED_BY = aliased(PolarRevision, name="replacing_revision")


def _summary_select() -> Any:
    # the aliases are made once: fresh ones would make a new statement (and a compilation
    # of it) per request instead of one from SQLAlchemy's statement cache
    supersedes, replaced_by = _SUPERSEDES, _REPLACED_BY
    return (
        select(
            *(getattr(PolarRevision, name) for name in _SUMMARY_COLUMNS),
            Airfoil.name, Airfoil.thickness, Family.name,
            supersedes.content_hash, replaced_by.content_hash,
        )
        .join(Airfoil, Airfoil.id == PolarRevision.airfoil_id)
        .outerjoin(Family, Family.id == Airfoil.family_id)
        .outerjoin(supersedes, supersedes.id == PolarRevision.supersedes_id)
        .outerjoin(replaced_by, replaced_by.id == PolarRevision.replaced_by_id)
    )


def _summary_of(row: Any) -> RevisionSummary:
    values = dict(zip(_SUMMARY_COLUMNS, row[: len(_SUMMARY_COLUMNS)], strict=True))
    airfoil_name, thickness, family_name, supersedes, replaced_by = row[len(_SUMMARY_COLUMNS):]
    return RevisionSummary(
        **values,
        airfoil=AirfoilRef(airfoil_name, thickness, NameRef(family_name) if family_name else None),
        supersedes=HashRef(supersedes) if supersedes else None,
        replaced_by=HashRef(replaced_by) if replaced_by else None,
    )


class not_looked_up(FunctionElement[int]):  # noqa: N801 (an SQL construct, named as one)
    """A column the planner may read but not look rows up by: ``+column`` on SQLite (the
    unary plus disqualifies the term from index use; SQLite documentation, "The SQLite
    Query Optimizer Overview", section "Disqualifying WHERE clause terms using unary-'+'"),
    the column itself elsewhere."""

    inherit_cache = True
    type = Integer()


@compiles(not_looked_up)
def _column_itself(element: not_looked_up, compiler: Any, **kw: Any) -> str:
    return compiler.process(next(iter(element.clauses)), **kw)


@compiles(not_looked_up, "sqlite")
def _unary_plus(element: not_looked_up, compiler: Any, **kw: Any) -> str:
    return "+" + compiler.process(next(iter(element.clauses)), **kw)


def _listing_from(statement: Any) -> Any:
    """``statement`` over revisions joined to their airfoils, as the listing reads them.

    On SQLite the join names the airfoil's id through :class:`not_looked_up`: a revision
    cannot find its airfoil by primary key, so the planner has one good plan left, whatever
    statistics it has (none at all on a database never analysed): airfoils in name order
    (the unique name index), and for each its revisions in id order from
    ``ix_polar_revision_listing`` (which holds every filtered column). A page stops after
    ``limit + 1`` rows. Without it SQLite's planner, given filters on two revision columns
    and no statistics, scanned the whole listing index and sorted the matching rows (16x
    slower at 50 000 revisions than at 1000).
    """
    return statement.join(Airfoil, not_looked_up(Airfoil.id) == PolarRevision.airfoil_id)


def revision_page_keys(
    *,
    airfoil: str | None = None,
    family: str | None = None,
    reynolds: float | None = None,
    surface: str | None = None,
    review_state: str | None = None,
    source_kind: str | None = None,
    after: str | None = None,
    limit: int = DEFAULT_PAGE_SIZE,
) -> Any:
    """The query of the ids of one page of :func:`page_revisions` (``limit + 1`` ids, in
    keyset order: airfoil name, then id).

    Raises
    ------
    InvalidValue
        On a bad cursor, review state or source kind.
    """
    keys = _revision_filters(
        _listing_from(select(PolarRevision.id)), airfoil=airfoil, family=family,
        reynolds=reynolds, surface=surface, review_state=review_state, source_kind=source_kind,
    )
    if after is not None:
        name, revision_id = decode_cursor(after, (str, int))
        keys = keys.where(keyset_after((Airfoil.name, PolarRevision.id), (name, revision_id)))
    return keys.order_by(Airfoil.name, PolarRevision.id).limit(limit + 1)


def page_revisions(
    session: Session,
    *,
    airfoil: str | None = None,
    family: str | None = None,
    reynolds: float | None = None,
    surface: str | None = None,
    review_state: str | None = None,
    source_kind: str | None = None,
    after: str | None = None,
    limit: int = DEFAULT_PAGE_SIZE,
    count: bool = True,
) -> Page[RevisionSummary]:
    """One page of revision summaries matching every filter given, by airfoil name, then
    storage order (keyset pagination, :mod:`polarsvc.store.paging`).

    One Core query reads the summary columns (never the tables) with the airfoil, family
    and related hashes; ``after`` is the previous page's ``next_cursor``; ``count`` adds the
    number of matching revisions (an index-only count, kept until the next write).

    Raises
    ------
    InvalidValue
        On a bad cursor, limit, review state or source kind.
    """
    limit = check_limit(limit)
    filters = {
        "airfoil": airfoil, "family": family, "reynolds": reynolds, "surface": surface,
        "review_state": review_state, "source_kind": source_kind,
    }
    # first the page's ids from the indexes alone (airfoil names, then the listing index
    # per airfoil, in order), then their summary columns by primary key: the planner never
    # gets the chance to scan the revisions table and sort it
    ids = session.scalars(revision_page_keys(**filters, after=after, limit=limit)).all()
    by_id = {
        row[0]: _summary_of(row)
        for row in session.execute(_summary_select().where(PolarRevision.id.in_(ids)))
    }
    rows = [by_id[i] for i in ids]
    total = None
    if count:
        total = count_rows(
            session,
            _revision_filters(_listing_from(select(func.count(PolarRevision.id))), **filters),
            ("revisions", airfoil, family, reynolds, surface, review_state, source_kind),
        )
    return _take_page(rows, limit, lambda r: (r.airfoil.name, r.id), total)


def revisions_matching(
    *, surface: str | None = None, review_state: str | None = None,
    source_kind: str | None = None,
) -> Any:
    """An SQL condition on :class:`Airfoil`: it has a revision with every property given
    (an EXISTS answered from ``ix_polar_revision_listing``)."""
    statement = select(PolarRevision.id).where(PolarRevision.airfoil_id == Airfoil.id)
    statement = _revision_filters(
        statement, airfoil=None, family=None, reynolds=None, surface=surface,
        review_state=review_state, source_kind=source_kind,
    )
    return statement.exists()


def revision_groups(
    session: Session,
    airfoil_ids: Sequence[int],
    *,
    surface: str | None = None,
    review_state: str | None = None,
    source_kind: str | None = None,
) -> dict[int, list[tuple[float | None, str, str, str, int]]]:
    """For each airfoil id given, its matching revisions grouped by (Reynolds number,
    surface, review state, source kind) with their counts: one grouped query over the
    listing index, no table columns read."""
    if not airfoil_ids:
        return {}
    statement = select(
        PolarRevision.airfoil_id, PolarRevision.reynolds, PolarRevision.surface,
        PolarRevision.review_state, PolarRevision.source_kind, func.count(PolarRevision.id),
    ).where(PolarRevision.airfoil_id.in_(list(airfoil_ids)))
    statement = _revision_filters(
        statement, airfoil=None, family=None, reynolds=None, surface=surface,
        review_state=review_state, source_kind=source_kind,
    ).group_by(
        PolarRevision.airfoil_id, PolarRevision.reynolds, PolarRevision.surface,
        PolarRevision.review_state, PolarRevision.source_kind,
    )
    groups: dict[int, list[tuple[float | None, str, str, str, int]]] = {}
    for airfoil_id, reynolds, surface_, state, kind, count in session.execute(statement):
        groups.setdefault(airfoil_id, []).append((reynolds, surface_, state, kind, count))
    return groups


def set_review_state(
    session: Session,
    *,
    content_hash: str,
    state: str,
    reason: str | None = None,
    replaced_by_hash: str | None = None,
    replacement_reason: str | None = None,
    actor: Actor,
) -> PolarRevision:
    """Move a revision through review: draft -> approved, draft/approved -> deprecated.

    Parameters
    ----------
    content_hash : str
        Full hash or unique prefix of the revision.
    state : str
        The new state.
    reason : str, optional
        Why; required (non-blank) for deprecation.
    replaced_by_hash : str, optional
        Only with deprecation: the revision that replaces this one. It must hold the same
        conditions (airfoil, Reynolds number, Mach number, surface), unless
        ``replacement_reason`` says why another one replaces it.
    replacement_reason : str, optional
        Why a replacement at other conditions is right (recorded in the audit event).

    Raises
    ------
    InvalidTransition
        If the change is not allowed, a deprecation has no reason, or a replacement is
        given for another state or names the revision itself.
    NotFound
        If either revision does not exist.
    """
    check_choice("state", state, REVIEW_STATES)
    check_text("reason", reason)
    revision = get_revision(session, content_hash)
    current = revision.review_state
    key = revision.content_hash
    if state not in REVIEW_TRANSITIONS[current]:
        allowed = ", ".join(REVIEW_TRANSITIONS[current]) or "none"
        raise InvalidTransition(key, current, state, f"allowed from {current}: {allowed}")
    if state == "deprecated" and not (reason and reason.strip()):
        raise InvalidTransition(key, current, state, "deprecation needs a reason")
    replacement = None
    if replaced_by_hash is not None:
        if state != "deprecated":
            raise InvalidTransition(key, current, state, "only a deprecation names a replacement")
        try:
            replacement = get_revision(session, replaced_by_hash)
        except NotFound:
            raise NotFound("polar revision (replacement)", replaced_by_hash) from None
        if replacement.id == revision.id:
            raise InvalidTransition(key, current, state, "a revision cannot replace itself")
        differences = _condition_differences(revision, replacement)
        if differences and not (replacement_reason and replacement_reason.strip()):
            raise InvalidTransition(
                key, current, state,
                f"replacement {replacement.content_hash[:12]} differs in "
                f"{'; '.join(differences)}; name a revision of the same conditions or say "
                "why in replacement_reason",
            )
    revision.review_state = state
    revision.review_reason = reason
    revision.replaced_by_id = None if replacement is None else replacement.id
    session.flush()
    record_event(
        session,
        actor=actor,
        action="polar.review",
        object_kind="polar_revision",
        object_key=key,
        before_hash=key,
        after_hash=key,
        detail={
            "from": current,
            "to": state,
            "reason": reason,
            "replaced_by": None if replacement is None else replacement.content_hash,
            "replacement_reason": replacement_reason if replacement is not None else None,
        },
    )
    return revision


def _condition_differences(revision: PolarRevision, other: PolarRevision) -> list[str]:
    """The conditions in which ``other`` differs from ``revision``, as text."""
    found = []
    if other.airfoil_id != revision.airfoil_id:
        found.append(f"airfoil {other.airfoil.name!r} instead of {revision.airfoil.name!r}")
    for name in ("reynolds", "mach", "surface"):
        mine, theirs = getattr(revision, name), getattr(other, name)
        if mine != theirs:
            found.append(f"{name} {theirs} instead of {mine}")
    return found
