"""SQLAlchemy 2 typed models of the store.

Arrays are stored as canonical little-endian float64 bytes (:mod:`polarsvc.hashing`), JSON
documents as canonical JSON text, timestamps as timezone-aware UTC. Stored polars, blade
definitions and derived tables are immutable revisions: only the review fields of a polar
revision change after insertion. Audit events are append-only (a mapper event here and
database triggers from the migration both refuse UPDATE and DELETE).
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import (
    CheckConstraint,
    Date,
    DateTime,
    Double,
    ForeignKey,
    Index,
    Integer,
    LargeBinary,
    MetaData,
    String,
    Text,
    event,
    text,
)
from sqlalchemy.engine import Dialect
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, relationship
from sqlalchemy.types import TypeDecorator

from polarsvc.provenance import SOURCE_KINDS
from polarsvc.store.errors import AppendOnlyViolation

NAMING_CONVENTION = {
    "ix": "ix_%(column_0_label)s",
    "uq": "uq_%(table_name)s_%(column_0_name)s",
    "ck": "ck_%(table_name)s_%(constraint_name)s",
    "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
    "pk": "pk_%(table_name)s",
}

REVIEW_STATES: tuple[str, ...] = ("draft", "approved", "deprecated")
DERIVED_KINDS: tuple[str, ...] = (
    "extended", "augmented", "resampled", "blended", "blade-set", "rotor"
)
TOKEN_ROLES: tuple[str, ...] = ("reader", "curator", "admin")

CACHE_WRITE_ACTION = "derived.store"
"""The audit action of a derived-table cache write (it changes no input of any table)."""
INPUT_WRITES = f"action != '{CACHE_WRITE_ACTION}'"
"""SQL condition: an audit event of a write that can change inputs (every other write)."""

HASH_LENGTH = 64
NAME_LENGTH = 200


def utc_now() -> dt.datetime:
    """The current time, timezone-aware UTC (a callable default, evaluated per row)."""
    return dt.datetime.now(dt.UTC)


class UTCDateTime(TypeDecorator[dt.datetime]):
    """A timestamp stored in UTC and always returned timezone-aware.

    Naive datetimes are refused on the way in; SQLite (which keeps no offset) gets the UTC
    wall time, PostgreSQL a ``timestamptz``.
    """

    impl = DateTime(timezone=True)
    cache_ok = True

    def process_bind_param(self, value: dt.datetime | None, dialect: Dialect) -> Any:
        if value is None:
            return None
        if value.tzinfo is None or value.utcoffset() is None:
            raise ValueError(f"naive datetime {value!r}: give a timezone-aware timestamp")
        value = value.astimezone(dt.UTC)
        return value.replace(tzinfo=None) if dialect.name == "sqlite" else value

    def process_result_value(self, value: Any, dialect: Dialect) -> dt.datetime | None:
        if value is None:
            return None
        if value.tzinfo is None:
            return value.replace(tzinfo=dt.UTC)
        return value.astimezone(dt.UTC)


def _in(column: str, values: tuple[str, ...]) -> str:
    return f"{column} IN ({', '.join(repr(v) for v in values)})"


class Base(DeclarativeBase):
    metadata = MetaData(naming_convention=NAMING_CONVENTION)


class Family(Base):
    """A family of airfoils (e.g. one design series)."""

    __tablename__ = "family"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    description: Mapped[str] = mapped_column(Text, default="")
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utc_now)

    airfoils: Mapped[list[Airfoil]] = relationship(back_populates="family")


class Airfoil(Base):
    """A section shape; its relative thickness ``thickness`` is a fraction (t/c)."""

    __tablename__ = "airfoil"
    __table_args__ = (
        CheckConstraint("thickness > 0 AND thickness <= 1", name="thickness_fraction"),
        Index("ix_airfoil_thickness_name", "thickness", "name"),
        Index("ix_airfoil_family_order", "family_id", "thickness", "name"),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    family_id: Mapped[int | None] = mapped_column(ForeignKey("family.id"), index=True)
    thickness: Mapped[float] = mapped_column(Double)
    description: Mapped[str] = mapped_column(Text, default="")
    coordinates: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utc_now)
    retired_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime)
    retired_reason: Mapped[str | None] = mapped_column(Text)

    family: Mapped[Family | None] = relationship(back_populates="airfoils")
    aliases: Mapped[list[AirfoilAlias]] = relationship(
        back_populates="airfoil", order_by="AirfoilAlias.id"
    )

    @property
    def retired(self) -> bool:
        """Whether the airfoil is retired from family blends (its data stay stored)."""
        return self.retired_at is not None


class AirfoilAlias(Base):
    """A former name of an airfoil; it still resolves to the airfoil after a rename."""

    __tablename__ = "airfoil_alias"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    airfoil_id: Mapped[int] = mapped_column(ForeignKey("airfoil.id"), index=True)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utc_now)

    airfoil: Mapped[Airfoil] = relationship(back_populates="aliases")


class PolarRevision(Base):
    """One stored section table with its conditions, provenance and review state."""

    __tablename__ = "polar_revision"
    __table_args__ = (
        CheckConstraint(_in("source_kind", SOURCE_KINDS), name="source_kind"),
        CheckConstraint(_in("review_state", REVIEW_STATES), name="review_state"),
        CheckConstraint("n_rows >= 2", name="n_rows"),
        # an airfoil's revisions in keyset order, with every filtered column (listings,
        # catalogue summaries and lookups by airfoil, Reynolds number and surface)
        Index(
            "ix_polar_revision_listing",
            "airfoil_id", "id", "surface", "review_state", "source_kind", "reynolds",
        ),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    content_hash: Mapped[str] = mapped_column(String(HASH_LENGTH), unique=True)
    airfoil_id: Mapped[int] = mapped_column(ForeignKey("airfoil.id"))
    reynolds: Mapped[float | None] = mapped_column(Double)
    mach: Mapped[float] = mapped_column(Double)
    surface: Mapped[str] = mapped_column(String(32))
    n_rows: Mapped[int] = mapped_column(Integer)
    has_cm: Mapped[bool]
    alpha_deg: Mapped[bytes] = mapped_column(LargeBinary)
    cl: Mapped[bytes] = mapped_column(LargeBinary)
    cd: Mapped[bytes] = mapped_column(LargeBinary)
    cm: Mapped[bytes | None] = mapped_column(LargeBinary)
    source_kind: Mapped[str] = mapped_column(String(32))
    reference: Mapped[str | None] = mapped_column(Text)
    facility: Mapped[str | None] = mapped_column(Text)
    measured_on: Mapped[dt.date | None] = mapped_column(Date)
    contributor: Mapped[str | None] = mapped_column(Text)
    notes: Mapped[str | None] = mapped_column(Text)
    supersedes_id: Mapped[int | None] = mapped_column(ForeignKey("polar_revision.id"))
    review_state: Mapped[str] = mapped_column(String(16), default="draft")
    review_reason: Mapped[str | None] = mapped_column(Text)
    replaced_by_id: Mapped[int | None] = mapped_column(ForeignKey("polar_revision.id"))
    quality_flags: Mapped[str | None] = mapped_column(Text)
    quality_override: Mapped[str | None] = mapped_column(Text)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utc_now)
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))

    airfoil: Mapped[Airfoil] = relationship(lazy="joined", innerjoin=True)
    supersedes: Mapped[PolarRevision | None] = relationship(
        foreign_keys=[supersedes_id], remote_side=[id]
    )
    replaced_by: Mapped[PolarRevision | None] = relationship(
        foreign_keys=[replaced_by_id], remote_side=[id]
    )


class BladeDefinition(Base):
    """An immutable revision of a blade definition (canonical JSON text)."""

    __tablename__ = "blade_definition"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), index=True)
    content_hash: Mapped[str] = mapped_column(String(HASH_LENGTH), unique=True)
    definition: Mapped[str] = mapped_column(Text)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utc_now)
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class DerivedTable(Base):
    """A derived table cached under the hash of the recipe that produced it.

    ``payload`` holds the canonical float64 bytes of the angle column followed by each
    coefficient array in order; ``payload_shape`` (JSON ``{"columns": [names],
    "alpha_size": n, "shape": [...]}``) gives the layout. A result of named arrays of
    different shapes (kind ``rotor``) has no angle column: its layout is ``{"arrays":
    [[name, [shape...]], ...]}``, its content hash :func:`polarsvc.hashing.result_content_hash`.
    """

    __tablename__ = "derived_table"
    __table_args__ = (CheckConstraint(_in("kind", DERIVED_KINDS), name="kind"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    recipe_hash: Mapped[str] = mapped_column(String(HASH_LENGTH), unique=True)
    kind: Mapped[str] = mapped_column(String(16))
    recipe: Mapped[str] = mapped_column(Text)
    content_hash: Mapped[str] = mapped_column(String(HASH_LENGTH), index=True)
    payload: Mapped[bytes] = mapped_column(LargeBinary)
    payload_shape: Mapped[str] = mapped_column(Text)
    reports: Mapped[str | None] = mapped_column(Text)
    blade_id: Mapped[int | None] = mapped_column(ForeignKey("blade_definition.id"), index=True)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utc_now)

    blade: Mapped[BladeDefinition | None] = relationship()
    inputs: Mapped[list[PolarRevision]] = relationship(
        secondary="derived_input", order_by="PolarRevision.id"
    )


class DerivedInput(Base):
    """Which stored revisions a derived table was computed from (for reverse lineage)."""

    __tablename__ = "derived_input"

    derived_id: Mapped[int] = mapped_column(
        ForeignKey("derived_table.id", ondelete="CASCADE"), primary_key=True
    )
    polar_id: Mapped[int] = mapped_column(
        ForeignKey("polar_revision.id"), primary_key=True, index=True
    )


class ApiToken(Base):
    """A bearer token; only the SHA-256 hex of its secret is stored."""

    __tablename__ = "api_token"
    __table_args__ = (CheckConstraint(_in("role", TOKEN_ROLES), name="role"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    name: Mapped[str] = mapped_column(String(NAME_LENGTH), unique=True)
    role: Mapped[str] = mapped_column(String(16))
    token_hash: Mapped[str] = mapped_column(String(HASH_LENGTH), unique=True)
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utc_now)
    expires_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime)
    revoked_at: Mapped[dt.datetime | None] = mapped_column(UTCDateTime)
    created_by: Mapped[str] = mapped_column(String(NAME_LENGTH))


class AuditEvent(Base):
    """One write, recorded in the same transaction as the write. Append-only."""

    __tablename__ = "audit_event"
    __table_args__ = (
        # the writes that can change what a request resolves to (all but cache writes)
        Index(
            "ix_audit_event_input_writes", "id",
            sqlite_where=text(INPUT_WRITES), postgresql_where=text(INPUT_WRITES),
        ),
    )

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    occurred_at: Mapped[dt.datetime] = mapped_column(UTCDateTime, default=utc_now, index=True)
    actor_name: Mapped[str] = mapped_column(String(NAME_LENGTH), index=True)
    actor_role: Mapped[str] = mapped_column(String(16))
    action: Mapped[str] = mapped_column(String(64))
    object_kind: Mapped[str] = mapped_column(String(32))
    object_key: Mapped[str] = mapped_column(String(NAME_LENGTH), index=True)
    before_hash: Mapped[str | None] = mapped_column(String(HASH_LENGTH))
    after_hash: Mapped[str | None] = mapped_column(String(HASH_LENGTH))
    remote_addr: Mapped[str | None] = mapped_column(String(64))
    detail: Mapped[str] = mapped_column(Text, default="{}")


@event.listens_for(AuditEvent, "before_update")
def _refuse_audit_update(mapper: Any, connection: Any, target: AuditEvent) -> None:
    raise AppendOnlyViolation(f"audit event {target.id} cannot be changed (append-only)")


@event.listens_for(AuditEvent, "before_delete")
def _refuse_audit_delete(mapper: Any, connection: Any, target: AuditEvent) -> None:
    raise AppendOnlyViolation(f"audit event {target.id} cannot be deleted (append-only)")
