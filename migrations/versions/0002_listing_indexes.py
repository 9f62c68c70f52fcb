"""Indexes for listings: keyset pages of revisions per airfoil with their filters, airfoils by
thickness (overall and per family).

Revision ID: 0002
Revises: 0001
Create Date: 2026-12-02

``ix_polar_revision_listing`` orders an airfoil's revisions by id (the keyset order of the
revision listing) and holds every column a listing filters or groups on, so filters,
counts and the catalogue's per-airfoil summaries are answered from the index without
reading the rows (which hold the tables).
"""

from __future__ import annotations

from collections.abc import Sequence

from alembic import op

revision: str = "0002"
down_revision: str | None = "0001"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_index(
        "ix_polar_revision_listing",
        "polar_revision",
        ["airfoil_id", "id", "surface", "review_state", "source_kind", "reynolds"],
    )
    op.create_index("ix_airfoil_thickness_name", "airfoil", ["thickness", "name"])
    op.create_index("ix_airfoil_family_order", "airfoil", ["family_id", "thickness", "name"])


def downgrade() -> None:
    op.drop_index("ix_airfoil_family_order", table_name="airfoil")
    op.drop_index("ix_airfoil_thickness_name", table_name="airfoil")
    op.drop_index("ix_polar_revision_listing", table_name="polar_revision")
