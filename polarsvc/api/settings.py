"""Service settings, read once from the environment by :func:`Settings.from_env`."""

from __future__ import annotations

import os
from dataclasses import dataclass, field

from polarsvc.store.db import default_database_url

TRUE_WORDS = frozenset({"1", "true", "yes", "on"})


def _env_flag(name: str, default: bool) -> bool:
    value = os.environ.get(name)
    if value is None:
        return default
    return value.strip().lower() in TRUE_WORDS


@dataclass(frozen=True)
class Settings:
    """What the application factory needs.

    Attributes
    ----------
    database_url : str
        SQLAlchemy URL; SQLite file by default, PostgreSQL through ``POLARSVC_DATABASE_URL``.
    public_reads : bool
        Serve reads without a token (``POLARSVC_PUBLIC_READS``); off unless asked for.
    approved_only : bool
        Server default for serving only approved revisions (``POLARSVC_APPROVED_ONLY``).
    max_upload_bytes : int
        Largest accepted upload body (``POLARSVC_MAX_UPLOAD_BYTES``), 5 MB by default.
    apply_migrations : bool
        Upgrade the database schema at start-up.
    read_only : bool
        Refuse every write (``POLARSVC_READ_ONLY``); required for public reads on a
        non-loopback address.
    reader_cache_budget_bytes : int
        Derived tables computed for reader tokens are stored while the derived-table cache
        holds less than this many payload bytes (``POLARSVC_READER_CACHE_BUDGET_BYTES``,
        1 GB by default), then computed without storing. Anonymous requests never store;
        curators and admins always do (see :class:`polarsvc.pipeline.CachePolicy`).
    """

    database_url: str = field(default_factory=default_database_url)
    public_reads: bool = False
    approved_only: bool = False
    max_upload_bytes: int = 5_000_000
    apply_migrations: bool = True
    read_only: bool = False
    reader_cache_budget_bytes: int = 1_000_000_000

    @classmethod
    def from_env(cls, **overrides: object) -> Settings:
        """Settings from ``POLARSVC_*`` environment variables, then ``overrides``."""
        values: dict[str, object] = {
            "database_url": os.environ.get("POLARSVC_DATABASE_URL") or default_database_url(),
            "public_reads": _env_flag("POLARSVC_PUBLIC_READS", False),
            "approved_only": _env_flag("POLARSVC_APPROVED_ONLY", False),
            "read_only": _env_flag("POLARSVC_READ_ONLY", False),
            "max_upload_bytes": int(os.environ.get("POLARSVC_MAX_UPLOAD_BYTES", "5000000")),
            "reader_cache_budget_bytes": int(
                os.environ.get("POLARSVC_READER_CACHE_BUDGET_BYTES", "1000000000")
            ),
        }
        values.update(overrides)
        return cls(**values)  # type: ignore[arg-type]
