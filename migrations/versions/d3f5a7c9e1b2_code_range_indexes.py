"""indexes for the next free code: codes compared byte by byte on PostgreSQL

Revision ID: d3f5a7c9e1b2
Revises: c4d8e1f2a735
Create Date: 2026-12-05 11:00:00

The next batch, run or assay code is found from the codes between ``PREFIX-`` and
``PREFIX.`` compared byte by byte (``lab.batches.next_code``). On PostgreSQL a
column's own index follows the database's collation (en_US.UTF-8, say) and cannot
serve that comparison, so each code column gets an index on ``code COLLATE "C"``.
SQLite compares codes byte by byte (BINARY) already and its index on each code serves
the range: nothing to add there. An index needs no guard change. Written by hand to
match the indexes at the end of prepbook/store/models/samples.py.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "d3f5a7c9e1b2"
down_revision: str | Sequence[str] | None = "c4d8e1f2a735"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

_TABLES = ("batches", "runs", "assays")


def upgrade() -> None:
    if op.get_bind().dialect.name != "postgresql":
        return
    for table in _TABLES:
        op.create_index(f"ix_{table}_code_bytes", table, [sa.text('code COLLATE "C"')])


def downgrade() -> None:
    if op.get_bind().dialect.name != "postgresql":
        return
    for table in _TABLES:
        op.drop_index(f"ix_{table}_code_bytes", table_name=table)
