"""The derived-table cache, keyed by recipe hash, with its lineage in both directions."""

from __future__ import annotations

import datetime as dt
import json
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import orjson
from numpy.typing import ArrayLike, NDArray
from sqlalchemy import func, or_, select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from polarsvc.hashing import (
    canonical_json,
    canonical_result,
    canonical_table,
    decode_array_bytes,
    recipe_hash,
    result_content_hash,
    table_content_hash,
)
from polarsvc.store._lookup import (
    HASH_DIGITS,
    check_choice,
    hash_condition,
    normalise_hash_key,
)
from polarsvc.store.audit import Actor, record_event
from polarsvc.store.errors import AmbiguousKey, IntegrityProblem, InvalidValue, NotFound
from polarsvc.store.models import (
    CACHE_WRITE_ACTION,
    DERIVED_KINDS,
    BladeDefinition,
    DerivedInput,
    DerivedTable,
    PolarRevision,
)
from polarsvc.store.paging import (
    DEFAULT_PAGE_SIZE,
    Page,
    check_limit,
    count_rows,
    decode_cursor,
    take_page,
)


def get_derived(session: Session, *, recipe_hash: str) -> DerivedTable | None:
    """The cached table of this recipe hash, or None (a cache miss)."""
    return session.scalars(
        select(DerivedTable).where(DerivedTable.recipe_hash == recipe_hash)
    ).one_or_none()


def _stack(
    alpha_deg: ArrayLike, columns: Mapping[str, ArrayLike]
) -> tuple[NDArray[np.float64], list[NDArray[np.float64]]]:
    alpha = np.asarray(alpha_deg, dtype=np.float64)
    if alpha.ndim != 1 or alpha.size < 2:
        raise InvalidValue("alpha_deg", f"expected >= 2 angles in one dimension, got {alpha.shape}")
    if not columns:
        raise InvalidValue("columns", "at least one coefficient column is needed")
    arrays = [np.asarray(value, dtype=np.float64) for value in columns.values()]
    shape = arrays[0].shape
    for name, array in zip(columns, arrays, strict=True):
        if array.shape != shape or array.shape[-1:] != alpha.shape:
            raise InvalidValue(
                name, f"shape {array.shape} differs from {shape} or does not end with {alpha.size}"
            )
    return alpha, arrays


def put_derived(
    session: Session,
    *,
    recipe: Mapping[str, Any],
    kind: str,
    alpha_deg: ArrayLike | None,
    columns: Mapping[str, ArrayLike],
    input_revision_ids: Sequence[int],
    blade_id: int | None = None,
    reports: Mapping[str, Any] | None = None,
    actor: Actor,
    requested_by: Actor | None = None,
) -> tuple[DerivedTable, bool]:
    """Cache a derived table under its recipe hash (idempotent).

    Parameters
    ----------
    recipe : mapping
        The recipe that produced the table; its hash is the cache key.
    kind : str
        One of :data:`~polarsvc.store.models.DERIVED_KINDS`; must equal ``recipe["kind"]``
        when the recipe has that key.
    alpha_deg : array_like or None
        Angle of attack [deg], one-dimensional; ``None`` for a result of named arrays of
        any shapes (kind ``rotor``, hashed by :func:`polarsvc.hashing.result_content_hash`).
    columns : mapping of str to array_like
        Coefficient arrays (e.g. ``cl``, ``cd``, ``cm``), all of one shape ending with the
        number of angles (1-D, or stations x angles for a blade set); or the named arrays
        of a result.
    input_revision_ids : sequence of int
        Ids of the stored revisions the table was computed from.
    blade_id : int, optional
        The blade definition revision of a blade set.
    reports : mapping, optional
        What the steps reported; stored as JSON text (non-finite numbers as null), not
        hashed.
    actor : Actor
        Who writes (the service itself when it caches a table computed for a request).
    requested_by : Actor, optional
        The request's actor, recorded in the audit event's detail (``requested_by``) and
        address.

    Returns
    -------
    (DerivedTable, bool)
        The cached row and whether it was created. A concurrent put of the same recipe
        leaves one row.

    Raises
    ------
    IntegrityProblem
        If the recipe is cached with different content (a recipe must be deterministic).
    InvalidValue, NotFound
        On bad arrays or kind, or unknown input revisions or blade.
    """
    check_choice("kind", kind, DERIVED_KINDS)
    if "kind" in recipe and recipe["kind"] != kind:
        raise InvalidValue("kind", f"{kind!r} differs from the recipe's {recipe['kind']!r}")
    key = recipe_hash(recipe)
    if alpha_deg is None:
        try:
            content_hash, payload = canonical_result(columns)
        except ValueError as exc:
            raise InvalidValue("columns", str(exc)) from None
        layout: dict[str, Any] = {
            "arrays": [[name, list(np.shape(value))] for name, value in columns.items()]
        }
    else:
        alpha, arrays = _stack(alpha_deg, columns)
        content_hash, payload = canonical_table(alpha, *arrays)
        layout = {"columns": list(columns), "alpha_size": int(alpha.size),
                  "shape": list(arrays[0].shape)}
    existing = get_derived(session, recipe_hash=key)
    if existing is not None:
        return _same_content(existing, content_hash), False
    input_ids = sorted({int(i) for i in input_revision_ids})
    found = set(
        session.scalars(select(PolarRevision.id).where(PolarRevision.id.in_(input_ids))).all()
    )
    missing = [i for i in input_ids if i not in found]
    if missing:
        raise NotFound("polar revision id", missing[0])
    if blade_id is not None and session.get(BladeDefinition, blade_id) is None:
        raise NotFound("blade definition id", blade_id)
    table = DerivedTable(
        recipe_hash=key,
        kind=kind,
        recipe=canonical_json(recipe).decode("utf-8"),
        content_hash=content_hash,
        payload=payload,
        payload_shape=canonical_json(layout).decode("utf-8"),
        blade_id=blade_id,
        reports=None if reports is None else _reports_text(reports),
    )
    try:
        with session.begin_nested():
            session.add(table)
            session.flush()
            session.add_all(DerivedInput(derived_id=table.id, polar_id=i) for i in input_ids)
    except IntegrityError:
        winner = get_derived(session, recipe_hash=key)
        if winner is None:
            raise
        return _same_content(winner, content_hash), False
    detail: dict[str, Any] = {"kind": kind, "inputs": input_ids, "blade_id": blade_id}
    if requested_by is not None:
        detail["requested_by"] = {"name": requested_by.name, "role": requested_by.role}
        actor = replace(actor, remote_addr=requested_by.remote_addr)
    record_event(
        session,
        actor=actor,
        action=CACHE_WRITE_ACTION,
        object_kind="derived_table",
        object_key=key,
        after_hash=content_hash,
        detail=detail,
    )
    return table, True


def total_payload_bytes(session: Session) -> int:
    """Bytes of array payload held by the derived-table cache (the figure the reader budget
    of :class:`polarsvc.pipeline.CachePolicy` bounds; both databases read the length from
    the row header, not the blob)."""
    return int(
        session.scalar(select(func.coalesce(func.sum(func.length(DerivedTable.payload)), 0)))
        or 0
    )


REPORTS_JSON_OPTIONS = orjson.OPT_SERIALIZE_NUMPY | orjson.OPT_NON_STR_KEYS | orjson.OPT_SORT_KEYS


def _reports_text(reports: Mapping[str, Any]) -> str:
    """Reports as JSON text (not hashed, so orjson is used for speed; NaN becomes null)."""
    try:
        return orjson.dumps(reports, option=REPORTS_JSON_OPTIONS).decode("utf-8")
    except (TypeError, ValueError) as exc:
        raise InvalidValue("reports", str(exc)) from None


def find_derived(session: Session, key: str) -> DerivedTable:
    """The cached table a key names (the oldest recipe, when a content hash is shared); see
    :func:`find_derived_all`."""
    return find_derived_all(session, key)[0]


def find_derived_all(session: Session, key: str) -> list[DerivedTable]:
    """Every cached table a recipe hash or content hash names, oldest first.

    A recipe hash names one table. Several recipes can give the same content (a blend
    inside the data range is the same with and without clamping), so a content hash names
    every table of that content. ``key`` is the full hash or a prefix of at least 8 digits;
    a prefix must name one recipe or one content.

    Raises
    ------
    NotFound
        If nothing matches.
    AmbiguousKey
        If a prefix matches several recipes or contents.
    InvalidValue
        If ``key`` is not a hexadecimal hash or long enough prefix.
    """
    by_recipe = hash_condition(DerivedTable.recipe_hash, key)
    by_content = hash_condition(DerivedTable.content_hash, key)
    matches = session.execute(
        select(DerivedTable.id, DerivedTable.recipe_hash, DerivedTable.content_hash)
        .where(or_(by_recipe, by_content))
        .order_by(DerivedTable.id)
    ).all()
    prefix = normalise_hash_key(key)
    named = {("recipe", m.recipe_hash) for m in matches if m.recipe_hash.startswith(prefix)}
    named |= {("content", m.content_hash) for m in matches if m.content_hash.startswith(prefix)}
    if not matches:
        raise NotFound("derived table", key)
    recipe_names = sorted(name for kind, name in named if kind == "recipe")
    if len(prefix) == HASH_DIGITS and recipe_names:
        named = {("recipe", recipe_names[0])}  # a full recipe hash names its table
    if len(named) > 1 and len({m.id for m in matches}) > 1:
        raise AmbiguousKey("derived table", key, len(named))
    kind, name = min(named)
    column = DerivedTable.recipe_hash if kind == "recipe" else DerivedTable.content_hash
    return list(
        session.scalars(select(DerivedTable).where(column == name).order_by(DerivedTable.id))
    )


def _same_content(table: DerivedTable, content_hash: str) -> DerivedTable:
    if table.content_hash != content_hash:
        raise IntegrityProblem(
            f"recipe {table.recipe_hash} is cached with content {table.content_hash}, "
            f"now computed as {content_hash}: the derivation is not deterministic"
        )
    return table


def derived_recipe(table: DerivedTable) -> dict[str, Any]:
    """The stored recipe as a mapping."""
    return json.loads(table.recipe)


def derived_arrays(
    table: DerivedTable,
) -> tuple[NDArray[np.float64] | None, dict[str, NDArray[np.float64]]]:
    """The cached angles [deg] and named coefficient arrays, checked against the content
    hash; for a result of named arrays (no angle column) ``(None, arrays)``.

    Raises
    ------
    IntegrityProblem
        If the payload does not fit its shape or no longer hashes to ``content_hash``.
    """
    layout = json.loads(table.payload_shape)
    if "arrays" in layout:
        return None, _result_arrays(table, layout["arrays"])
    shape = tuple(int(n) for n in layout["shape"])
    names = layout["columns"]
    n_alpha = int(layout["alpha_size"])
    try:
        values = decode_array_bytes(bytes(table.payload))
        if values.size != n_alpha + len(names) * math.prod(shape):
            raise ValueError(f"{values.size} values do not fit the layout {layout}")
        alpha = values[:n_alpha]
        blocks = values[n_alpha:].reshape(len(names), *shape)
    except ValueError as exc:
        raise IntegrityProblem(f"derived table {table.recipe_hash}: {exc}") from None
    columns = {name: blocks[i] for i, name in enumerate(names)}
    if table_content_hash(alpha, *columns.values()) != table.content_hash:
        raise IntegrityProblem(f"derived table {table.recipe_hash}: payload hash mismatch")
    return alpha, columns


def _result_arrays(
    table: DerivedTable, entries: list[list[Any]]
) -> dict[str, NDArray[np.float64]]:
    try:
        values = decode_array_bytes(bytes(table.payload))
        arrays = {}
        start = 0
        for name, shape in entries:
            size = math.prod(shape)
            arrays[name] = values[start: start + size].reshape(shape)
            start += size
        if start != values.size:
            raise ValueError(f"{values.size} values do not fit the layout")
    except ValueError as exc:
        raise IntegrityProblem(f"derived result {table.recipe_hash}: {exc}") from None
    if result_content_hash(arrays) != table.content_hash:
        raise IntegrityProblem(f"derived result {table.recipe_hash}: payload hash mismatch")
    return arrays


def derived_using_revision(session: Session, *, revision_id: int) -> Sequence[DerivedTable]:
    """Reverse lineage: the cached tables computed from this revision, oldest first."""
    statement = (
        select(DerivedTable)
        .join(DerivedInput, DerivedInput.derived_id == DerivedTable.id)
        .where(DerivedInput.polar_id == revision_id)
        .order_by(DerivedTable.id)
    )
    return session.scalars(statement).all()


@dataclass(frozen=True)
class DerivedUse:
    """A cached table seen from one of its inputs (reverse lineage): its identity, never
    its payload."""

    id: int
    kind: str
    recipe_hash: str
    content_hash: str
    blade: str | None
    created_at: dt.datetime


def page_derived_using_revision(
    session: Session, *, revision_id: int, after: str | None = None,
    limit: int = DEFAULT_PAGE_SIZE,
) -> Page[DerivedUse]:
    """One page of the reverse lineage of a revision, oldest first (keyset pagination on
    the cache row id, :mod:`polarsvc.store.paging`); payloads, recipes and reports are not
    read. The total is counted.

    Raises
    ------
    InvalidValue
        On a bad cursor or limit.
    """
    limit = check_limit(limit)
    statement = (
        select(
            DerivedTable.id, DerivedTable.kind, DerivedTable.recipe_hash,
            DerivedTable.content_hash, BladeDefinition.name, DerivedTable.created_at,
        )
        .join(DerivedInput, DerivedInput.derived_id == DerivedTable.id)
        .outerjoin(BladeDefinition, BladeDefinition.id == DerivedTable.blade_id)
        .where(DerivedInput.polar_id == revision_id)
    )
    if after is not None:
        (after_id,) = decode_cursor(after, (int,))
        statement = statement.where(DerivedTable.id > after_id)
    rows = [
        DerivedUse(*row)
        for row in session.execute(statement.order_by(DerivedTable.id).limit(limit + 1))
    ]
    total = count_rows(
        session,
        select(func.count()).select_from(DerivedInput).where(DerivedInput.polar_id == revision_id),
        ("used-by", revision_id),
    )
    return take_page(rows, limit, lambda use: (use.id,), total)
