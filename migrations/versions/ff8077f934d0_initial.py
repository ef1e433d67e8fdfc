"""initial: every table of the prepbook record

Revision ID: ff8077f934d0
Revises:
Create Date: 2026-12-01 20:30:11

Hand-checked against prepbook/store/models/; tests/store/test_migrations.py
compares the two on a freshly upgraded database.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "ff8077f934d0"
down_revision: str | Sequence[str] | None = None
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def _pk(table: str, column: str = "id") -> sa.PrimaryKeyConstraint:
    return sa.PrimaryKeyConstraint(column, name=op.f(f"pk_{table}"))


def _fk(table: str, column: str, referred: str) -> sa.ForeignKeyConstraint:
    return sa.ForeignKeyConstraint(
        [column], [f"{referred}.id"], name=op.f(f"fk_{table}_{column}_{referred}")
    )


def _check(table: str, name: str, sql: str) -> sa.CheckConstraint:
    return sa.CheckConstraint(sql, name=op.f(f"ck_{table}_{name}"))


def _unique(table: str, *columns: str) -> sa.UniqueConstraint:
    return sa.UniqueConstraint(*columns, name=op.f(f"uq_{table}_{'_'.join(columns)}"))


def _index(table: str, *columns: str) -> None:
    op.create_index(op.f(f"ix_{table}_{'_'.join(columns)}"), table, list(columns), unique=False)


def _id() -> sa.Column:
    return sa.Column("id", sa.Integer(), nullable=False)


def _text(name: str, nullable: bool = False) -> sa.Column:
    return sa.Column(name, sa.String(), nullable=nullable)


def _when(name: str, nullable: bool = False) -> sa.Column:
    return sa.Column(name, sa.DateTime(), nullable=nullable)


def upgrade() -> None:
    op.create_table(
        "users",
        _id(),
        _text("name"),
        _text("role"),
        _text("passphrase_hash", nullable=True),
        sa.Column("active", sa.Boolean(), nullable=False),
        sa.Column("failed_attempts", sa.Integer(), nullable=False),
        _when("created_at"),
        _text("created_by"),
        _check("users", "role", "role IN ('technician', 'reviewer', 'admin')"),
        _pk("users"),
        _unique("users", "name"),
    )
    op.create_table(
        "materials",
        _id(),
        _text("code"),
        _text("name"),
        _text("formula"),
        sa.Column("data", sa.Text(), nullable=False),
        sa.Column("builtin", sa.Boolean(), nullable=False),
        _when("created_at"),
        _pk("materials"),
        _unique("materials", "code"),
    )
    op.create_table(
        "specs",
        _id(),
        _text("code"),
        _text("name"),
        _text("solute_code"),
        sa.Column("nominal", sa.Float(), nullable=False),
        _text("unit"),
        sa.Column("data", sa.Text(), nullable=False),
        sa.Column("builtin", sa.Boolean(), nullable=False),
        _when("created_at"),
        _text("created_by"),
        _check("specs", "unit", "unit IN ('N', 'M')"),
        _pk("specs"),
        _unique("specs", "code"),
    )
    op.create_table(
        "lots",
        _id(),
        _text("code"),
        _text("material_code"),
        _text("purity_text"),
        _text("purity_u_text", nullable=True),
        sa.Column("expires", sa.Date(), nullable=False),
        _text("certificate", nullable=True),
        sa.Column("dried_on", sa.Date(), nullable=True),
        sa.Column("opened_on", sa.Date(), nullable=True),
        _when("created_at"),
        _text("created_by"),
        _pk("lots"),
        _unique("lots", "code"),
    )
    op.create_table(
        "instruments",
        _id(),
        _text("code"),
        _text("kind"),
        sa.Column("due", sa.Date(), nullable=False),
        _text("capacity_text", nullable=True),
        _text("tolerance_text", nullable=True),
        _text("readability_text", nullable=True),
        _when("created_at"),
        _text("created_by"),
        _check(
            "instruments",
            "kind",
            "kind IN ('balance', 'burette', 'flask', 'pipette', 'thermometer', 'meter')",
        ),
        _pk("instruments"),
        _unique("instruments", "code"),
    )
    op.create_table(
        "batches",
        _id(),
        _text("code"),
        sa.Column("spec_id", sa.Integer(), nullable=False),
        _text("method"),
        _text("volume_ml_text"),
        _text("solute_mass_g_text", nullable=True),
        sa.Column("solute_lot_id", sa.Integer(), nullable=True),
        _text("stock_volume_ml_text", nullable=True),
        sa.Column("parent_batch_id", sa.Integer(), nullable=True),
        _text("aliquot_ml_text", nullable=True),
        sa.Column("flask_id", sa.Integer(), nullable=True),
        sa.Column("balance_id", sa.Integer(), nullable=True),
        sa.Column("theoretical_normality", sa.Float(), nullable=True),
        _when("made_at"),
        _when("recorded_at"),
        _text("made_by"),
        sa.Column("notes", sa.Text(), nullable=True),
        sa.Column("expires", sa.Date(), nullable=False),
        _when("retired_at", nullable=True),
        _text("retired_by", nullable=True),
        sa.Column("retired_reason", sa.Text(), nullable=True),
        _check("batches", "method", "method IN ('solid', 'concentrate', 'dilution')"),
        _fk("batches", "spec_id", "specs"),
        _fk("batches", "solute_lot_id", "lots"),
        _fk("batches", "parent_batch_id", "batches"),
        _fk("batches", "flask_id", "instruments"),
        _fk("batches", "balance_id", "instruments"),
        _pk("batches"),
        _unique("batches", "code"),
    )
    _index("batches", "spec_id")
    _index("batches", "parent_batch_id")
    op.create_table(
        "runs",
        _id(),
        _text("code"),
        sa.Column("batch_id", sa.Integer(), nullable=False),
        _text("method"),
        sa.Column("lot_id", sa.Integer(), nullable=True),
        sa.Column("reference_batch_id", sa.Integer(), nullable=True),
        sa.Column("balance_id", sa.Integer(), nullable=True),
        sa.Column("burette_id", sa.Integer(), nullable=True),
        _text("temperature_c_text", nullable=True),
        _text("blank_ml_text", nullable=True),
        _text("indicator", nullable=True),
        _when("performed_at"),
        _when("recorded_at"),
        _text("analyst"),
        _text("status"),
        *(
            sa.Column(name, sa.Float(), nullable=True)
            for name in ("normality", "normality_20c", "factor", "sd", "rsd_percent", "u")
        ),
        sa.Column("expanded_u", sa.Float(), nullable=True),
        sa.Column("k", sa.Float(), nullable=True),
        sa.Column("result_json", sa.Text(), nullable=True),
        _check("runs", "method", "method IN ('direct', 'secondary')"),
        _check("runs", "status", "status IN ('awaiting-review', 'accepted', 'rejected')"),
        _fk("runs", "batch_id", "batches"),
        _fk("runs", "lot_id", "lots"),
        _fk("runs", "reference_batch_id", "batches"),
        _fk("runs", "balance_id", "instruments"),
        _fk("runs", "burette_id", "instruments"),
        _pk("runs"),
        _unique("runs", "code"),
    )
    _index("runs", "batch_id", "status")
    _index("runs", "status")
    _index("runs", "reference_batch_id")
    op.create_table(
        "replicates",
        _id(),
        sa.Column("run_id", sa.Integer(), nullable=False),
        sa.Column("position", sa.Integer(), nullable=False),
        sa.Column("version", sa.Integer(), nullable=False),
        _text("amount_text"),
        _text("volume_ml_text"),
        sa.Column("excluded", sa.Boolean(), nullable=False),
        sa.Column("reason", sa.Text(), nullable=True),
        sa.Column("supersedes_id", sa.Integer(), nullable=True),
        _when("created_at"),
        _text("created_by"),
        _check("replicates", "position", "position >= 1"),
        _check("replicates", "version", "version >= 1"),
        _fk("replicates", "run_id", "runs"),
        _fk("replicates", "supersedes_id", "replicates"),
        _pk("replicates"),
        _unique("replicates", "run_id", "position", "version"),
    )
    _index("replicates", "run_id")
    op.create_table(
        "reviews",
        _id(),
        sa.Column("run_id", sa.Integer(), nullable=False),
        _text("reviewer"),
        _text("decision"),
        sa.Column("reason", sa.Text(), nullable=True),
        _when("signed_at"),
        _check("reviews", "decision", "decision IN ('accept', 'reject')"),
        _fk("reviews", "run_id", "runs"),
        _pk("reviews"),
    )
    _index("reviews", "run_id")
    op.create_table(
        "uses",
        _id(),
        sa.Column("batch_id", sa.Integer(), nullable=False),
        _when("used_at"),
        _text("used_by"),
        _text("volume_ml_text", nullable=True),
        sa.Column("purpose", sa.Text(), nullable=True),
        _fk("uses", "batch_id", "batches"),
        _pk("uses"),
    )
    _index("uses", "batch_id")
    op.create_table(
        "settings",
        _id(),
        _text("key"),
        sa.Column("value", sa.Text(), nullable=False),
        _when("updated_at"),
        _text("updated_by"),
        _pk("settings"),
        _unique("settings", "key"),
    )
    op.create_table(
        "audit_events",
        sa.Column("seq", sa.Integer(), autoincrement=False, nullable=False),
        _when("at"),
        _text("actor"),
        _text("action"),
        _text("record_type"),
        sa.Column("record_id", sa.Integer(), nullable=False),
        sa.Column("values", sa.Text(), nullable=False),
        sa.Column("reason", sa.Text(), nullable=True),
        _when("performed_at", nullable=True),
        _text("prev_hash", nullable=True),
        _text("hash"),
        _pk("audit_events", "seq"),
    )
    _index("audit_events", "record_type", "record_id")
    audit_head = op.create_table(
        "audit_head",
        sa.Column("id", sa.Integer(), autoincrement=False, nullable=False),
        sa.Column("seq", sa.Integer(), nullable=False),
        _text("hash", nullable=True),
        _check("audit_head", "single_row", "id = 1"),
        _pk("audit_head"),
    )
    # The head row exists from the start, so writers only ever lock and update it.
    op.bulk_insert(audit_head, [{"id": 1, "seq": 0, "hash": None}])


def downgrade() -> None:
    # Records are never deleted: going back means restoring the copy taken before upgrade.
    raise NotImplementedError(
        "prepbook does not downgrade the initial schema; restore the .bak- copy instead"
    )
