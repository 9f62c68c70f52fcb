"""Serving derived tables: choose the stored inputs, build the recipe, look it up in the
cache, compute it with the numeric core on a miss, store it, and recompute it on demand.

This is the one place that joins :mod:`polarsvc.store` and :mod:`polarsvc.recipes`; the API,
the pages and the command line all call it.
"""

from __future__ import annotations

import dataclasses
import time
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import orjson
from sqlalchemy import func, select, text
from sqlalchemy.orm import Session, defer, sessionmaker

from polarsvc import describe, performance, recipes
from polarsvc.aero.errors import InsufficientDataError
from polarsvc.hashing import recipe_hash as compute_recipe_hash
from polarsvc.hashing import result_content_hash, table_content_hash
from polarsvc.lru import LruCache
from polarsvc.store import blades as blade_store
from polarsvc.store import derived as derived_store
from polarsvc.store import polars as polar_store
from polarsvc.store.airfoils import get_family
from polarsvc.store.audit import Actor
from polarsvc.store.db import session_scope
from polarsvc.store.errors import NotFound
from polarsvc.store.models import (
    INPUT_WRITES,
    Airfoil,
    AuditEvent,
    BladeDefinition,
    DerivedTable,
    PolarRevision,
)

CACHE_ACTOR = Actor(name="system", role="system", remote_addr=None)
"""The actor of derived-table cache writes: the service itself, not the reader who asked.
The requesting actor is recorded in the event (``detail.requested_by`` and its address)."""


@dataclass(frozen=True)
class CachePolicy:
    """Who asks for a derived table, and whether a cache miss computed for them is stored.

    - anonymous requests (role ``public``, servers with public reads) are computed and
      served but never stored: anonymous traffic adds no rows and no audit events;
    - reader-token requests are stored while the derived-table cache holds less than
      ``reader_budget_bytes`` of payload (None: no bound), computed without storing beyond;
    - curators, admins and the service itself (``requester`` None: command line, start-up)
      always store.

    Stored tables are never evicted (see DEVELOPERS.md, "Derived-table storage").
    """

    requester: Actor | None = None
    reader_budget_bytes: int | None = None

    def may_store(self, session: Session) -> bool:
        if self.requester is None:
            return True
        if self.requester.role == "public":
            return False
        if self.requester.role == "reader" and self.reader_budget_bytes is not None:
            return derived_store.total_payload_bytes(session) < self.reader_budget_bytes
        return True


SERVICE_POLICY = CachePolicy()
"""The service's own requests: every computed table is stored."""

CAUTION = (
    "Section tables feed load and energy calculations for machines whose failure can hurt "
    "people. Validate them against measured data; design use follows IEC 61400-1, local "
    "codes and certification practice, under a licensed engineer's judgement."
)


class NotApproved(NotFound):
    """Serving is restricted to approved data and the revision (or family) has none."""


@dataclass(frozen=True)
class InputSummary:
    """One stored revision a derived table used."""

    content_hash: str
    airfoil: str
    thickness: float
    reynolds: float | None
    surface: str
    review_state: str
    replaced_by: str | None = None
    family: str | None = None
    flags: tuple[dict[str, Any], ...] = ()

    def as_dict(self) -> dict[str, Any]:
        return {
            "revision": self.content_hash,
            "airfoil": self.airfoil,
            "family": self.family,
            "thickness": self.thickness,
            "reynolds": self.reynolds,
            "surface": self.surface,
            "review_state": self.review_state,
            "replaced_by": self.replaced_by,
            "quality_flags": [
                {k: f.get(k) for k in ("code", "level", "message")} for f in self.flags
            ],
        }


@dataclass(frozen=True)
class ServedTable:
    """A derived table ready to encode: arrays plus everything its response carries."""

    kind: str
    recipe: dict[str, Any]
    recipe_hash: str
    content_hash: str
    alpha_deg: np.ndarray | None
    columns: dict[str, np.ndarray]
    reports: dict[str, Any]
    inputs: tuple[InputSummary, ...]
    blade: dict[str, Any] | None = None
    cached: bool = False
    extra: dict[str, Any] = field(default_factory=dict)
    stored: bool = True

    @property
    def deprecated_inputs(self) -> list[str]:
        return [i.content_hash for i in self.inputs if i.review_state == "deprecated"]

    @property
    def flagged_inputs(self) -> list[dict[str, Any]]:
        """Inputs carrying quality flags: revision, airfoil, flag codes, and the worst level."""
        return [
            {
                "revision": i.content_hash,
                "airfoil": i.airfoil,
                "flags": [f["code"] for f in i.flags],
                "level": "error" if any(f["level"] == "error" for f in i.flags) else "warning",
            }
            for i in self.inputs
            if i.flags
        ]

    def meta(self) -> dict[str, Any]:
        """The metadata every derived response carries (JSON-able)."""
        meta: dict[str, Any] = {
            "kind": self.kind,
            "content_hash": self.content_hash,
            "recipe_hash": self.recipe_hash,
            "recipe": self.recipe,
            "inputs": [i.as_dict() for i in self.inputs],
            "draws_on_deprecated": bool(self.deprecated_inputs),
            "deprecated_inputs": self.deprecated_inputs,
            "flagged_inputs": self.flagged_inputs,
            "reports": self.reports,
            "conventions": {
                "alpha": "deg",
                "cm": "about the quarter chord, nose-up positive",
                "thickness": "fraction t/c",
            },
            "caution": CAUTION,
        }
        if self.kind == "rotor":
            meta["conventions"] = {
                "units": "in the array names (_m_s, _rpm, _w, _n, _n_m, _n_per_m, _deg, _wh)",
                "forces": "per unit length of blade, normal to and in the rotor plane",
                "moments": "one blade, about the hub radius, rotor-plane axes",
                "station_arrays": "one row per wind speed of the power curve",
            }
            meta["rotor_caution"] = performance.ROTOR_CAUTION
            meta["blade_set_recipe_hash"] = self.recipe["inputs"].get("blade_set")
        if self.blade is not None:
            meta["blade"] = self.blade
        meta.update(self.extra)
        meta["describes"] = self.description()
        return meta

    def description(self) -> dict[str, Any]:
        """What the table holds (see :func:`polarsvc.describe.table_description`)."""
        families = sorted({i.family for i in self.inputs if i.family is not None})
        family = self.extra.get("family") or (families[0] if len(families) == 1 else None)
        airfoil = self.inputs[0].airfoil if len(self.inputs) == 1 else None
        return describe.table_description(
            self.kind, self.recipe, self.reports, family=family, airfoil=airfoil,
            blade=self.blade,
        )


def _summary(revision: PolarRevision) -> InputSummary:
    return InputSummary(
        content_hash=revision.content_hash,
        airfoil=revision.airfoil.name,
        thickness=revision.airfoil.thickness,
        reynolds=revision.reynolds,
        surface=revision.surface,
        review_state=revision.review_state,
        replaced_by=revision.replaced_by.content_hash if revision.replaced_by else None,
        family=revision.airfoil.family.name if revision.airfoil.family else None,
        flags=tuple(polar_store.revision_flags(revision)),
    )


def _from_row(
    row: DerivedTable, inputs: Sequence[InputSummary], blade: dict[str, Any] | None,
    cached: bool,
) -> ServedTable:
    alpha, columns = derived_store.derived_arrays(row)
    return ServedTable(
        kind=row.kind,
        recipe=derived_store.derived_recipe(row),
        recipe_hash=row.recipe_hash,
        content_hash=row.content_hash,
        alpha_deg=alpha,
        columns=columns,
        reports=orjson.loads(row.reports) if row.reports else {},
        inputs=tuple(inputs),
        blade=blade,
        cached=cached,
    )


@dataclass(frozen=True)
class ResolvedInputs:
    """What a request needs from storage before the cache lookup, read in one session: the
    input revisions' hashes, ids and summaries, and the blade definition of a blade set.
    The tables themselves are read only on a cache miss (:func:`load_input_polars`)."""

    revision_hashes: list[str]
    revision_ids: list[int]
    summaries: tuple[InputSummary, ...]
    blade_id: int | None = None
    blade_definition: dict[str, Any] | None = None
    blade_info: dict[str, Any] | None = None


def resolve_inputs(
    revisions: Sequence[PolarRevision], blade: BladeDefinition | None = None
) -> ResolvedInputs:
    """Read the input revisions' identities (and the blade) while their session is open."""
    return ResolvedInputs(
        revision_hashes=[r.content_hash for r in revisions],
        revision_ids=[r.id for r in revisions],
        summaries=tuple(_summary(r) for r in revisions),
        blade_id=blade.id if blade is not None else None,
        blade_definition=blade_store.blade_definition(blade) if blade is not None else None,
        blade_info=_blade_info(blade),
    )


def load_input_polars(session: Session, hashes: Sequence[str]) -> dict[str, Any]:
    """The stored tables of the given revisions, by hash."""
    rows = session.scalars(
        select(PolarRevision).where(PolarRevision.content_hash.in_(list(hashes)))
    ).all()
    return {row.content_hash: polar_store.load_polar(row) for row in rows}


REPORT_BYTES_PER_STATION = 4096
"""Estimate of the memory one station's report takes as Python objects (a few dozen
numbers and short strings in dicts), for the byte bounds of the caches."""


def _served_size(served: ServedTable) -> int:
    """Approximate memory of a served table: its arrays, plus its station reports."""
    arrays = sum(
        int(getattr(a, "nbytes", 0)) for a in (served.alpha_deg, *served.columns.values())
    )
    stations = served.reports.get("stations") if served.reports else None
    return arrays + REPORT_BYTES_PER_STATION * (len(stations) if stations else 1)


def _prepared_size(family: Any) -> int:
    return int(sum(getattr(v, "nbytes", 0) for v in vars(family).values())) + 4096


RECENT_TABLES_MAX_BYTES = 64 * 2**20
RECENT_TABLES: LruCache[ServedTable] = LruCache(
    max_entries=256, max_size=RECENT_TABLES_MAX_BYTES, size_of=_served_size
)
"""The most recently served derived tables by (database, recipe hash): a repeated request
skips reading and re-checking the stored payload. A recipe hash names one immutable table;
verification always reads the database. Bounded in bytes (arrays and reports)."""

PREPARED_FAMILIES_MAX_BYTES = 48 * 2**20
PREPARED_FAMILIES: LruCache[Any] = LruCache(
    max_entries=64, max_size=PREPARED_FAMILIES_MAX_BYTES, size_of=_prepared_size
)
"""Families extended and resampled once, by member revisions and extension settings
(content-addressed), shared by every blade set and blend computed from them. Bounded in
bytes."""


def _database_key(factory: sessionmaker[Session]) -> str:
    bind = factory.kw.get("bind")
    return bind.url.render_as_string(hide_password=True) if bind is not None else ""


def cached_table(
    session: Session, factory: sessionmaker[Session], recipe: dict[str, Any],
    inputs: ResolvedInputs,
) -> ServedTable | None:
    """The table of ``recipe`` from memory or from the derived-table cache, else None."""
    key = compute_recipe_hash(recipe)
    memo_key = (_database_key(factory), key)
    recent = RECENT_TABLES.peek(memo_key)
    if recent is not None:
        return dataclasses.replace(
            recent, inputs=inputs.summaries, blade=inputs.blade_info, cached=True
        )
    row = derived_store.get_derived(session, recipe_hash=key)
    if row is None:
        return None
    served = _from_row(row, inputs.summaries, inputs.blade_info, cached=True)
    RECENT_TABLES.put(memo_key, served)
    return served


def result_hash(result: recipes.DerivedResult) -> str:
    """Content hash of a computed table or result (a rotor result has no angle column)."""
    if result.alpha_deg is None:
        return result_content_hash(result.columns)
    return table_content_hash(result.alpha_deg, *result.columns.values())


def compute_and_store(
    factory: sessionmaker[Session], recipe: dict[str, Any], inputs: ResolvedInputs,
    policy: CachePolicy = SERVICE_POLICY,
    load_derived: Callable[[str], recipes.DerivedResult] | None = None,
) -> ServedTable:
    """Compute the table of ``recipe`` with the numeric core and, where ``policy`` allows,
    cache it durably (else it is kept in memory only, in :data:`RECENT_TABLES`);
    ``load_derived`` hands over derived inputs already at hand, by recipe hash."""
    key = compute_recipe_hash(recipe)
    memo_key = (_database_key(factory), key)
    loaded: dict[str, Any] = {}

    def load_revision(content_hash: str) -> Any:
        if not loaded:  # read the tables only when a prepared family is not at hand
            with session_scope(factory, write=False) as session:
                loaded.update(load_input_polars(session, inputs.revision_hashes))
        return loaded[content_hash]

    definition = inputs.blade_definition
    result = recipes.execute_recipe(
        recipe,
        load_revision=load_revision,
        load_blade=(lambda _hash: definition) if definition is not None else None,
        family_cache=PREPARED_FAMILIES.get,
        airfoils={s.content_hash: s.airfoil for s in inputs.summaries},
        load_derived=load_derived,
    )
    # the reports are served as computed (orjson encodes numpy values in responses) and
    # stored as JSON text once, by put_derived: no encode-decode round trip on a miss
    reports = dict(result.reports)
    served = ServedTable(
        kind=recipe["kind"],
        recipe=recipe,
        recipe_hash=key,
        content_hash="",  # set by the store, or below when the table is not stored
        alpha_deg=result.alpha_deg,
        columns=result.columns,
        reports=reports,
        inputs=inputs.summaries,
        blade=inputs.blade_info,
        cached=False,
        stored=False,
    )
    served = store_table(factory, served, inputs, policy)
    if not served.stored:
        content_hash = (
            result_content_hash(result.columns) if result.alpha_deg is None
            else table_content_hash(result.alpha_deg, *result.columns.values())
        )
        served = dataclasses.replace(served, content_hash=content_hash)
    RECENT_TABLES.put(memo_key, served)
    return served


def store_table(
    factory: sessionmaker[Session], served: ServedTable, inputs: ResolvedInputs,
    policy: CachePolicy,
) -> ServedTable:
    """Cache a computed table durably where ``policy`` allows (else return it unchanged,
    marked not stored)."""
    with session_scope(factory, write=False) as session:
        if not policy.may_store(session):
            return served
    with session_scope(factory, write=True) as session:
        row, created = derived_store.put_derived(
            session,
            recipe=served.recipe,
            kind=served.kind,
            alpha_deg=served.alpha_deg,
            columns=served.columns,
            input_revision_ids=inputs.revision_ids,
            blade_id=inputs.blade_id,
            reports=served.reports,
            actor=CACHE_ACTOR,
            requested_by=policy.requester,
        )
        content_hash = row.content_hash
    return dataclasses.replace(served, content_hash=content_hash, cached=not created, stored=True)


BLADE_GEOMETRY_KEYS = ("rotor_radius_m", "hub_radius_m", "blade_count")
"""Blade-wide values a blade set states beside the blade's name and hash."""


def _blade_info(blade: BladeDefinition | None) -> dict[str, Any] | None:
    if blade is None:
        return None
    definition = blade_store.blade_definition(blade)
    return {
        "name": blade.name,
        "content_hash": blade.content_hash,
        **{key: definition.get(key) for key in BLADE_GEOMETRY_KEYS},
    }


# -- choosing inputs -----------------------------------------------------------------------
def _check_approved(revision: PolarRevision, approved_only: bool) -> None:
    if approved_only and revision.review_state != "approved":
        raise NotApproved(
            "approved polar revision",
            f"{revision.content_hash} (it is {revision.review_state}; "
            "pass approved_only=false to use it)",
        )


TABLE_COLUMNS = ("alpha_deg", "cl", "cd", "cm")
"""The array columns of a revision: not read while choosing inputs, only on a cache miss."""


def select_family_members(
    session: Session, *, family: str, surface: str, approved_only: bool
) -> list[PolarRevision]:
    """The revisions a family blend or blade set draws on by default.

    Candidates: revisions of the family's airfoils that are not retired from blends, with
    the surface condition and a Reynolds number, not deprecated (a deprecated revision
    leaves the default selection; it can still be served alone by its hash). For each
    (airfoil, Reynolds number) the current revision is taken: not superseded by another
    candidate, else the newest. With ``approved_only`` only approved revisions are
    candidates.
    """
    family_row = get_family(session, family)
    statement = (
        select(PolarRevision)
        .join(Airfoil)
        .where(
            Airfoil.family_id == family_row.id,
            Airfoil.retired_at.is_(None),
            PolarRevision.surface == surface,
            PolarRevision.review_state != "deprecated",
            PolarRevision.reynolds.is_not(None),
        )
        .options(*(defer(getattr(PolarRevision, c)) for c in TABLE_COLUMNS))
        .order_by(Airfoil.thickness, PolarRevision.reynolds, PolarRevision.id)
    )
    if approved_only:
        statement = statement.where(PolarRevision.review_state == "approved")
    candidates = list(session.scalars(statement).all())
    superseded = {r.supersedes_id for r in candidates if r.supersedes_id is not None}
    chosen: dict[tuple[int, float | None], PolarRevision] = {}
    for revision in candidates:
        if revision.id in superseded:
            continue
        key = (revision.airfoil_id, revision.reynolds)
        current = chosen.get(key)
        if current is None or revision.id >= current.id:
            chosen[key] = revision
    if not chosen:
        qualifier = "approved " if approved_only else ""
        raise InsufficientDataError(
            f"family {family!r} has no {qualifier}revisions with surface {surface!r} "
            "(deprecated revisions and retired airfoils are left out)"
        )
    return sorted(
        chosen.values(), key=lambda r: (r.airfoil.thickness, r.reynolds or 0.0, r.id)
    )


# -- the served kinds ----------------------------------------------------------------------
def _resolution_size(resolved: tuple[dict[str, Any], ResolvedInputs, dict[str, Any]]) -> int:
    """Approximate memory of a resolution: the recipe, input summaries and blade definition
    (its stations dominate), estimated from their counts."""
    _, inputs, _ = resolved
    stations = (inputs.blade_definition or {}).get("stations") or ()
    return 8192 + 1024 * len(inputs.summaries) + 1024 * len(stations)


RESOLUTIONS_MAX_BYTES = 16 * 2**20
RESOLUTIONS: LruCache[tuple[dict[str, Any], ResolvedInputs, dict[str, Any]]] = LruCache(
    max_entries=1024, max_size=RESOLUTIONS_MAX_BYTES, size_of=_resolution_size
)
"""Requests already resolved to (recipe, inputs, extra), by request, write generation and a
time bucket of :data:`RESOLUTION_LIFETIME_S`. Bounded in bytes (estimated)."""

RESOLUTION_LIFETIME_S = 10.0
"""A resolution is reused for at most this long. Within it, the write generation catches
every write on SQLite (writers are serialised). On PostgreSQL a transaction holding a lower
audit id can commit after one holding a higher id; the lifetime bounds how long such a
write could go unseen by a cached resolution."""


def write_generation(session: Session) -> int:
    """The id of the newest audit event of a write other than a derived-table cache write:
    every write records one, so while it is unchanged no revision, review state, blade or
    family has changed (a cache write changes none of them). Read from the partial index
    ``ix_audit_event_input_writes``."""
    statement = select(func.max(AuditEvent.id)).where(text(INPUT_WRITES))
    return session.scalar(statement) or 0


def _resolve(
    factory: sessionmaker[Session],
    request_key: tuple[Any, ...],
    resolve: Callable[[Session], tuple[dict[str, Any], ResolvedInputs, dict[str, Any]]],
    policy: CachePolicy,
    load_derived: Callable[[str], recipes.DerivedResult] | None = None,
) -> ServedTable:
    """Resolve a request to its recipe and inputs (or reuse the resolution made since the
    last write), then serve the table."""
    with session_scope(factory, write=False) as session:
        bucket = int(time.monotonic() // RESOLUTION_LIFETIME_S)
        key = (_database_key(factory), write_generation(session), bucket, *request_key)
        resolved = RESOLUTIONS.peek(key)
        if resolved is None:
            resolved = resolve(session)
            RESOLUTIONS.put(key, resolved)
        recipe, inputs, extra = resolved
        served = cached_table(session, factory, recipe, inputs)
    if served is None:
        served = compute_and_store(factory, recipe, inputs, policy, load_derived)
    elif not served.stored:  # computed earlier for a request that did not store it
        stored = store_table(factory, served, inputs, policy)
        if stored.stored:
            RECENT_TABLES.put((_database_key(factory), stored.recipe_hash), stored)
            served = stored
    return dataclasses.replace(served, extra={**served.extra, **extra}) if extra else served


def _request_key(*parts: Any) -> tuple[Any, ...]:
    return tuple(
        orjson.dumps(p, option=orjson.OPT_SORT_KEYS) if isinstance(p, Mapping) else p
        for p in parts
    )


def revision_table(
    factory: sessionmaker[Session],
    *,
    revision_key: str,
    kind: str,
    params: Mapping[str, Any],
    approved_only: bool,
    policy: CachePolicy = SERVICE_POLICY,
) -> ServedTable:
    """A stored revision resampled, extended or augmented (``kind``); ``params`` as made by
    :func:`polarsvc.recipes.revision_table_params`."""

    def resolve(session: Session):
        revision = polar_store.get_revision(session, revision_key)
        _check_approved(revision, approved_only)
        inputs = resolve_inputs([revision])
        recipe = recipes.make_recipe(kind, revisions=inputs.revision_hashes, params=params)
        return recipe, inputs, {}

    return _resolve(
        factory, _request_key(kind, revision_key, params, approved_only), resolve, policy
    )


def family_blend(
    factory: sessionmaker[Session],
    *,
    family: str,
    params: Mapping[str, Any],
    approved_only: bool,
    policy: CachePolicy = SERVICE_POLICY,
) -> ServedTable:
    """A family's table at one thickness and Reynolds number (``params`` as in
    :func:`polarsvc.recipes.blend_family`)."""

    def resolve(session: Session):
        members = select_family_members(
            session, family=family, surface=params["surface"], approved_only=approved_only
        )
        inputs = resolve_inputs(members)
        recipe = recipes.make_recipe("blended", revisions=inputs.revision_hashes, params=params)
        return recipe, inputs, {"family": family}

    return _resolve(
        factory, _request_key("blended", family, params, approved_only), resolve, policy
    )


def blade_set(
    factory: sessionmaker[Session],
    *,
    blade_key: str,
    options: Mapping[str, Any],
    approved_only: bool,
    policy: CachePolicy = SERVICE_POLICY,
) -> ServedTable:
    """The station tables of a stored blade (name for the latest revision, or hash).

    ``options`` are the keywords of :func:`polarsvc.recipes.blade_set_params`.
    """

    def resolve(session: Session):
        blade_hash, definition, inputs = _blade_inputs(
            session, factory, blade_key, options, approved_only
        )
        params = recipes.blade_set_params(definition, **options)
        recipe = recipes.make_recipe(
            "blade-set", revisions=inputs.revision_hashes, params=params, blade=blade_hash,
        )
        return recipe, inputs, {"family": definition["family"]}

    return _resolve(
        factory, _request_key("blade-set", blade_key, dict(options), approved_only), resolve,
        policy,
    )


BLADE_INPUTS: LruCache[tuple[str, dict[str, Any], ResolvedInputs]] = LruCache(
    max_entries=256, max_size=RESOLUTIONS_MAX_BYTES // 2,
    size_of=lambda found: _resolution_size(({}, found[2], {})),
)
"""A blade's inputs (its hash, definition, and the family members its tables draw on) by
blade key, surface and approved-only choice, write generation and time bucket (as
:data:`RESOLUTIONS`): blade sets of one blade at other operating points or settings share
them. Bounded in bytes (estimated)."""


def _blade_inputs(
    session: Session, factory: sessionmaker[Session], blade_key: str,
    options: Mapping[str, Any], approved_only: bool,
) -> tuple[str, dict[str, Any], ResolvedInputs]:
    """The blade's content hash, definition and resolved inputs for a blade set (from
    :data:`BLADE_INPUTS` when resolved since the last write). The members depend on the
    options through the surface alone."""
    bucket = int(time.monotonic() // RESOLUTION_LIFETIME_S)
    key = (_database_key(factory), write_generation(session), bucket, blade_key,
           options.get("surface"), approved_only)
    found = BLADE_INPUTS.peek(key)
    if found is None:
        blade = find_blade(session, blade_key)
        definition = blade_store.blade_definition(blade)
        surface = recipes.blade_set_params(definition, **options)["surface"]
        members = select_family_members(
            session, family=definition["family"], surface=surface, approved_only=approved_only,
        )
        found = (blade.content_hash, definition, resolve_inputs(members, blade))
        BLADE_INPUTS.put(key, found)
    return found


def rotor_performance(
    factory: sessionmaker[Session],
    *,
    blade_key: str,
    options: Mapping[str, Any],
    rotor_options: Mapping[str, Any],
    approved_only: bool,
    policy: CachePolicy = SERVICE_POLICY,
) -> ServedTable:
    """Rotor performance of a blade set: the blade set is served first (from the cache, or
    computed and stored), then the rotor result on it (``rotor_options`` are the keywords of
    :func:`polarsvc.performance.rotor_params`), itself cached under its recipe hash."""
    tables = blade_set(factory, blade_key=blade_key, options=options,
                       approved_only=approved_only, policy=policy)
    blade_hash = tables.recipe["inputs"]["blade"]

    def resolve(session: Session):
        blade = blade_store.get_blade(session, blade_hash)
        definition = blade_store.blade_definition(blade)
        params = performance.rotor_params(definition, **rotor_options)
        hashes = tables.recipe["inputs"]["revisions"]
        rows = session.scalars(
            select(PolarRevision)
            .where(PolarRevision.content_hash.in_(hashes))
            .options(*(defer(getattr(PolarRevision, c)) for c in TABLE_COLUMNS))
        ).all()
        by_hash = {r.content_hash: r for r in rows}
        inputs = resolve_inputs([by_hash[h] for h in hashes], blade)
        recipe = recipes.rotor_recipe(tables.recipe, params)
        return recipe, inputs, {"family": definition["family"]}

    def load_derived(key: str) -> recipes.DerivedResult:
        if key != tables.recipe_hash:
            raise NotFound("derived table", key)
        return recipes.DerivedResult(tables.alpha_deg, tables.columns, tables.reports)

    return _resolve(
        factory,
        _request_key("rotor", tables.recipe_hash, dict(rotor_options)),
        resolve,
        policy,
        load_derived,
    )


def compare_performance(a: ServedTable, b: ServedTable) -> dict[str, Any]:
    """Differences b - a of two served rotor results and of their recipes and inputs
    (:func:`polarsvc.performance.compare_results`,
    :func:`polarsvc.performance.recipe_differences`), with both identities and the
    cautions."""

    def identity(served: ServedTable) -> dict[str, Any]:
        return {
            "content_hash": served.content_hash,
            "recipe_hash": served.recipe_hash,
            "blade_set_recipe_hash": served.recipe["inputs"].get("blade_set"),
            "blade": served.blade,
            "draws_on_deprecated": bool(served.deprecated_inputs),
        }

    return {
        "a": identity(a),
        "b": identity(b),
        "differences": performance.recipe_differences(
            a.recipe, b.recipe, [i.as_dict() for i in a.inputs],
            [i.as_dict() for i in b.inputs],
        ),
        **performance.compare_results(
            a.columns, b.columns, a.reports["distributions"], b.reports["distributions"]
        ),
        "caution": CAUTION,
        "rotor_caution": performance.ROTOR_CAUTION,
    }


def find_blade(session: Session, key: str) -> BladeDefinition:
    try:
        return blade_store.latest_blade(session, key)
    except NotFound:
        if not _looks_like_hash(key):
            raise
        return blade_store.get_blade(session, key)


def _looks_like_hash(key: str) -> bool:
    """A full hash or a prefix of one: 8 to 64 hexadecimal digits (longer is a name only)."""
    return 8 <= len(key) <= 64 and all(c in "0123456789abcdef" for c in key.lower())


# -- stored derived tables: lookup, lineage, verification --------------------------------
def find_derived(session: Session, key: str) -> DerivedTable:
    """A cached derived table by recipe hash or content hash (full, or a unique prefix of
    at least 8 hex digits); of several recipes sharing a content hash, the oldest."""
    return derived_store.find_derived(session, key)


def find_derived_all(session: Session, key: str) -> list[DerivedTable]:
    """Every cached table a recipe or content hash names (see
    :func:`polarsvc.store.derived.find_derived_all`)."""
    return derived_store.find_derived_all(session, key)


def stored_table(factory: sessionmaker[Session], key: str) -> ServedTable:
    """A cached derived table as stored (no recomputation). When several recipes gave the
    same content, the oldest one's recipe is served and ``same_content_recipes`` lists
    every recipe hash."""
    with session_scope(factory, write=False) as session:
        rows = find_derived_all(session, key)
        row = rows[0]
        inputs = [_summary(r) for r in row.inputs]
        served = _from_row(row, inputs, _blade_info(row.blade), cached=True)
    if len(rows) > 1:
        served = dataclasses.replace(
            served, extra={"same_content_recipes": [r.recipe_hash for r in rows]}
        )
    return served


def verify_derived(factory: sessionmaker[Session], key: str) -> dict[str, Any]:
    """Recompute a cached table from its recorded recipe and the stored revisions.

    Reports whether the recomputed content hash equals the stored one, and whether every
    stored input still hashes to its recorded revision hash (a tampered input fails).
    A content hash shared by several recipes checks each: the answer then holds
    ``stored_content_hash``, ``matches`` (all of them), ``problems`` (each prefixed by its
    recipe hash) and ``recipes`` (one report per recipe, oldest first).
    """
    with session_scope(factory, write=False) as session:
        recipe_hashes = [row.recipe_hash for row in find_derived_all(session, key)]
    reports = [_verify_recipe(factory, recipe_hash) for recipe_hash in recipe_hashes]
    if len(reports) == 1:
        return reports[0]
    return {
        "stored_content_hash": reports[0]["stored_content_hash"],
        "matches": all(r["matches"] for r in reports),
        "problems": [f"recipe {r['recipe_hash']}: {p}" for r in reports for p in r["problems"]],
        "recipes": reports,
    }


def _verify_recipe(factory: sessionmaker[Session], recipe_hash: str) -> dict[str, Any]:
    """Verification of the one cached table of ``recipe_hash``."""
    with session_scope(factory, write=False) as session:
        row = derived_store.get_derived(session, recipe_hash=recipe_hash)
        if row is None:
            raise NotFound("derived table", recipe_hash)
        recipe = derived_store.derived_recipe(row)
        problems: list[str] = []
        polars = {}
        airfoils = {r.content_hash: r.airfoil.name for r in row.inputs}
        for revision in row.inputs:
            try:
                polar_store.verify_revision(revision)
            except Exception as exc:  # IntegrityProblem, or undecodable data
                problems.append(str(exc))
            polars[revision.content_hash] = polar_store.load_polar(revision)
        definition = None
        if row.blade is not None:
            definition = blade_store.blade_definition(row.blade)
            recomputed_blade = blade_store.recompute_blade_hash(row.blade)
            if recomputed_blade != row.blade.content_hash:
                problems.append(
                    f"blade {row.blade.content_hash} now hashes to {recomputed_blade}"
                )
        stored_hash = row.content_hash
        recorded_version = recipe.get("software", {}).get("version")
    missing = [h for h in recipe["inputs"]["revisions"] if h not in polars]
    if missing:
        problems.append(f"recipe input {missing[0]} is not among the recorded inputs")
        recomputed_hash = None
    else:
        result = recipes.execute_recipe(
            recipe,
            load_revision=polars.__getitem__,
            load_blade=(lambda _h: definition) if definition is not None else None,
            airfoils=airfoils,
        )
        recomputed_hash = result_hash(result)
        if recomputed_hash != stored_hash:
            problems.append(
                f"recomputed content hash {recomputed_hash} differs from stored {stored_hash}"
            )
    current_version = recipes.software_stamp()["version"]
    return {
        "recipe_hash": row.recipe_hash,
        "stored_content_hash": stored_hash,
        "recomputed_content_hash": recomputed_hash,
        "matches": not problems,
        "problems": problems,
        "recorded_software_version": recorded_version,
        "current_software_version": current_version,
    }
