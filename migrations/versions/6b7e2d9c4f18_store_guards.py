"""the store refuses to rewrite the record: guard triggers

Revision ID: 6b7e2d9c4f18
Revises: 5e9b1c3d7a42
Create Date: 2026-12-05 03:50:00

Triggers that refuse UPDATE and DELETE on the audit trail (the head row: only its
seq and hash move) and refuse DELETE, and UPDATE outside ``__updatable__``, on every
audited table, on SQLite and PostgreSQL (``prepbook.store.audit.guards``). Each
table's columns are read from the database as this revision finds it, so a later
revision that adds a column re-creates that table's guard.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

from prepbook.store.audit import guards

revision: str = "6b7e2d9c4f18"
down_revision: str | Sequence[str] | None = "5e9b1c3d7a42"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def _tables() -> list[guards.Guarded]:
    inspector = sa.inspect(op.get_bind())
    return [guards.Guarded(g.table, tuple(c["name"] for c in inspector.get_columns(g.table)),
                           g.updatable)
            for g in guards.guarded_tables()]


def upgrade() -> None:
    for statement in guards.create_statements(op.get_bind().dialect.name, _tables()):
        op.execute(statement)


def downgrade() -> None:
    dialect = op.get_bind().dialect.name
    for statement in guards.drop_statements(dialect, [g.table for g in _tables()]):
        op.execute(statement)
    if dialect == "postgresql":
        op.execute(f"DROP FUNCTION IF EXISTS {guards.FUNCTION}()")
