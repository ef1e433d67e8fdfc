"""label prints: which label went on which bottle, showing what

Revision ID: 3c1a5e7d9b20
Revises: ff8077f934d0
Create Date: 2026-12-01 21:00:00

Written by hand to match ``LabelPrint`` in prepbook/store/models/;
tests/store/test_migrations.py compares the two on a freshly upgraded database.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "3c1a5e7d9b20"
down_revision: str | Sequence[str] | None = "ff8077f934d0"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "label_prints",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("batch_id", sa.Integer(), nullable=True),
        sa.Column("lot_id", sa.Integer(), nullable=True),
        sa.Column("run_id", sa.Integer(), nullable=True),
        sa.Column("printed_at", sa.DateTime(), nullable=False),
        sa.Column("printed_by", sa.String(), nullable=False),
        sa.Column("size", sa.String(), nullable=False),
        sa.Column("sheet", sa.String(), nullable=True),
        sa.Column("copies", sa.Integer(), nullable=False),
        sa.Column("normality", sa.Float(), nullable=True),
        sa.Column("factor", sa.Float(), nullable=True),
        sa.Column("standardized_on", sa.Date(), nullable=True),
        sa.Column("restandardize_by", sa.Date(), nullable=True),
        sa.Column("expires", sa.Date(), nullable=True),
        sa.Column("file_name", sa.Text(), nullable=False),
        sa.Column("shown_json", sa.Text(), nullable=False),
        sa.CheckConstraint(
            "(batch_id IS NULL) <> (lot_id IS NULL)", name=op.f("ck_label_prints_one_subject")
        ),
        sa.CheckConstraint("copies >= 1", name=op.f("ck_label_prints_copies")),
        sa.ForeignKeyConstraint(
            ["batch_id"], ["batches.id"], name=op.f("fk_label_prints_batch_id_batches")
        ),
        sa.ForeignKeyConstraint(["lot_id"], ["lots.id"], name=op.f("fk_label_prints_lot_id_lots")),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"], name=op.f("fk_label_prints_run_id_runs")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_label_prints")),
    )
    op.create_index(op.f("ix_label_prints_batch_id"), "label_prints", ["batch_id"], unique=False)
    op.create_index(op.f("ix_label_prints_lot_id"), "label_prints", ["lot_id"], unique=False)


def downgrade() -> None:
    # Label prints are part of the record; going back means restoring the .bak- copy.
    raise NotImplementedError(
        "prepbook does not drop recorded label prints; restore the .bak- copy instead"
    )
