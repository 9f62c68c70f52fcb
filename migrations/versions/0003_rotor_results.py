"""Derived objects of kind ``rotor`` (rotor performance results): widen the check on
``derived_table.kind``.

Revision ID: 0003
Revises: 0002
Create Date: 2026-12-02
"""

from __future__ import annotations

from collections.abc import Sequence

from alembic import op

revision: str = "0003"
down_revision: str | None = "0002"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

OLD_KINDS = ("extended", "augmented", "resampled", "blended", "blade-set")
NEW_KINDS = (*OLD_KINDS, "rotor")


def _check(kinds: tuple[str, ...]) -> str:
    return "kind IN (" + ", ".join(f"'{k}'" for k in kinds) + ")"


def upgrade() -> None:
    with op.batch_alter_table("derived_table") as batch:
        batch.drop_constraint(op.f("ck_derived_table_kind"), type_="check")
        batch.create_check_constraint("kind", _check(NEW_KINDS))


def downgrade() -> None:
    op.execute("DELETE FROM derived_input WHERE derived_id IN "
               "(SELECT id FROM derived_table WHERE kind = 'rotor')")
    op.execute("DELETE FROM derived_table WHERE kind = 'rotor'")
    with op.batch_alter_table("derived_table") as batch:
        batch.drop_constraint(op.f("ck_derived_table_kind"), type_="check")
        batch.create_check_constraint("kind", _check(OLD_KINDS))
