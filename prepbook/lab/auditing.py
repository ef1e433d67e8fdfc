"""Reading and verifying the audit trail, for reviewers and auditors."""

from __future__ import annotations

from sqlalchemy.exc import DBAPIError

from prepbook.errors import IntegrityError, InvalidInput
from prepbook.inputs import parse_date
from prepbook.store import audit
from prepbook.store.engine import Database
from prepbook.store.models import AUDITED_TABLES


def log(db: Database, *, record: str | None = None, actor: str | None = None,
        since: str | None = None, until: str | None = None,
        limit: int | None = None) -> list[audit.LogEntry]:
    """Audit events, filtered; ``record`` is TABLE or TABLE#ID."""
    record_type = record_id = None
    if record:
        name, _, rid = record.partition("#")
        if name not in AUDITED_TABLES:
            raise InvalidInput(f"unknown record type {name!r}; one of "
                               f"{', '.join(sorted(AUDITED_TABLES))}")
        record_type = name
        if rid:
            if not rid.isdigit():
                raise InvalidInput(f"record id {rid!r} is not a number")
            record_id = int(rid)
    if limit is not None and limit < 1:
        raise InvalidInput("--limit must be at least 1")
    since_d = parse_date(since, "--since") if since else None
    until_d = parse_date(until, "--until") if until else None
    if since_d and until_d and since_d > until_d:
        raise InvalidInput("--since is after --until")
    with db.session(write=False) as s:
        return audit.log(s, record_type=record_type, record_id=record_id, actor=actor,
                         since=since_d, until=until_d, limit=limit)


def verify(db: Database, *, thorough: bool = False) -> audit.VerifyReport:
    """The chain recomputed and every audited row checked against its last event."""
    try:
        with db.session(write=False) as s:
            return audit.verify(s, thorough=thorough)
    except DBAPIError as exc:  # pages that cannot be read: one line, never a traceback
        raise IntegrityError(f"the database cannot be read to the end ({exc.orig}): restore "
                             "it from a backup; `prepbook audit verify --thorough` on a "
                             "copy lists the damage") from exc
