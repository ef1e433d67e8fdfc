"""assays: samples titrated with a batch in service, and their replicates

Revision ID: 5b7e2c9a4d18
Revises: 5e0b7c3a9d41
Create Date: 2026-12-05 03:45:00

Written by hand to match ``Assay`` and ``AssayReplicate`` in prepbook/store/models/;
tests/store/test_migrations.py compares the two on a freshly upgraded database.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "5b7e2c9a4d18"
down_revision: str | Sequence[str] | None = "5e0b7c3a9d41"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "assays",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("code", sa.String(), nullable=False),
        sa.Column("batch_id", sa.Integer(), nullable=False),
        sa.Column("run_id", sa.Integer(), nullable=False),
        sa.Column("use_id", sa.Integer(), nullable=False),
        sa.Column("sample", sa.String(), nullable=False),
        sa.Column("analyte", sa.String(), nullable=False),
        sa.Column("reaction", sa.String(), nullable=True),
        sa.Column("aliquot_ml_text", sa.String(), nullable=True),
        sa.Column("mass_g_text", sa.String(), nullable=True),
        sa.Column("blank_ml_text", sa.String(), nullable=False),
        sa.Column("temperature_c_text", sa.String(), nullable=False),
        sa.Column("titrant_normality_20c", sa.Float(), nullable=False),
        sa.Column("titrant_normality", sa.Float(), nullable=False),
        sa.Column("titrant_u", sa.Float(), nullable=True),
        sa.Column("limit_low_text", sa.String(), nullable=True),
        sa.Column("limit_high_text", sa.String(), nullable=True),
        sa.Column("performed_at", sa.DateTime(), nullable=False),
        sa.Column("recorded_at", sa.DateTime(), nullable=False),
        sa.Column("analyst", sa.String(), nullable=False),
        sa.Column("result", sa.Float(), nullable=False),
        sa.Column("result_unit", sa.String(), nullable=False),
        sa.Column("sd", sa.Float(), nullable=True),
        sa.Column("rsd_percent", sa.Float(), nullable=True),
        sa.Column("u", sa.Float(), nullable=True),
        sa.Column("expanded_u", sa.Float(), nullable=True),
        sa.Column("k", sa.Float(), nullable=True),
        sa.Column("result_json", sa.Text(), nullable=False),
        sa.CheckConstraint(
            "(aliquot_ml_text IS NULL) <> (mass_g_text IS NULL)",
            name=op.f("ck_assays_one_amount"),
        ),
        sa.ForeignKeyConstraint(["batch_id"], ["batches.id"],
                                name=op.f("fk_assays_batch_id_batches")),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"], name=op.f("fk_assays_run_id_runs")),
        sa.ForeignKeyConstraint(["use_id"], ["uses.id"], name=op.f("fk_assays_use_id_uses")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_assays")),
        sa.UniqueConstraint("code", name=op.f("uq_assays_code")),
    )
    op.create_index(op.f("ix_assays_batch_id"), "assays", ["batch_id"], unique=False)
    op.create_index(op.f("ix_assays_run_id"), "assays", ["run_id"], unique=False)
    op.create_index(op.f("ix_assays_use_id"), "assays", ["use_id"], unique=False)
    op.create_table(
        "assay_replicates",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("assay_id", sa.Integer(), nullable=False),
        sa.Column("position", sa.Integer(), nullable=False),
        sa.Column("volume_ml_text", sa.String(), nullable=False),
        sa.CheckConstraint("position >= 1", name=op.f("ck_assay_replicates_position")),
        sa.ForeignKeyConstraint(["assay_id"], ["assays.id"],
                                name=op.f("fk_assay_replicates_assay_id_assays")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_assay_replicates")),
        sa.UniqueConstraint("assay_id", "position",
                            name=op.f("uq_assay_replicates_assay_id_position")),
    )
    op.create_index(op.f("ix_assay_replicates_assay_id"), "assay_replicates", ["assay_id"],
                    unique=False)


def downgrade() -> None:
    # Assays are part of the record; going back means restoring the .bak- copy.
    raise NotImplementedError(
        "prepbook does not drop recorded assays; restore the .bak- copy instead"
    )
