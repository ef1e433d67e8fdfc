"""The statements a `use` sends while it holds the writer lock, counted and pinned.

Every statement under the lab-wide writer lock is a round trip that every other bench
waits for (over a slow link, tens of milliseconds each). This pins today's count so it
cannot grow silently; lower the pin when a statement is cut.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import event

from prepbook.lab import batches
from prepbook.lab.database import open_database
from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli

# Counted on the write path as of this pin (SQLite; PostgreSQL adds no statement: its
# advisory lock takes the place of BEGIN IMMEDIATE): the writer's user, the settings,
# the batch by code with its spec, instruments and lot (one query), its runs, the
# volumes drawn so far (two reads: uses and aliquots in one, replicates in the other; the
# volume made comes with the batch in hand), the use, the audit head with its event's
# time and the trail's keying (one query), the event, the head moved on. It was 15
# before the batch was read once and the head, its time and the keying in one
# statement, then 12 before the volumes drawn took two reads instead of four.
PINNED_USE_STATEMENTS = 10


def _statements_under_the_lock(db: Any, work: Any) -> list[str]:
    """The statements ``work`` sends between taking the writer lock and committing."""
    seen: list[str] = []
    holding = [False]

    def before(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        if statement.startswith("BEGIN IMMEDIATE") or "pg_advisory_xact_lock" in statement:
            holding[0] = True
        elif holding[0]:
            seen.append(statement)

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
    finally:
        db.dispose()
    inserts = [s for s in seen if s.lstrip().upper().startswith("INSERT")]
    assert len(inserts) == 2, seen  # the use and its audit event, nothing else written
    assert len(seen) <= PINNED_USE_STATEMENTS, "\n".join(seen)
