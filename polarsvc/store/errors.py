"""Typed errors of the storage layer.

Tree::

    StoreError (Exception)
    +-- NotFound               no object of that kind under that key
    +-- Conflict               the key exists with different content
    |   +-- AmbiguousKey       a hash prefix matches more than one object
    +-- InvalidValue (also ValueError)   a field holds a value outside its allowed set
    +-- InvalidTransition      a review-state change that is not allowed
    +-- BackupRefused          a backup destination that would overwrite the live database
    +-- SchemaMismatch         the database's schema revision is unknown to this software
    +-- IntegrityProblem       stored data disagrees with itself (hash, shape, foreign key)
        +-- AppendOnlyViolation  an attempt to change or delete an audit event
"""

from __future__ import annotations


class StoreError(Exception):
    """Base class of every error raised by :mod:`polarsvc.store`."""


class NotFound(StoreError):
    """No object of ``kind`` under ``key``."""

    def __init__(self, kind: str, key: object):
        self.kind = kind
        self.key = key
        super().__init__(f"{kind} {key!r} not found")


class Conflict(StoreError):
    """The key is already taken by an object with different content."""

    def __init__(self, kind: str, key: object, message: str):
        self.kind = kind
        self.key = key
        super().__init__(f"{kind} {key!r}: {message}")


class AmbiguousKey(Conflict):
    """A hash prefix matches more than one object."""

    def __init__(self, kind: str, key: str, matches: int):
        self.matches = matches
        super().__init__(kind, key, f"prefix matches {matches} objects; give more digits")


class InvalidValue(StoreError, ValueError):
    """A field holds a value outside its allowed set or format."""

    def __init__(self, field: str, message: str):
        self.field = field
        super().__init__(f"field '{field}': {message}")


class InvalidTransition(StoreError):
    """A review-state change that the review rules do not allow."""

    def __init__(self, key: str, from_state: str, to_state: str, message: str):
        self.key = key
        self.from_state = from_state
        self.to_state = to_state
        super().__init__(f"revision {key}: {from_state} -> {to_state} refused: {message}")


class IntegrityProblem(StoreError):
    """Stored data disagrees with itself (a recomputed hash, a shape, a foreign key)."""


class AppendOnlyViolation(IntegrityProblem):
    """An attempt to change or delete an audit event."""


class BackupRefused(StoreError):
    """A backup destination is the live database or one of its companion files."""


class SchemaMismatch(StoreError):
    """The database carries a schema revision this software does not know (written by a
    newer version, or by something else).

    Attributes
    ----------
    revision : str
        The revision found in the database.
    head : str
        The newest revision this software knows.
    """

    def __init__(self, revision: str, head: str):
        self.revision = revision
        self.head = head
        super().__init__(
            f"the database is at schema revision {revision!r}, which this software does not "
            f"know (its newest is {head!r}); use the polarsvc version that wrote it, or a newer one"
        )
