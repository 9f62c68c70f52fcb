"""Service settings, read once from the environment by :func:`Settings.from_env`."""

from __future__ import annotations

import os
from dataclasses import dataclass, field

from polarsvc.store.db import default_database_url

TRUE_WORDS = frozenset({"1", "true", "yes", "on"})
FALSE_WORDS = frozenset({"0", "false", "no", "off", ""})


class SettingError(ValueError):
    """An environment variable holds a value its setting cannot take (names the variable)."""

    def __init__(self, variable: str, message: str):
        self.variable = variable
        super().__init__(f"environment variable {variable}: {message}")


def _env_flag(name: str, default: bool) -> bool:
    value = os.environ.get(name)
    if value is None:
        return default
    word = value.strip().lower()
    if word in TRUE_WORDS:
        return True
    if word in FALSE_WORDS:
        return False
    raise SettingError(name, f"{value!r} is not one of 1, true, yes, on, 0, false, no, off")


def _env_int(name: str, default: int, *, minimum: int) -> int:
    value = os.environ.get(name)
    if value is None or not value.strip():
        return default
    try:
        number = int(value.strip())
    except ValueError:
        raise SettingError(name, f"{value!r} is not a whole number") from None
    if number < minimum:
        raise SettingError(name, f"{number} is below the minimum {minimum}")
    return number


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
    """

    database_url: str = field(default_factory=default_database_url)
    public_reads: bool = False
    approved_only: bool = False
    max_upload_bytes: int = 5_000_000
    apply_migrations: bool = True
    read_only: bool = False

    @classmethod
    def from_env(cls, **overrides: object) -> Settings:
        """Settings from ``POLARSVC_*`` environment variables, then ``overrides``.

        Raises
        ------
        SettingError
            A variable holds a value its setting cannot take.
        """
        values: dict[str, object] = {
            "public_reads": _env_flag("POLARSVC_PUBLIC_READS", False),
            "approved_only": _env_flag("POLARSVC_APPROVED_ONLY", False),
            "read_only": _env_flag("POLARSVC_READ_ONLY", False),
            "max_upload_bytes": _env_int("POLARSVC_MAX_UPLOAD_BYTES", 5_000_000, minimum=1),
        }
        values.update(overrides)
        if "database_url" not in values:  # (the default creates the data folder)
            values["database_url"] = (
                os.environ.get("POLARSVC_DATABASE_URL") or default_database_url()
            )
        return cls(**values)  # type: ignore[arg-type]
