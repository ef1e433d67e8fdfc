"""Recording an event: one hash-chained event per write, in the writer's transaction.

Each event stores the canonical JSON snapshot of the whole row after the write
(``store.snapshot.snapshot``); a large derived text column (``info={"audit":
"digest"}``, a run's computed result) is in it as its fingerprint ``sha256:<hex>``.
"""

from __future__ import annotations

import functools
import getpass
import os
import socket
from collections.abc import Sequence
from datetime import UTC, datetime

from sqlalchemy import Connection, Table, bindparam, insert, select, true, update
from sqlalchemy.orm import Session

from prepbook.errors import IntegrityError, InvalidInput, Refused
from prepbook.store.audit import checkpoints, rekeying
from prepbook.store.audit.chain import (
    CLOCK_TOLERANCE,
    KEY_ENV,
    KEYED,
    canonical_json,
    hasher,
    iso,
    key_fingerprint,
    payload,
    read_key,
    utc_naive,
)
from prepbook.store.models import (
    AUDITED_TABLES,
    AuditEvent,
    AuditHead,
    AuditKeying,
    Base,
    table_of,
)
from prepbook.store.snapshot import snapshot

_EVENTS = table_of(AuditEvent)
_HEAD = table_of(AuditHead)
# Built once with bound parameters: compiled once, not rebuilt for every event.
_ADD_EVENT = insert(_EVENTS)
_MOVE_HEAD = (update(_HEAD).where(_HEAD.c.id == 1)
              .values(seq=bindparam("new_seq"), hash=bindparam("new_hash")))
_KEYING = table_of(AuditKeying)
# What a transaction's first event needs, in one statement (one round trip under the
# writer lock): the head (locked), the time of its event, and the trail's keying with
# every change of key (one row per change; ``checkpoints.keying_of``).
_HEAD_AND_KEYING = (
    select(_HEAD.c.seq, _HEAD.c.hash,
           select(_EVENTS.c.at).where(_EVENTS.c.seq == _HEAD.c.seq).scalar_subquery(),
           *checkpoints.KEYING_COLUMNS)
    .select_from(_HEAD.outerjoin(_KEYING, _KEYING.c.id == 1)
                 .outerjoin(rekeying.TABLE, true()))
    .where(_HEAD.c.id == 1).order_by(rekeying.TABLE.c.id).with_for_update(of=_HEAD))


@functools.cache
def writer() -> tuple[str, str]:
    """(operating-system login, host) of this process, recorded with every event."""
    try:
        login = getpass.getuser()
    except (KeyError, OSError):  # no login name (some containers, Windows services)
        login = os.environ.get("USERNAME") or os.environ.get("USER") or "unknown"
    return login, socket.gethostname() or "unknown"


def _check_keying(conn: Connection, kept: checkpoints.Keying | None, head_hash: str | None,
                  scheme: str, fingerprint: str | None) -> None:
    """Refuse a bench whose audit key is not the one the trail is kept with (``kept``).

    The keying is recorded at the first write (an older trail: at its first write
    since, from the scheme of its head).
    """
    if kept is None:
        if head_hash is not None and not head_hash.startswith(f"{scheme}:"):
            kept = checkpoints.Keying("", head_hash.partition(":")[0], None, None)
        else:
            checkpoints.record_keying(conn, scheme, fingerprint)
            return
    if kept.scheme == scheme and (scheme != KEYED or kept.key_fingerprint in (None, fingerprint)):
        return
    if kept.scheme == KEYED and fingerprint is None:
        raise Refused(f"this lab's audit trail is keyed (key {kept.key_fingerprint or '?'}) and "
                      f"this computer has no audit key: set {KEY_ENV}; nothing was written")
    if kept.scheme == KEYED:
        raise Refused(f"the audit key set here (key {fingerprint}) is not this lab's "
                      f"(key {kept.key_fingerprint}); nothing was written")
    raise Refused(f"this lab's audit trail is not keyed but {KEY_ENV} names a key here: "
                  "unset it; nothing was written")


def _locked_head(session: Session, scheme: str,
                 fingerprint: str | None) -> tuple[int, str | None, datetime | None]:
    """The chain's head (seq, hash, time of its event), read and locked once per
    transaction, with the writer's key checked against the trail's (read in the same
    statement).

    The first event of a transaction reads the head FOR UPDATE (on SQLite the
    BEGIN IMMEDIATE write lock already excludes other writers); until that
    transaction ends nobody else can move the head, so later events of the same
    transaction take it from ``session.info``, where ``record`` leaves it.
    """
    transaction = session.get_transaction()
    held = session.info.get(checkpoints.HEAD_KEY)
    if held is not None and held[0] is transaction:
        return held[1], held[2], held[3]
    conn = session.connection()
    rows = conn.execute(_HEAD_AND_KEYING).all()
    if not rows:
        # Only a schema built without the migration lacks the seeded head row.
        if conn.execute(select(_EVENTS.c.seq).limit(1)).first() is not None:
            raise IntegrityError("the audit head row is missing: run `prepbook audit verify`")
        conn.execute(insert(_HEAD).values(id=1, seq=0, hash=None))
        row_seq, row_hash, last_at = 0, None, None
        kept = checkpoints.keying(conn)
    else:
        row_seq, row_hash, last_at = int(rows[0][0]), rows[0][1], rows[0][2]
        kept = checkpoints.keying_of(rows)
    _check_keying(conn, kept, row_hash, scheme, fingerprint)
    return row_seq, row_hash, last_at


def _check_clock(at: datetime, last_at: datetime | None) -> None:
    """Refuse an event dated before the last one beyond the tolerance (a clock set back)."""
    if last_at is not None and at < last_at - CLOCK_TOLERANCE:
        raise Refused(f"this computer's clock reads {at:%Y-%m-%d %H:%M:%S} UTC, before the "
                      f"last audit event ({last_at:%Y-%m-%d %H:%M:%S} UTC): set the clock "
                      "right; nothing was written")


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
    so events never interleave. A bench whose audit key is not the trail's, or whose
    clock reads before the last event, is refused (``Refused``) and writes nothing.
    """
    return record_all(session, actor=actor, action=action, rows=[row], reason=reason,
                      performed_at=performed_at)


def record_all(
    session: Session,
    *,
    actor: str,
    action: str,
    rows: Sequence[Base],
    reason: str | None = None,
    performed_at: datetime | None = None,
) -> int:
    """``record`` for several rows written by one action (the replicates of a run): an
    event each, chained in the order given, sent in one statement, and the head moved
    once; the seq of the last event."""
    if not actor or not actor.strip():
        raise InvalidInput("an audit event needs an actor")
    if not action or not action.strip():
        raise InvalidInput("an audit event needs an action")
    if not rows:
        raise InvalidInput("an audit record needs a row")
    tables: list[Table] = [row.__table__ for row in rows]  # type: ignore[attr-defined,misc]
    for table in tables:
        if table.name not in AUDITED_TABLES:
            raise InvalidInput(f"{table.name} rows are not audited")
    key = read_key()
    scheme, digest = hasher(key)
    key_id = key_fingerprint(key)

    if any(getattr(row, "id", None) is None for row in rows):
        session.flush()  # a new row gets its id

    head_seq, head_hash, last_at = _locked_head(session, scheme, key_id)
    at = datetime.now(UTC).replace(tzinfo=None)
    _check_clock(at, last_at)
    when = utc_naive(performed_at) if performed_at is not None else None
    os_login, host = writer()
    events = []
    for row, table in zip(rows, tables, strict=True):
        values = canonical_json(snapshot(row))
        record_id = int(row.id)  # type: ignore[attr-defined]
        seq = head_seq + 1
        hashed = payload(seq, iso(at), actor, action, table.name, record_id, values, reason,
                         iso(when), head_hash, os_login, host, key_id)
        new_hash = f"{scheme}:{digest(hashed)}"
        events.append({
            "seq": seq, "at": at, "actor": actor, "action": action, "record_type": table.name,
            "record_id": record_id, "values": values, "reason": reason, "performed_at": when,
            "prev_hash": head_hash, "hash": new_hash, "os_login": os_login, "host": host,
            "key_id": key_id})
        head_seq, head_hash = seq, new_hash
    # Two plain statements on the session's connection, in its transaction: the trail
    # is append-only and the head one row, so the unit of work has nothing to track.
    conn = session.connection()
    conn.execute(_ADD_EVENT, events)
    conn.execute(_MOVE_HEAD, {"new_seq": head_seq, "new_hash": head_hash})
    session.info[checkpoints.HEAD_KEY] = (session.get_transaction(), head_seq, head_hash, at)
    return head_seq
