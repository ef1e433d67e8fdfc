"""changes of the lab's audit key and signing key

Revision ID: 4a8c2e6f1b93
Revises: 6b7e2d9c4f18
Create Date: 2026-12-05 07:00:00

Written by hand to match ``AuditRekeying`` in prepbook/store/models/trail.py;
tests/store/test_migrations.py compares the two on a freshly upgraded database. Like
the checkpoints, the table is the trail's own and not a guarded record: each row
carries the proofs of the old and the new key, which ``audit verify`` checks.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "4a8c2e6f1b93"
down_revision: str | Sequence[str] | None = "6b7e2d9c4f18"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "audit_rekeyings",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("lab_id", sa.String(), nullable=False),
        sa.Column("kind", sa.String(), nullable=False),
        sa.Column("after_seq", sa.Integer(), nullable=False),
        sa.Column("after_hash", sa.String(), nullable=False),
        sa.Column("old_key", sa.String(), nullable=False),
        sa.Column("new_key", sa.String(), nullable=False),
        sa.Column("made_at", sa.DateTime(), nullable=False),
        sa.Column("made_by", sa.String(), nullable=False),
        sa.Column("old_proof", sa.String(), nullable=False),
        sa.Column("new_proof", sa.String(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_audit_rekeyings")),
    )


def downgrade() -> None:
    # Key changes are part of the record; going back means the .bak- copy.
    raise NotImplementedError(
        "prepbook does not drop the record of key changes; restore the .bak- copy instead"
    )
