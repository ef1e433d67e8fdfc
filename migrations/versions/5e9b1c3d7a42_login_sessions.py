"""login sessions: who is signed in, from which operating-system account and host

Revision ID: 5e9b1c3d7a42
Revises: b7e4c2a9d160
Create Date: 2026-12-05 03:40:00

Written by hand to match ``LoginSession`` in prepbook/store/models/. A session row
holds only the SHA-256 of the random token kept in the owner's session file; the
login itself is an audit event on the user, which names the same hash.
"""

from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = "5e9b1c3d7a42"
down_revision: str | Sequence[str] | None = "b7e4c2a9d160"
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    op.create_table(
        "login_sessions",
        sa.Column("id", sa.Integer(), nullable=False),
        sa.Column("user_id", sa.Integer(), nullable=False),
        sa.Column("token_sha256", sa.String(), nullable=False),
        sa.Column("os_login", sa.String(), nullable=False),
        sa.Column("host", sa.String(), nullable=False),
        sa.Column("login_seq", sa.Integer(), nullable=False),
        sa.Column("started_at", sa.DateTime(), nullable=False),
        sa.Column("last_seen_at", sa.DateTime(), nullable=False),
        sa.Column("ended_at", sa.DateTime(), nullable=True),
        sa.Column("ended_reason", sa.String(), nullable=True),
        sa.ForeignKeyConstraint(
            ["user_id"], ["users.id"], name=op.f("fk_login_sessions_user_id_users")
        ),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_login_sessions")),
        sa.UniqueConstraint("token_sha256", name=op.f("uq_login_sessions_token_sha256")),
    )
    op.create_index(op.f("ix_login_sessions_user_id"), "login_sessions", ["user_id"],
                    unique=False)


def downgrade() -> None:
    op.drop_index(op.f("ix_login_sessions_user_id"), table_name="login_sessions")
    op.drop_table("login_sessions")
