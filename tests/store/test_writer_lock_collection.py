"""No garbage-collection pause while a write holds the lab's writer lock.

A full collection in a long-running bench process takes 100-200 ms; during a write
every other bench would wait for it. A write pauses the collector from its BEGIN to
its commit (``store.engine``), and the garbage is collected after.
"""

from __future__ import annotations

import gc
from typing import Any

from sqlalchemy import event

from prepbook.lab import batches
from prepbook.lab.database import open_database
from tests.cli.test_bench_flow import bench  # noqa: F401
from tests.conftest import Cli


def test_no_collection_runs_while_a_write_holds_the_writer_lock(
        bench: Cli) -> None:  # noqa: F811
    db = open_database(str(bench.db))
    holding = [False]
    collections = {"holding": 0, "not holding": 0}

    def before(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        if statement.startswith("BEGIN IMMEDIATE") or "pg_advisory_xact_lock" in statement:
            holding[0] = True

    def commit(_conn: Any) -> None:
        holding[0] = False

    def collected(phase: str, _info: dict[str, int]) -> None:
        if phase == "start":
            collections["holding" if holding[0] else "not holding"] += 1

    threshold = gc.get_threshold()
    event.listen(db.engine, "before_cursor_execute", before)
    event.listen(db.engine, "commit", commit)
    gc.callbacks.append(collected)
    gc.set_threshold(1)  # a collection at almost every allocation, unless paused
    try:
        for n in range(3):
            batches.make_batch(db, actor="ben", spec="NaOH-0.1N", volume="1000",
                               solute_mass=f"4.{n}")
    finally:
        gc.set_threshold(*threshold)
        gc.callbacks.remove(collected)
        event.remove(db.engine, "before_cursor_execute", before)
        event.remove(db.engine, "commit", commit)
        db.dispose()
    assert gc.isenabled()  # left as it was found
    assert collections["holding"] == 0, collections
    assert collections["not holding"] > 0, collections  # the hook sees collections
