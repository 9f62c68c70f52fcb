"""Curation: quality flags stored with each polar revision (and the override that let an
error-level flag through), airfoils retired from family blends, and former airfoil names
kept as aliases after a rename.

Revision ID: 0004
Revises: 0003
Create Date: 2026-12-02

Existing revisions get no stored flags (NULL): they are computed from the stored table when
read. Nothing is rewritten.
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0004"
down_revision: str | None = "0003"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("polar_revision") as batch:
        batch.add_column(sa.Column("quality_flags", sa.Text(), nullable=True))
        batch.add_column(sa.Column("quality_override", sa.Text(), nullable=True))
    with op.batch_alter_table("airfoil") as batch:
        batch.add_column(sa.Column("retired_at", sa.DateTime(timezone=True), nullable=True))
        batch.add_column(sa.Column("retired_reason", sa.Text(), nullable=True))
    op.create_table(
        "airfoil_alias",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("name", sa.String(length=200), nullable=False),
        sa.Column("airfoil_id", sa.Integer(), nullable=False),
        sa.Column("created_at", sa.DateTime(timezone=True), nullable=False),
        sa.ForeignKeyConstraint(
            ["airfoil_id"], ["airfoil.id"], name=op.f("fk_airfoil_alias_airfoil_id_airfoil")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_airfoil_alias")),
        sa.UniqueConstraint("name", name=op.f("uq_airfoil_alias_name")),
    )
    op.create_index(
        op.f("ix_airfoil_alias_airfoil_id"), "airfoil_alias", ["airfoil_id"], unique=False
    )


def downgrade() -> None:
    op.drop_index(op.f("ix_airfoil_alias_airfoil_id"), table_name="airfoil_alias")
    op.drop_table("airfoil_alias")
    with op.batch_alter_table("airfoil") as batch:
        batch.drop_column("retired_reason")
        batch.drop_column("retired_at")
    with op.batch_alter_table("polar_revision") as batch:
        batch.drop_column("quality_override")
        batch.drop_column("quality_flags")
