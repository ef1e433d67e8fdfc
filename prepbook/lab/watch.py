"""Small read-only services for front ends that stay open (the terminal app).

``head_seq`` is the cheap question a screen asks every few seconds to learn whether
anyone (another bench, the command line) has written since it last looked: every
write appends an audit event and moves the audit head in the same transaction.
The other functions gather what one batch's screen needs beside ``show_batch``:
the audit events of its history (read in one query) and its factor trend.
"""

from __future__ import annotations

import msgspec
from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook.lab import history
from prepbook.lab.batch_facts import when
from prepbook.lab.common import by_code
from prepbook.store import audit
from prepbook.store.audit import LogEntry
from prepbook.store.engine import Database
from prepbook.store.models import AuditHead, Batch, Replicate, Review, Run, Use


class FactorPoint(msgspec.Struct, frozen=True):
    """The factor of one run of a batch (any status) and its change from the accepted
    run before (accepted runs only)."""

    run: str
    at: str
    status: str
    factor: float
    change_percent: float | None
    beyond_drift_limit: bool


class BatchTrend(msgspec.Struct, frozen=True):
    """Every run's factor for a chart, the spec's window and the accepted runs' trend."""

    batch: str
    window: tuple[float, float]
    points: tuple[FactorPoint, ...]
    trend: history.Trend


def head_seq(db: Database) -> int:
    """The sequence number of the latest audit event (0 on an empty trail)."""
    with db.session(write=False) as s:
        seq = s.scalar(select(AuditHead.seq).limit(1))
    return int(seq or 0)


def _history_ids(s: Session, batch: Batch) -> dict[str, list[int]]:
    """The audited records of one batch's history, table -> ids: the batch, its runs,
    their replicates (every version) and reviews, and its uses."""
    run_ids = list(s.scalars(select(Run.id).where(Run.batch_id == batch.id)))
    ids = {"batches": [batch.id], "runs": run_ids,
           "uses": list(s.scalars(select(Use.id).where(Use.batch_id == batch.id)))}
    if run_ids:
        ids["replicates"] = list(s.scalars(
            select(Replicate.id).where(Replicate.run_id.in_(run_ids))))
        ids["reviews"] = list(s.scalars(select(Review.id).where(Review.run_id.in_(run_ids))))
    return ids


def batch_events(db: Database, code: str) -> list[LogEntry]:
    """Every audit event of one batch's history, oldest first (as ``audit log``), read
    in one session: the record ids, then their events in one query."""
    with db.session(write=False) as s:
        ids = _history_ids(s, by_code(s, Batch, code, "batch"))
        return audit.log(s, records=ids)


def batch_trend(db: Database, code: str) -> BatchTrend:
    """The factor of every run of a batch over time (for a chart: accepted, awaiting and
    rejected alike), the spec's acceptance window, and ``history.trend`` of the
    accepted runs (change between them, least-squares slope and forecast)."""
    with db.session(write=False) as s:
        b = by_code(s, Batch, code, "batch")
        rows = s.execute(select(Run.code, Run.performed_at, Run.status, Run.factor)
                         .where(Run.batch_id == b.id)
                         .order_by(Run.performed_at, Run.id)).all()
    fitted = history.trend(db, code)
    changes = {h.run: h for h in fitted.history}
    points = tuple(FactorPoint(run=c, at=when(at), status=st, factor=f,
                               change_percent=changes[c].change_percent if c in changes
                               else None,
                               beyond_drift_limit=c in changes
                               and changes[c].beyond_drift_limit)
                   for c, at, st, f in rows if f is not None)
    return BatchTrend(batch=code, window=fitted.window, points=points, trend=fitted)
