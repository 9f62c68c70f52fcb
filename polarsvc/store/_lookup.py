"""Small helpers shared by the storage modules: allowed-value checks, hash-key lookup and
the insert that tolerates a concurrent identical insert."""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from typing import Any, TypeVar

from sqlalchemy import func, or_, select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from polarsvc import names
from polarsvc.store.errors import AmbiguousKey, InvalidValue, NotFound

MIN_PREFIX_LENGTH = 8
_HEX = re.compile(r"[0-9a-f]+")

Row = TypeVar("Row")


def check_choice(field: str, value: str, allowed: tuple[str, ...]) -> str:
    """Return ``value`` if it is one of ``allowed``, else raise :class:`InvalidValue`."""
    if value not in allowed:
        raise InvalidValue(field, f"{value!r} is not one of {', '.join(allowed)}")
    return value


def check_name(field: str, value: str) -> str:
    """Return ``value`` if it is a valid name (:mod:`polarsvc.names`), else raise
    :class:`InvalidValue` naming ``field``."""
    try:
        return names.check_name(field, value)
    except names.InvalidText as exc:
        raise InvalidValue(field, exc.detail) from None


def check_text(field: str, value: str | None) -> str | None:
    """Return ``value`` if it is None or free text without control characters other than
    tab and line ends (:mod:`polarsvc.names`), else raise :class:`InvalidValue`."""
    if value is None:
        return None
    if not isinstance(value, str):
        raise InvalidValue(field, f"must be a string, got {type(value).__name__}")
    control = names.find_control(value)
    if control is not None:
        raise InvalidValue(field, control)
    return value


def escape_like(text: str) -> str:
    """Escape LIKE wildcards (with ``\\`` as the escape character)."""
    return text.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_")


HASH_DIGITS = 64


def normalise_hash_key(key: object) -> str:
    """A full hash or prefix in lower case.

    Raises
    ------
    InvalidValue
        If ``key`` is not hexadecimal, longer than a hash, or a prefix shorter than
        :data:`MIN_PREFIX_LENGTH` digits.
    """
    normalised = key.strip().lower() if isinstance(key, str) else ""
    if not _HEX.fullmatch(normalised) or len(normalised) > HASH_DIGITS:
        raise InvalidValue("content_hash", f"{key!r} is not a hexadecimal hash or prefix")
    if len(normalised) < MIN_PREFIX_LENGTH:
        raise InvalidValue(
            "content_hash", f"a prefix needs at least {MIN_PREFIX_LENGTH} digits, got {key!r}"
        )
    return normalised


def hash_condition(column: Any, key: str) -> Any:
    """``column`` equals the full hash ``key``, or starts with the prefix ``key``."""
    normalised = normalise_hash_key(key)
    if len(normalised) == HASH_DIGITS:
        return column == normalised
    # hexadecimal digits contain no LIKE wildcards, so no escaping is needed here
    return column.like(normalised + "%")


def find_by_hash(
    session: Session,
    model: type[Row],
    kind: str,
    key: str,
    columns: Sequence[str] = ("content_hash",),
) -> Row:
    """The row of ``model`` whose hash column(s) equal ``key`` or start with it.

    Parameters
    ----------
    columns : sequence of str
        Names of the hash columns searched (a row matches if any of them does).

    Raises
    ------
    InvalidValue
        If ``key`` is not hexadecimal, or a prefix shorter than 8 digits.
    NotFound
        If nothing matches.
    AmbiguousKey
        If more than one row matches.
    """
    targets: list[Any] = [getattr(model, name) for name in columns]
    condition = or_(*(hash_condition(column, key) for column in targets))
    rows = session.scalars(select(model).where(condition).limit(2)).all()
    if not rows:
        raise NotFound(kind, key)
    if len(rows) > 1:
        count = session.scalar(select(func.count()).select_from(model).where(condition))
        raise AmbiguousKey(kind, key, int(count or 0))
    return rows[0]


def insert_or_winner(
    session: Session, row: Row, find_winner: Callable[[], Row | None]
) -> tuple[Row, bool]:
    """Insert ``row`` in a savepoint; when a unique constraint fires because a concurrent
    transaction stored the same thing first, return that stored row instead.

    Returns
    -------
    (row, bool)
        The stored row and whether this call inserted it.
    """
    try:
        with session.begin_nested():
            session.add(row)
            session.flush()
    except IntegrityError:
        winner = find_winner()
        if winner is None:
            raise
        return winner, False
    return row, True
