"""Recording an event: one hash-chained event per write, in the writer's transaction.

Each event stores the canonical JSON snapshot of the whole row after the write
(``store.snapshot.snapshot``); a large derived text column (``info={"audit":
"digest"}``, a run's computed result) is in it as its fingerprint ``sha256:<hex>``.
"""

from __future__ import annotations

from datetime import UTC, datetime

from sqlalchemy import Table, select
from sqlalchemy.orm import Session

from prepbook.errors import IntegrityError, InvalidInput
from prepbook.store.audit.chain import canonical_json, hasher, iso, payload, read_key, utc_naive
from prepbook.store.models import AUDITED_TABLES, AuditEvent, AuditHead, Base
from prepbook.store.snapshot import snapshot

_HEAD_KEY = "prepbook_audit_head"


def _locked_head(session: Session) -> AuditHead:
    """The head row, read (and locked) once per transaction.

    The first event of a transaction reads the head FOR UPDATE (on SQLite the
    BEGIN IMMEDIATE write lock already excludes other writers); until that
    transaction ends nobody else can move the head, so later events of the same
    transaction use the row already held instead of reading it again. A savepoint
    rolled back expires the object, which then reloads itself on first use.
    """
    transaction = session.get_transaction()
    held = session.info.get(_HEAD_KEY)
    if held is not None and held[0] is transaction and held[1] in session:
        return held[1]  # type: ignore[no-any-return]
    head = session.execute(
        select(AuditHead)
        .where(AuditHead.id == 1)
        .with_for_update()
        .execution_options(populate_existing=True)
    ).scalar_one_or_none()
    if head is None:
        # Only a schema built without the migration lacks the seeded head row.
        if session.execute(select(AuditEvent.seq).limit(1)).first() is not None:
            raise IntegrityError("the audit head row is missing: run `prepbook audit verify`")
        head = AuditHead(id=1, seq=0, hash=None)
        session.add(head)
    session.info[_HEAD_KEY] = (transaction, head)
    return head


def record(
    session: Session,
    *,
    actor: str,
    action: str,
    row: Base,
    reason: str | None = None,
    performed_at: datetime | None = None,
) -> int:
    """Append the audit event for a write to ``row`` in the caller's transaction; its seq.

    Call it after every insert or permitted update. The head row is locked for the
    rest of the transaction (FOR UPDATE on PostgreSQL; on SQLite the session's
    BEGIN IMMEDIATE already holds the write lock), so events never interleave.
    """
    if not actor or not actor.strip():
        raise InvalidInput("an audit event needs an actor")
    if not action or not action.strip():
        raise InvalidInput("an audit event needs an action")
    table: Table = row.__table__  # type: ignore[attr-defined,assignment]
    if table.name not in AUDITED_TABLES:
        raise InvalidInput(f"{table.name} rows are not audited")
    scheme, digest = hasher(read_key())

    if getattr(row, "id", None) is None:
        session.flush()  # a new row gets its id
    values = canonical_json(snapshot(row))
    record_id = int(row.id)  # type: ignore[attr-defined]

    head = _locked_head(session)
    seq = head.seq + 1
    at = datetime.now(UTC).replace(tzinfo=None)
    when = utc_naive(performed_at) if performed_at is not None else None
    hashed = payload(seq, iso(at), actor, action, table.name, record_id, values, reason,
                     iso(when), head.hash)
    new_hash = f"{scheme}:{digest(hashed)}"
    session.add(
        AuditEvent(seq=seq, at=at, actor=actor, action=action, record_type=table.name,
                   record_id=record_id, values=values, reason=reason, performed_at=when,
                   prev_hash=head.hash, hash=new_hash)
    )
    head.seq = seq
    head.hash = new_hash
    # Not flushed here: the event and the head go out with the session's next flush
    # (the next write, query or the commit), in the same transaction. Whatever reads
    # the trail through the ORM autoflushes, and ``verify`` and ``log`` flush first.
    return seq
