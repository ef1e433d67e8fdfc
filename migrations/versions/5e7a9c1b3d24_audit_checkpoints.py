"""audit checkpoints, the trail's keying, and who wrote each event at which machine

Revision ID: 5e7a9c1b3d24
Revises: 8d2f4b6a1c37
Create Date: 2026-12-05 04:00:00

Written by hand to match ``AuditEvent``, ``AuditKeying`` and ``AuditCheckpoint`` in
prepbook/store/models/; tests/store/test_migrations.py compares the two on a freshly
upgraded database. Events written before this revision keep NULL in the new columns
and verify as before (the hashed text holds the new fields only when present).
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "5e7a9c1b3d24"
down_revision: str | Sequence[str] | None = "8d2f4b6a1c37"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    with op.batch_alter_table("audit_events") as batch:
        batch.add_column(sa.Column("os_login", sa.String(), nullable=True))
        batch.add_column(sa.Column("host", sa.String(), nullable=True))
        batch.add_column(sa.Column("key_id", sa.String(), nullable=True))
    op.create_table(
        "audit_keying",
        sa.Column("id", sa.Integer(), autoincrement=False, nullable=False),
        sa.Column("lab_id", sa.String(), nullable=False),
        sa.Column("scheme", sa.String(), nullable=False),
        sa.Column("key_fingerprint", sa.String(), nullable=True),
        sa.Column("public_key", sa.String(), nullable=True),
        sa.Column("recorded_at", sa.DateTime(), nullable=False),
        sa.CheckConstraint("id = 1", name=op.f("ck_audit_keying_single_row")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_audit_keying")),
    )
    op.create_table(
        "audit_checkpoints",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("lab_id", sa.String(), nullable=False),
        sa.Column("events", sa.Integer(), nullable=False),
        sa.Column("head_hash", sa.String(), nullable=False),
        sa.Column("made_at", sa.DateTime(), nullable=False),
        sa.Column("public_key", sa.String(), nullable=False),
        sa.Column("signature", sa.String(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_audit_checkpoints")),
    )


def downgrade() -> None:
    # Checkpoints and keying are part of the record; going back means the .bak- copy.
    raise NotImplementedError(
        "prepbook does not drop the audit checkpoints; restore the .bak- copy instead"
    )
