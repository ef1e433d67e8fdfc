"""The audit trail's own tables (its events, head, keying and checkpoints) and the
login sessions: not records the trail vouches for, but what vouches."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import CheckConstraint, ForeignKey, Index, Text
from sqlalchemy.orm import Mapped, mapped_column

from prepbook.store.models.base import Base


class AuditEvent(Base):
    """One link of the append-only, hash-chained audit trail."""

    __tablename__ = "audit_events"
    __table_args__ = (Index("ix_audit_events_record_type_record_id", "record_type", "record_id"),)

    seq: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    at: Mapped[datetime]
    actor: Mapped[str]
    action: Mapped[str]
    record_type: Mapped[str]
    record_id: Mapped[int]
    values: Mapped[str] = mapped_column(Text)
    reason: Mapped[str | None] = mapped_column(Text)
    performed_at: Mapped[datetime | None]
    prev_hash: Mapped[str | None]
    hash: Mapped[str]
    # Who wrote it at the machine: the operating-system login and the host (None on
    # events written before they were recorded); ``key_id`` is the fingerprint of the
    # audit key of a keyed event. Part of the hashed text when present.
    os_login: Mapped[str | None]
    host: Mapped[str | None]
    key_id: Mapped[str | None]


class AuditHead(Base):
    """The single row (id=1) naming the last event; locked while an event is written."""

    __tablename__ = "audit_head"
    __table_args__ = (CheckConstraint("id = 1", name="single_row"),)
    __updatable__ = frozenset({"seq", "hash"})

    id: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    seq: Mapped[int] = mapped_column(default=0)
    hash: Mapped[str | None]


class AuditKeying(Base):
    """The single row (id=1) saying how this trail is kept, recorded at its first write.

    ``lab_id`` names the lab's trail in checkpoints and witness files; ``scheme`` is the
    hash scheme (sha256 or hmac-sha256) and ``key_fingerprint`` the fingerprint of the
    audit key of a keyed trail; ``public_key`` is the lab's Ed25519 checkpoint-signing
    public key (hex), recorded at the first checkpoint.
    """

    __tablename__ = "audit_keying"
    __table_args__ = (CheckConstraint("id = 1", name="single_row"),)
    __updatable__ = frozenset({"public_key"})

    id: Mapped[int] = mapped_column(primary_key=True, autoincrement=False)
    lab_id: Mapped[str]
    scheme: Mapped[str]
    key_fingerprint: Mapped[str | None]
    public_key: Mapped[str | None]
    recorded_at: Mapped[datetime]


class AuditCheckpoint(Base):
    """A signed statement that the trail had ``events`` events ending in ``head_hash``.

    The same line goes to the witness folder outside the database; ``signature`` is
    the Ed25519 signature (hex) of ``prepbook.store.audit.checkpoints.message``.
    """

    __tablename__ = "audit_checkpoints"

    id: Mapped[int] = mapped_column(primary_key=True)
    lab_id: Mapped[str]
    events: Mapped[int]
    head_hash: Mapped[str]
    made_at: Mapped[datetime]
    public_key: Mapped[str]
    signature: Mapped[str]


class LoginSession(Base):
    """A person signed in from one operating-system account and host, to this database.

    Only the SHA-256 of the session's random token is kept (the token itself is in the
    owner's session file); ``login_seq`` is the audit event of the login, which names
    the same hash. Not an audited table: ``last_seen_at`` moves with every write the
    session makes (the idle clock); the login and logout are events on the user.
    """

    __tablename__ = "login_sessions"
    __updatable__ = frozenset({"last_seen_at", "ended_at", "ended_reason"})

    id: Mapped[int] = mapped_column(primary_key=True)
    user_id: Mapped[int] = mapped_column(ForeignKey("users.id"), index=True)
    token_sha256: Mapped[str] = mapped_column(unique=True)
    os_login: Mapped[str]
    host: Mapped[str]
    login_seq: Mapped[int]
    started_at: Mapped[datetime]
    last_seen_at: Mapped[datetime]
    ended_at: Mapped[datetime | None]
    ended_reason: Mapped[str | None]


class AuditRekeying(Base):
    """A change of the lab's audit key or signing key, made by ``audit rotate-key``.

    ``kind`` is "audit" (the HMAC key: ``old_key``/``new_key`` are fingerprints) or
    "signing" (the Ed25519 key: public keys, hex). The change takes effect after event
    ``after_seq``, whose hash is ``after_hash``; ``old_proof`` and ``new_proof`` are the
    HMAC (audit) or signature (signing) of ``prepbook.store.audit.rekeying.statement``
    with the old and the new key, so a change not made with the key of its time is
    found by ``audit verify``. Rows are only ever added.
    """

    __tablename__ = "audit_rekeyings"

    id: Mapped[int] = mapped_column(primary_key=True)
    lab_id: Mapped[str]
    kind: Mapped[str]
    after_seq: Mapped[int]
    after_hash: Mapped[str]
    old_key: Mapped[str]
    new_key: Mapped[str]
    made_at: Mapped[datetime]
    made_by: Mapped[str]
    old_proof: Mapped[str]
    new_proof: Mapped[str]
