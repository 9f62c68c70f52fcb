"""Keyset pagination of listings.

A page is read with ``WHERE (k1, k2, ...) > (last k1, last k2, ...) ORDER BY k1, k2, ...
LIMIT n + 1`` (the extra row tells whether a next page exists): every page costs the same
however deep it lies, unlike OFFSET. The cursor handed to clients is the sort key of the last
row of a page, as URL-safe base64 of a JSON list: opaque to clients, checked when read back.
"""

from __future__ import annotations

import base64
import binascii
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any, Generic, TypeVar

import orjson
from sqlalchemy import Select, and_, func, or_, select
from sqlalchemy.orm import Session
from sqlalchemy.sql.elements import ColumnElement

from polarsvc.lru import LruCache
from polarsvc.store.errors import InvalidValue
from polarsvc.store.models import AuditEvent

Item = TypeVar("Item")

DEFAULT_PAGE_SIZE = 100
MAX_PAGE_SIZE = 1000

__all__ = [
    "DEFAULT_PAGE_SIZE",
    "MAX_PAGE_SIZE",
    "Page",
    "check_limit",
    "count_rows",
    "decode_cursor",
    "encode_cursor",
    "keyset_after",
    "take_page",
]


@dataclass(frozen=True)
class Page(Generic[Item]):
    """One page of a listing: its items, the cursor of the next page (None on the last
    page) and the number of matching items over all pages (None where not counted)."""

    items: list[Item]
    next_cursor: str | None
    total: int | None = None


def check_limit(limit: int) -> int:
    """``limit`` if it lies in 1..:data:`MAX_PAGE_SIZE`.

    Raises
    ------
    InvalidValue
        Naming ``limit``.
    """
    if not 1 <= int(limit) <= MAX_PAGE_SIZE:
        raise InvalidValue("limit", f"must lie in 1..{MAX_PAGE_SIZE}, got {limit}")
    return int(limit)


def encode_cursor(values: Sequence[Any]) -> str:
    """The cursor naming a sort key (JSON-able values)."""
    return base64.urlsafe_b64encode(orjson.dumps(list(values))).decode("ascii").rstrip("=")


def decode_cursor(cursor: str, kinds: Sequence[type]) -> list[Any]:
    """The sort key of a cursor made by :func:`encode_cursor`, checked against ``kinds``
    (``float`` accepts integers too).

    Raises
    ------
    InvalidValue
        Naming ``after``, if the cursor is malformed.
    """
    try:
        padded = cursor + "=" * (-len(cursor) % 4)
        values = orjson.loads(base64.urlsafe_b64decode(padded.encode("ascii")))
    except (ValueError, binascii.Error, UnicodeEncodeError, orjson.JSONDecodeError):
        raise InvalidValue("after", "is not a cursor given by a previous page") from None
    if not isinstance(values, list) or len(values) != len(kinds):
        raise InvalidValue("after", "is not a cursor given by a previous page")
    checked = []
    for value, kind in zip(values, kinds, strict=True):
        if kind is float and isinstance(value, int) and not isinstance(value, bool):
            value = float(value)
        if not isinstance(value, kind) or isinstance(value, bool):
            raise InvalidValue("after", "is not a cursor given by a previous page")
        checked.append(value)
    return checked


def keyset_after(columns: Sequence[Any], values: Sequence[Any]) -> ColumnElement[bool]:
    """``(columns) > (values)`` in lexicographic order, spelled with AND/OR so that every
    database (and its planner) reads it the same way. The columns must not hold NULL.

    With several columns the implied ``columns[0] >= values[0]`` is stated as well: a
    planner then starts an index range there instead of filtering every earlier row (as
    PostgreSQL did with the OR alone)."""
    condition: ColumnElement[bool] = columns[-1] > values[-1]
    for column, value in zip(reversed(columns[:-1]), reversed(values[:-1]), strict=True):
        condition = or_(column > value, and_(column == value, condition))
    if len(columns) > 1:
        condition = and_(columns[0] >= values[0], condition)
    return condition


def take_page(
    rows: Sequence[Item], limit: int, sort_key: Callable[[Item], Sequence[Any]],
    total: int | None = None,
) -> Page[Item]:
    """A page from up to ``limit + 1`` rows read in order (the extra one shows that another
    page follows)."""
    items = list(rows[:limit])
    more = len(rows) > limit
    cursor = encode_cursor(sort_key(items[-1])) if more and items else None
    return Page(items, cursor, total)


COUNT_ENTRY_BYTES = 512
"""Estimate of one kept count's memory (its key: URL, filters; and the number)."""
COUNTS: LruCache[int] = LruCache(
    max_entries=2048, max_size=2048 * COUNT_ENTRY_BYTES, size_of=lambda _: COUNT_ENTRY_BYTES
)
"""Counts of listings by (database, listing and filters, write generation): a count stays
valid while no write happened (every write records an audit event). Bounded in bytes (by
an estimate per entry)."""


def count_rows(session: Session, statement: Select[Any], key: tuple[Any, ...]) -> int:
    """``SELECT count(...)`` of a listing, kept until the next write.

    ``key`` names the listing and its filters (the statement is not compiled to find it).
    The write generation is the newest audit event id. On SQLite writers are serialised,
    so a count is never stale; on PostgreSQL a transaction that commits after one holding a
    higher event id could be missed by a count kept in between (the next write corrects it).
    """
    generation = session.scalar(select(func.max(AuditEvent.id))) or 0
    bind = session.get_bind()
    full_key = (str(getattr(bind, "url", "")), generation, *key)
    cached = COUNTS.peek(full_key)
    if cached is None:
        cached = int(session.scalar(statement) or 0)
        COUNTS.put(full_key, cached)
    return cached
