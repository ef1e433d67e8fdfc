"""Reading the audit log: events as plain dicts, filtered, oldest first."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from datetime import date, datetime, time, timedelta

import msgspec
from sqlalchemy import and_, or_, select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput
from prepbook.store.audit.chain import iso, utc_naive
from prepbook.store.models import AuditEvent

_events = AuditEvent.__table__



class LogEntry(msgspec.Struct, frozen=True):
    """One audit event as a reader sees it (times as ISO text, UTC)."""

    seq: int
    at: str | None
    actor: str
    action: str
    record: str
    record_type: str
    record_id: int
    reason: str | None
    performed_at: str | None
    os_login: str | None  # the writer's operating-system login (None on older events)
    host: str | None  # and the machine it wrote from


def log(
    session: Session,
    *,
    record_type: str | None = None,
    record_id: int | None = None,
    actor: str | None = None,
    since: date | datetime | None = None,
    until: date | datetime | None = None,
    limit: int | None = None,
    records: Mapping[str, Sequence[int]] | None = None,
) -> list[LogEntry]:
    """Audit events, oldest first; ``limit`` keeps the most recent ones.

    Times are UTC. ``since`` is inclusive; ``until`` is inclusive too, and a plain
    date means the whole of that day. ``records`` (table -> ids) keeps the events of
    those records only, in the same one query.
    """
    c = _events.c
    stmt = select(c.seq, c.at, c.actor, c.action, c.record_type, c.record_id, c.reason,
                  c.performed_at, c.os_login, c.host)
    if record_type is not None:
        stmt = stmt.where(c.record_type == record_type)
    if record_id is not None:
        stmt = stmt.where(c.record_id == record_id)
    if records is not None:
        if not any(records.values()):
            return []
        stmt = stmt.where(or_(*(and_(c.record_type == table, c.record_id.in_(ids))
                                for table, ids in records.items() if ids)))
    if actor is not None:
        stmt = stmt.where(c.actor == actor)
    if since is not None:
        start = since if isinstance(since, datetime) else datetime.combine(since, time.min)
        stmt = stmt.where(c.at >= utc_naive(start))
    if until is not None:
        if isinstance(until, datetime):
            stmt = stmt.where(c.at <= utc_naive(until))
        else:
            stmt = stmt.where(c.at < datetime.combine(until + timedelta(days=1), time.min))
    if limit is not None:
        if limit < 1:
            raise InvalidInput(f"limit must be a positive number of events, not {limit}")
        stmt = stmt.order_by(c.seq.desc()).limit(limit)
    else:
        stmt = stmt.order_by(c.seq)
    session.flush()
    rows = list(session.connection().execute(stmt))
    if limit is not None:
        rows.reverse()
    return [LogEntry(seq=row.seq, at=iso(row.at), actor=row.actor, action=row.action,
                     record=f"{row.record_type} #{row.record_id}",
                     record_type=row.record_type, record_id=row.record_id, reason=row.reason,
                     performed_at=iso(row.performed_at), os_login=row.os_login,
                     host=row.host)
            for row in rows]
