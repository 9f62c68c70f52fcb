"""What a bundle is made of: its format tag, file names, audit columns, and the error
raised for a bundle that cannot be written, read or imported."""

from __future__ import annotations

import re

from polarsvc.store.models import AuditEvent

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
