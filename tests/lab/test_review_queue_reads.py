"""The review queue reads its runs' reviews in one query, however many runs wait.

Every bench's reviewer opens the queue before signing; one query a run made the
queue's cost grow with every standardization waiting for review.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import event

from prepbook.lab import reviews
from prepbook.lab.database import open_database
from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli


def test_the_queue_reads_the_reviews_of_all_its_runs_at_once(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    waiting = {_standardize(bench, batch)["run"] for _ in range(3)}
    db = open_database(str(bench.db))
    seen: list[str] = []

    def before(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        seen.append(statement)

    event.listen(db.engine, "before_cursor_execute", before)
    try:
        queue = reviews.runs_awaiting_review(db)
    finally:
        event.remove(db.engine, "before_cursor_execute", before)
        db.dispose()
    assert {q.run for q in queue} == waiting
    assert all(q.reviews == () for q in queue)  # none reviewed yet
    from_reviews = [s for s in seen if "FROM reviews" in s]
    assert len(from_reviews) == 1, "\n".join(from_reviews)
