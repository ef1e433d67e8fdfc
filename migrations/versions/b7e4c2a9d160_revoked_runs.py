"""revoked runs: an accepted result withdrawn by a signed revocation

Revision ID: b7e4c2a9d160
Revises: 5b7e2c9a4d18
Create Date: 2026-12-05 03:50:00

A run's status may now be "revoked" and a review's decision "revoke" (``prepbook
revoke``). Only the two CHECK constraints change; batch mode recreates the tables on
SQLite, PostgreSQL alters them in place. Written by hand to match RUN_STATUSES and
DECISIONS in prepbook/store/models/.
"""

from collections.abc import Sequence

from alembic import op

revision: str = "b7e4c2a9d160"
down_revision: str | Sequence[str] | None = "5b7e2c9a4d18"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

_CHECKS = {
    # table: (column, values before, values after)
    "runs": ("status", ("awaiting-review", "accepted", "rejected"),
             ("awaiting-review", "accepted", "rejected", "revoked")),
    "reviews": ("decision", ("accept", "reject"), ("accept", "reject", "revoke")),
}


def _one_of(column: str, values: tuple[str, ...]) -> str:
    return f"{column} IN ({', '.join(repr(v) for v in values)})"


def _set(which: int) -> None:
    for table, spec in _CHECKS.items():
        column, values = spec[0], spec[which]
        assert isinstance(column, str) and isinstance(values, tuple)
        with op.batch_alter_table(table) as batch:
            batch.drop_constraint(op.f(f"ck_{table}_{column}"), type_="check")
            batch.create_check_constraint(op.f(f"ck_{table}_{column}"), _one_of(column, values))


def upgrade() -> None:
    _set(2)


def downgrade() -> None:
    # Going back refuses on a database holding a revoked run (the constraint fails):
    # a revocation is part of the record; restore the .bak- copy instead.
    _set(1)
