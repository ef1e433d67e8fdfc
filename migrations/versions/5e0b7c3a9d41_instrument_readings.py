"""readings from the instruments: balance connections, reading sources, stored curves

Revision ID: 5e0b7c3a9d41
Revises: 5e7a9c1b3d24
Create Date: 2026-12-05 04:00:00

Written by hand to match ``InstrumentConnection``, ``ReplicateSource`` and
``ReplicateCurve`` in prepbook/store/models/; tests/store/test_migrations.py compares
the two on a freshly upgraded database. Replicates recorded before have no source row:
they were recorded before sources were kept.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "5e0b7c3a9d41"
down_revision: str | Sequence[str] | None = "5e7a9c1b3d24"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "instrument_connections",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("instrument_id", sa.Integer(), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        sa.Column("port", sa.Text(), nullable=False),
        sa.Column("profile", sa.String(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("created_by", sa.String(), nullable=False),
        sa.CheckConstraint("version >= 1", name=op.f("ck_instrument_connections_version")),
        sa.ForeignKeyConstraint(["instrument_id"], ["instruments.id"],
                                name=op.f("fk_instrument_connections_instrument_id_instruments")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_instrument_connections")),
        sa.UniqueConstraint("instrument_id", "version",
                            name=op.f("uq_instrument_connections_instrument_id_version")),
    )
    op.create_index(op.f("ix_instrument_connections_instrument_id"), "instrument_connections",
                    ["instrument_id"], unique=False)
    op.create_table(
        "replicate_curves",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("run_id", sa.Integer(), nullable=False),
        sa.Column("position", sa.Integer(), nullable=False),
        sa.Column("file_name", sa.Text(), nullable=False),
        sa.Column("content", sa.LargeBinary(), nullable=False),
        sa.Column("sha256", sa.String(), nullable=False),
        sa.Column("size_bytes", sa.Integer(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("created_by", sa.String(), nullable=False),
        sa.CheckConstraint("position >= 1", name=op.f("ck_replicate_curves_position")),
        sa.ForeignKeyConstraint(["run_id"], ["runs.id"],
                                name=op.f("fk_replicate_curves_run_id_runs")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_replicate_curves")),
        sa.UniqueConstraint("run_id", "position",
                            name=op.f("uq_replicate_curves_run_id_position")),
    )
    op.create_index(op.f("ix_replicate_curves_run_id"), "replicate_curves", ["run_id"],
                    unique=False)
    op.create_table(
        "replicate_sources",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("replicate_id", sa.Integer(), nullable=False),
        sa.Column("amount_source", sa.String(), nullable=False),
        sa.Column("amount_instrument", sa.String(), nullable=True),
        sa.Column("amount_read_at", sa.DateTime(), nullable=True),
        sa.Column("amount_raw", sa.Text(), nullable=True),
        sa.Column("volume_source", sa.String(), nullable=False),
        sa.Column("created_at", sa.DateTime(), nullable=False),
        sa.Column("created_by", sa.String(), nullable=False),
        sa.CheckConstraint("amount_source IN ('typed', 'balance')",
                           name=op.f("ck_replicate_sources_amount_source")),
        sa.CheckConstraint("volume_source IN ('typed', 'curve')",
                           name=op.f("ck_replicate_sources_volume_source")),
        sa.ForeignKeyConstraint(["replicate_id"], ["replicates.id"],
                                name=op.f("fk_replicate_sources_replicate_id_replicates")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_replicate_sources")),
        sa.UniqueConstraint("replicate_id", name=op.f("uq_replicate_sources_replicate_id")),
    )


def downgrade() -> None:
    op.drop_index(op.f("ix_replicate_curves_run_id"), table_name="replicate_curves")
    op.drop_table("replicate_curves")
    op.drop_index(op.f("ix_instrument_connections_instrument_id"),
                  table_name="instrument_connections")
    op.drop_table("instrument_connections")
    op.drop_table("replicate_sources")
