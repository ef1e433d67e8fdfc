"""The review queue reads its runs' reviews in one query, however many runs wait, and
its runs with their batches, lots and instruments in one more, however many batches.

Every bench's reviewer opens the queue before signing; one query a run made the
queue's cost grow with every standardization waiting for review, and one a batch with
every bench whose run waits.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import event

from prepbook.lab import reviews
from prepbook.lab.database import open_database
from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli


def _queue_and_statements(cli: Cli) -> tuple[tuple[reviews.QueuedRun, ...], list[str]]:
    db = open_database(str(cli.db))
    seen: list[str] = []

    def before(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        seen.append(statement)

    event.listen(db.engine, "before_cursor_execute", before)
    try:
        queue = reviews.runs_awaiting_review(db)
    finally:
        event.remove(db.engine, "before_cursor_execute", before)
        db.dispose()
    return queue, seen


def test_the_queue_reads_the_reviews_of_all_its_runs_at_once(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    waiting = {_standardize(bench, batch)["run"] for _ in range(3)}
    queue, seen = _queue_and_statements(bench)
    assert {q.run for q in queue} == waiting
    assert all(q.reviews == () for q in queue)  # none reviewed yet
    from_reviews = [s for s in seen if "FROM reviews" in s]
    assert len(from_reviews) == 1, "\n".join(from_reviews)


def test_the_queue_reads_as_often_for_runs_of_three_batches_as_of_one(
        bench: Cli) -> None:  # noqa: F811
    first = _make_batch(bench)
    _standardize(bench, first)
    _, one_batch = _queue_and_statements(bench)
    others = [_make_batch(bench) for _ in range(2)]
    for batch in others:
        _standardize(bench, batch)
    queue, three_batches = _queue_and_statements(bench)
    assert {q.batch for q in queue} == {first, *others}
    assert all((q.lot, q.balance, q.burette) == ("KHP-0001", "BAL-1", "BUR-1") for q in queue)
    assert len(three_batches) == len(one_batch), "\n".join(three_batches)
