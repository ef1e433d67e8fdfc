"""concentrate lots: a lot's density from its certificate

Revision ID: c4d8e1f2a735
Revises: 4a8c2e6f1b93
Create Date: 2026-12-05 07:00:00

A lot of a concentrated reagent (hydrochloric acid 37 %, ...) records its assay (% w/w,
in ``purity_text``) and its density (g/mL, ``density_text``) as the certificate states
them, so a batch made from it is computed from that lot and traced to it. The lots
table is guarded (revision 6b7e2d9c4f18): its guard names every column, so it is
dropped before the column is added and re-created after.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

from prepbook.store.audit import guards

revision: str = "c4d8e1f2a735"
down_revision: str | Sequence[str] | None = "4a8c2e6f1b93"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

_TABLE = "lots"


def _guard() -> guards.Guarded:
    inspector = sa.inspect(op.get_bind())
    columns = tuple(c["name"] for c in inspector.get_columns(_TABLE))
    updatable = next(g.updatable for g in guards.guarded_tables() if g.table == _TABLE)
    return guards.Guarded(_TABLE, columns, updatable)


def _regard(change: str) -> None:
    dialect = op.get_bind().dialect.name
    for statement in guards.drop_statements(dialect, [_TABLE]):
        op.execute(statement)
    with op.batch_alter_table(_TABLE) as batch:
        if change == "add":
            batch.add_column(sa.Column("density_text", sa.String(), nullable=True))
        else:
            batch.drop_column("density_text")
    for statement in guards.create_statements(dialect, [_guard()]):
        op.execute(statement)


def upgrade() -> None:
    _regard("add")


def downgrade() -> None:
    _regard("drop")
