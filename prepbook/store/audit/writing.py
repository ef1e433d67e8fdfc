"""Recording an event: one hash-chained event per write, in the writer's transaction.

Each event stores the canonical JSON snapshot of the whole row after the write
(``store.snapshot.snapshot``); a large derived text column (``info={"audit":
"digest"}``, a run's computed result) is in it as its fingerprint ``sha256:<hex>``.
"""

from __future__ import annotations

from datetime import UTC, datetime

from sqlalchemy import Table, bindparam, insert, select, update
from sqlalchemy.orm import Session

from prepbook.errors import IntegrityError, InvalidInput
from prepbook.store.audit.chain import canonical_json, hasher, iso, payload, read_key, utc_naive
from prepbook.store.models import AUDITED_TABLES, AuditEvent, AuditHead, Base, table_of
from prepbook.store.snapshot import snapshot

_HEAD_KEY = "prepbook_audit_head"
_EVENTS = table_of(AuditEvent)
_HEAD = table_of(AuditHead)
# Built once with bound parameters: compiled once, not rebuilt for every event.
_ADD_EVENT = insert(_EVENTS)
_MOVE_HEAD = (update(_HEAD).where(_HEAD.c.id == 1)
              .values(seq=bindparam("new_seq"), hash=bindparam("new_hash")))


def _locked_head(session: Session) -> tuple[int, str | None]:
    """The chain's head (seq, hash), read and locked once per transaction.

    The first event of a transaction reads the head FOR UPDATE (on SQLite the
    BEGIN IMMEDIATE write lock already excludes other writers); until that
    transaction ends nobody else can move the head, so later events of the same
    transaction take it from ``session.info``, where ``record`` leaves it.
    """
    transaction = session.get_transaction()
    held = session.info.get(_HEAD_KEY)
    if held is not None and held[0] is transaction:
        return held[1], held[2]
    conn = session.connection()
    row = conn.execute(select(_HEAD.c.seq, _HEAD.c.hash).where(_HEAD.c.id == 1)
                       .with_for_update()).first()
    if row is None:
        # Only a schema built without the migration lacks the seeded head row.
        if conn.execute(select(_EVENTS.c.seq).limit(1)).first() is not None:
            raise IntegrityError("the audit head row is missing: run `prepbook audit verify`")
        conn.execute(insert(_HEAD).values(id=1, seq=0, hash=None))
        return 0, None
    return int(row.seq), row.hash


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

    Call it after every insert or permitted update (the row flushed, so it has its
    id). The head row is locked for the rest of the transaction (FOR UPDATE on
    PostgreSQL; on SQLite the session's BEGIN IMMEDIATE already holds the write lock),
    so events never interleave.
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

    head_seq, head_hash = _locked_head(session)
    seq = head_seq + 1
    at = datetime.now(UTC).replace(tzinfo=None)
    when = utc_naive(performed_at) if performed_at is not None else None
    hashed = payload(seq, iso(at), actor, action, table.name, record_id, values, reason,
                     iso(when), head_hash)
    new_hash = f"{scheme}:{digest(hashed)}"
    # Two plain statements on the session's connection, in its transaction: the trail
    # is append-only and the head one row, so the unit of work has nothing to track.
    conn = session.connection()
    conn.execute(_ADD_EVENT, {
        "seq": seq, "at": at, "actor": actor, "action": action, "record_type": table.name,
        "record_id": record_id, "values": values, "reason": reason, "performed_at": when,
        "prev_hash": head_hash, "hash": new_hash})
    conn.execute(_MOVE_HEAD, {"new_seq": seq, "new_hash": new_hash})
    session.info[_HEAD_KEY] = (session.get_transaction(), seq, new_hash)
    return seq
