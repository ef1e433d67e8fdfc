"""an index for the board: batches not retired

Revision ID: 8d2f4b6a1c37
Revises: 3c1a5e7d9b20
Create Date: 2026-12-01 21:40:00

The board shows every batch not retired; over years of history most batches are
retired, so it finds the few current ones through this index instead of reading
them all. Written by hand to match ``Batch.retired_at`` in prepbook/store/models/.
"""

from collections.abc import Sequence

from alembic import op

revision: str = "8d2f4b6a1c37"
down_revision: str | Sequence[str] | None = "3c1a5e7d9b20"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_index(op.f("ix_batches_retired_at"), "batches", ["retired_at"], unique=False)


def downgrade() -> None:
    op.drop_index(op.f("ix_batches_retired_at"), table_name="batches")
