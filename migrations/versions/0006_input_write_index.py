"""Index of the audit events of writes that can change what a request resolves to: every
event but the derived-table cache writes (``derived.store``).

Revision ID: 0006
Revises: 0005
Create Date: 2026-12-02

The service reuses a request's resolution (its recipe and chosen inputs) while no such write
happened; the newest of those events is read from this partial index in one step, however
many cache writes came after it.
"""

from __future__ import annotations

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "0006"
down_revision: str | None = "0005"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

CONDITION = "action != 'derived.store'"


def upgrade() -> None:
    op.create_index(
        "ix_audit_event_input_writes", "audit_event", ["id"],
        sqlite_where=sa.text(CONDITION), postgresql_where=sa.text(CONDITION),
    )


def downgrade() -> None:
    op.drop_index("ix_audit_event_input_writes", table_name="audit_event")
