"""The statements a `use` sends while it holds the writer lock, counted and pinned.

Every statement under the lab-wide writer lock is a round trip that every other bench
waits for (over a slow link, tens of milliseconds each). This pins today's count so it
cannot grow silently; lower the pin when a statement is cut.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import event, func, select

from prepbook.lab import auditing, batches, runs
from prepbook.lab.database import open_database
from prepbook.store.models import AuditEvent
from tests.cli.test_bench_flow import REPS, _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli

# Counted on the write path as of this pin (SQLite; PostgreSQL adds no statement: its
# advisory lock takes the place of BEGIN IMMEDIATE): the writer's user, the settings,
# the batch by code with its spec, instruments and lot (one query), its runs, every
# volume drawn so far (uses, aliquots and replicates in one read; the volume made comes
# with the batch in hand), the use, the audit head with its event's time and the
# trail's keying (one query), the event, the head moved on. It was 15 before the batch
# was read once and the head, its time and the keying in one statement, then 12 before
# the volumes drawn took two reads instead of four, then 10 before they took one.
# PostgreSQL adds one: the batch's own lock, which lets uses of different batches be
# written side by side (tests/store/test_use_lock.py).
PINNED_USE_STATEMENTS = {"sqlite": 9, "postgresql": 10}
# A standardization of three replicates: the user, the settings, the batch, its runs,
# the balance, the burette, the lot, the volumes drawn, the next run code, the run,
# the audit head, its event, the head moved; the three replicates in one insert, their
# three events in one, the head moved; their sources likewise. It was 33 when the batch
# was read twice and each replicate and each source was inserted and audited alone.
# SQLite has no multi-row insert returning its ids in order, so the ORM inserts the
# replicates and the sources one at a time there: four statements more (in-process
# calls there, not round trips).
PINNED_STANDARDIZE_STATEMENTS = {"postgresql": 19, "sqlite": 23}


def _statements_under_the_lock(db: Any, work: Any) -> list[str]:
    """The statements ``work`` sends between taking the writer lock and committing."""
    seen: list[str] = []
    holding = [False]

    def before(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        if holding[0]:
            seen.append(statement)  # a batch's own lock taken after the writer lock counts
        elif statement.startswith("BEGIN IMMEDIATE") or "pg_advisory_xact_lock" in statement:
            holding[0] = True

    def commit(_conn: Any) -> None:
        holding[0] = False

    event.listen(db.engine, "before_cursor_execute", before)
    event.listen(db.engine, "commit", commit)
    try:
        work()
    finally:
        event.remove(db.engine, "before_cursor_execute", before)
        event.remove(db.engine, "commit", commit)
    return seen


def test_a_use_sends_no_more_statements_under_the_lock_than_pinned(
        bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = _standardize(bench, batch)["run"]
    bench.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
             input="cleo-passphrase\n")
    db = open_database(str(bench.db))
    try:
        def use() -> None:
            batches.use_batch(db, actor="ben", code=batch, volume="5", purpose="alkalinity")

        use()  # the first write of a process reads what later ones remember
        seen = _statements_under_the_lock(db, use)
        backend = db.engine.dialect.name
    finally:
        db.dispose()
    inserts = [s for s in seen if s.lstrip().upper().startswith("INSERT")]
    assert len(inserts) == 2, seen  # the use and its audit event, nothing else written
    assert len(seen) <= PINNED_USE_STATEMENTS[backend], "\n".join(seen)


def test_a_standardization_sends_no_more_statements_under_the_lock_than_pinned(
        bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    db = open_database(str(bench.db))
    try:
        def standardize() -> None:
            runs.standardize(db, actor="ben", batch=batch, replicates=list(REPS),
                             lot="KHP-0001", balance="BAL-1", burette="BUR-1")

        standardize()  # the first write of a process reads what later ones remember
        seen = _statements_under_the_lock(db, standardize)
        trail = auditing.verify(db)
        backend = db.engine.dialect.name
        with db.session(write=False) as session:
            audited = session.scalar(select(func.count()).select_from(AuditEvent).where(
                AuditEvent.record_type.in_(("runs", "replicates", "replicate_sources"))))
    finally:
        db.dispose()
    events = [s for s in seen if s.lstrip().upper().startswith("INSERT INTO AUDIT_EVENTS")]
    # Seven events in three statements: the run's, the replicates', the sources'.
    assert len(events) == 3, "\n".join(seen)
    assert len(seen) <= PINNED_STANDARDIZE_STATEMENTS[backend], "\n".join(seen)
    assert audited == 2 * 7  # two runs: each run, replicate and source has its event
    assert trail.ok, trail.problems  # the chain unbroken
