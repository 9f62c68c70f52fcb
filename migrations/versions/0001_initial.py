"""Initial schema: families, airfoils, polar revisions, blade definitions, derived tables,
API tokens and the append-only audit trail.

Revision ID: 0001
Revises:
Create Date: 2026-12-02

Audit events are append-only: triggers refuse UPDATE and DELETE on ``audit_event`` (and
TRUNCATE on PostgreSQL), whatever the client.
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0001"
down_revision: str | None = None
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

APPEND_ONLY_MESSAGE = "audit_event is append-only"

SQLITE_TRIGGERS = (
    f"""
    CREATE TRIGGER audit_event_no_update BEFORE UPDATE ON audit_event
    BEGIN SELECT RAISE(ABORT, '{APPEND_ONLY_MESSAGE}'); END
    """,
    f"""
    CREATE TRIGGER audit_event_no_delete BEFORE DELETE ON audit_event
    BEGIN SELECT RAISE(ABORT, '{APPEND_ONLY_MESSAGE}'); END
    """,
)

POSTGRESQL_TRIGGERS = (
    f"""
    CREATE FUNCTION audit_event_refuse_change() RETURNS trigger LANGUAGE plpgsql AS $$
    BEGIN
        RAISE EXCEPTION '{APPEND_ONLY_MESSAGE}' USING ERRCODE = 'restrict_violation';
    END
    $$
    """,
    """
    CREATE TRIGGER audit_event_no_update_delete BEFORE UPDATE OR DELETE ON audit_event
    FOR EACH ROW EXECUTE FUNCTION audit_event_refuse_change()
    """,
    """
    CREATE TRIGGER audit_event_no_truncate BEFORE TRUNCATE ON audit_event
    FOR EACH STATEMENT EXECUTE FUNCTION audit_event_refuse_change()
    """,
)


def _create_append_only_triggers() -> None:
    dialect = op.get_bind().dialect.name
    if dialect == "sqlite":
        statements = SQLITE_TRIGGERS
    elif dialect == "postgresql":
        statements = POSTGRESQL_TRIGGERS
    else:
        raise NotImplementedError(f"append-only triggers for {dialect} are not written")
    for statement in statements:
        op.execute(statement)


def _drop_append_only_triggers() -> None:
    dialect = op.get_bind().dialect.name
    if dialect == "sqlite":
        op.execute("DROP TRIGGER IF EXISTS audit_event_no_update")
        op.execute("DROP TRIGGER IF EXISTS audit_event_no_delete")
    elif dialect == "postgresql":
        op.execute("DROP TRIGGER IF EXISTS audit_event_no_truncate ON audit_event")
        op.execute("DROP TRIGGER IF EXISTS audit_event_no_update_delete ON audit_event")
        op.execute("DROP FUNCTION IF EXISTS audit_event_refuse_change()")


def upgrade() -> None:
    op.create_table(
        "api_token",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("role", sa.String(length=16), nullable=False),
        sa.Column("token_hash", sa.String(length=64), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("expires_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("revoked_at", sa.DateTime(timezone=True), nullable=True),
        sa.Column("created_by", sa.String(length=200), nullable=False),
        sa.CheckConstraint(
            "role IN ('reader', 'curator', 'admin')", name=op.f("ck_api_token_role")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_api_token")),
        sa.UniqueConstraint("name", name=op.f("uq_api_token_name")),
        sa.UniqueConstraint("token_hash", name=op.f("uq_api_token_token_hash")),
    )
    op.create_table(
        "audit_event",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("occurred_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("actor_name", sa.String(length=200), nullable=False),
        sa.Column("actor_role", sa.String(length=16), nullable=False),
        sa.Column("action", sa.String(length=64), nullable=False),
        sa.Column("object_kind", sa.String(length=32), nullable=False),
        sa.Column("object_key", sa.String(length=200), nullable=False),
        sa.Column("before_hash", sa.String(length=64), nullable=True),
        sa.Column("after_hash", sa.String(length=64), nullable=True),
        sa.Column("remote_addr", sa.String(length=64), nullable=True),
        sa.Column("detail", sa.Text(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_audit_event")),
    )
    op.create_index(op.f("ix_audit_event_actor_name"), "audit_event", ["actor_name"], unique=False)
    op.create_index(op.f("ix_audit_event_object_key"), "audit_event", ["object_key"], unique=False)
    op.create_index(
        op.f("ix_audit_event_occurred_at"), "audit_event", ["occurred_at"], unique=False
    )
    op.create_table(
        "blade_definition",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("content_hash", sa.String(length=64), nullable=False),
        sa.Column("definition", sa.Text(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("created_by", sa.String(length=200), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_blade_definition")),
        sa.UniqueConstraint("content_hash", name=op.f("uq_blade_definition_content_hash")),
    )
    op.create_index(op.f("ix_blade_definition_name"), "blade_definition", ["name"], unique=False)
    op.create_table(
        "family",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("description", sa.Text(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_family")),
        sa.UniqueConstraint("name", name=op.f("uq_family_name")),
    )
    op.create_table(
        "airfoil",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("family_id", sa.Integer(), nullable=True),
        sa.Column("thickness", sa.Double(), nullable=False),
        sa.Column("description", sa.Text(), nullable=False),
        sa.Column("coordinates", sa.Text(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.CheckConstraint(
            "thickness > 0 AND thickness <= 1", name=op.f("ck_airfoil_thickness_fraction")
        ),
        sa.ForeignKeyConstraint(
            ["family_id"], ["family.id"], name=op.f("fk_airfoil_family_id_family")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_airfoil")),
        sa.UniqueConstraint("name", name=op.f("uq_airfoil_name")),
    )
    op.create_index(op.f("ix_airfoil_family_id"), "airfoil", ["family_id"], unique=False)
    op.create_table(
        "derived_table",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("recipe_hash", sa.String(length=64), nullable=False),
        sa.Column("kind", sa.String(length=16), nullable=False),
        sa.Column("recipe", sa.Text(), nullable=False),
        sa.Column("content_hash", sa.String(length=64), nullable=False),
        sa.Column("payload", sa.LargeBinary(), nullable=False),
        sa.Column("payload_shape", sa.Text(), nullable=False),
        sa.Column("reports", sa.Text(), nullable=True),
        sa.Column("blade_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.CheckConstraint(
            "kind IN ('extended', 'augmented', 'resampled', 'blended', 'blade-set')",
            name=op.f("ck_derived_table_kind"),
        ),
        sa.ForeignKeyConstraint(
            ["blade_id"],
            ["blade_definition.id"],
            name=op.f("fk_derived_table_blade_id_blade_definition"),
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_derived_table")),
        sa.UniqueConstraint("recipe_hash", name=op.f("uq_derived_table_recipe_hash")),
    )
    op.create_index(op.f("ix_derived_table_blade_id"), "derived_table", ["blade_id"], unique=False)
    op.create_index(
        op.f("ix_derived_table_content_hash"), "derived_table", ["content_hash"], unique=False
    )
    op.create_table(
        "polar_revision",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("content_hash", sa.String(length=64), nullable=False),
        sa.Column("airfoil_id", sa.Integer(), nullable=False),
        sa.Column("reynolds", sa.Double(), nullable=True),
        sa.Column("mach", sa.Double(), nullable=False),
        sa.Column("surface", sa.String(length=32), nullable=False),
        sa.Column("n_rows", sa.Integer(), nullable=False),
        sa.Column("has_cm", sa.Boolean(), nullable=False),
        sa.Column("alpha_deg", sa.LargeBinary(), nullable=False),
        sa.Column("cl", sa.LargeBinary(), nullable=False),
        sa.Column("cd", sa.LargeBinary(), nullable=False),
        sa.Column("cm", sa.LargeBinary(), nullable=True),
        sa.Column("source_kind", sa.String(length=32), nullable=False),
        sa.Column("reference", sa.Text(), nullable=True),
        sa.Column("facility", sa.Text(), nullable=True),
        sa.Column("measured_on", sa.Date(), nullable=True),
        sa.Column("contributor", sa.Text(), nullable=True),
        sa.Column("notes", sa.Text(), nullable=True),
        sa.Column("supersedes_id", sa.Integer(), nullable=True),
        sa.Column("review_state", sa.String(length=16), nullable=False),
        sa.Column("review_reason", sa.Text(), nullable=True),
        sa.Column("replaced_by_id", sa.Integer(), nullable=True),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.Column("created_by", sa.String(length=200), nullable=False),
        sa.CheckConstraint(
            "review_state IN ('draft', 'approved', 'deprecated')",
            name=op.f("ck_polar_revision_review_state"),
        ),
        sa.CheckConstraint(
            "source_kind IN ('wind-tunnel', 'cfd', 'panel-method', 'synthetic', 'other')",
            name=op.f("ck_polar_revision_source_kind"),
        ),
        sa.CheckConstraint("n_rows >= 2", name=op.f("ck_polar_revision_n_rows")),
        sa.ForeignKeyConstraint(
            ["airfoil_id"], ["airfoil.id"], name=op.f("fk_polar_revision_airfoil_id_airfoil")
        ),
        sa.ForeignKeyConstraint(
            ["replaced_by_id"],
            ["polar_revision.id"],
            name=op.f("fk_polar_revision_replaced_by_id_polar_revision"),
        ),
        sa.ForeignKeyConstraint(
            ["supersedes_id"],
            ["polar_revision.id"],
            name=op.f("fk_polar_revision_supersedes_id_polar_revision"),
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_polar_revision")),
        sa.UniqueConstraint("content_hash", name=op.f("uq_polar_revision_content_hash")),
    )
    op.create_index(
        "ix_polar_revision_lookup",
        "polar_revision",
        ["airfoil_id", "reynolds", "surface"],
        unique=False,
    )
    op.create_table(
        "derived_input",
        sa.Column("derived_id", sa.Integer(), nullable=False),
        sa.Column("polar_id", sa.Integer(), nullable=False),
        sa.ForeignKeyConstraint(
            ["derived_id"],
            ["derived_table.id"],
            name=op.f("fk_derived_input_derived_id_derived_table"),
            ondelete="CASCADE",
        ),
        sa.ForeignKeyConstraint(
            ["polar_id"],
            ["polar_revision.id"],
            name=op.f("fk_derived_input_polar_id_polar_revision"),
        ),
        sa.PrimaryKeyConstraint("derived_id", "polar_id", name=op.f("pk_derived_input")),
    )
    op.create_index(op.f("ix_derived_input_polar_id"), "derived_input", ["polar_id"], unique=False)
    _create_append_only_triggers()


def downgrade() -> None:
    _drop_append_only_triggers()
    op.drop_index(op.f("ix_derived_input_polar_id"), table_name="derived_input")
    op.drop_table("derived_input")
    op.drop_index("ix_polar_revision_lookup", table_name="polar_revision")
    op.drop_table("polar_revision")
    op.drop_index(op.f("ix_derived_table_content_hash"), table_name="derived_table")
    op.drop_index(op.f("ix_derived_table_blade_id"), table_name="derived_table")
    op.drop_table("derived_table")
    op.drop_index(op.f("ix_airfoil_family_id"), table_name="airfoil")
    op.drop_table("airfoil")
    op.drop_table("family")
    op.drop_index(op.f("ix_blade_definition_name"), table_name="blade_definition")
    op.drop_table("blade_definition")
    op.drop_index(op.f("ix_audit_event_occurred_at"), table_name="audit_event")
    op.drop_index(op.f("ix_audit_event_object_key"), table_name="audit_event")
    op.drop_index(op.f("ix_audit_event_actor_name"), table_name="audit_event")
    op.drop_table("audit_event")
    op.drop_table("api_token")
