"""One index for an airfoil's revisions: drop ``ix_polar_revision_lookup``.

Revision ID: 0005
Revises: 0004
Create Date: 2026-12-02

``ix_polar_revision_listing`` (airfoil_id, id, surface, review_state, source_kind,
reynolds) answers every lookup the older (airfoil_id, reynolds, surface) index answered and
holds the other filtered columns too; with both present, SQLite's planner (which has no
statistics) picked the older one and then read every matching row, tables included, to
group a page of the catalogue.
"""

from __future__ import annotations

from collections.abc import Sequence

from alembic import op

revision: str = "0005"
down_revision: str | None = "0004"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.drop_index("ix_polar_revision_lookup", table_name="polar_revision")


def downgrade() -> None:
    op.create_index(
        "ix_polar_revision_lookup", "polar_revision", ["airfoil_id", "reynolds", "surface"]
    )
