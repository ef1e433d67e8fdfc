"""The next free code: found through an index under any collation, and exactly the codes
that start with the prefix.

``lab.batches.next_code`` runs inside the writer lock at every new batch, run and assay;
a lookup that reads every code grows with the lab's history and every bench waits for it.
On PostgreSQL the database's collation (en_US.UTF-8, say) keeps an ordinary index on the
codes from serving ``code LIKE 'P-%'``; the lookup compares codes byte by byte instead,
through an index on ``code COLLATE "C"`` there and SQLite's own BINARY index on the codes.
"""

from __future__ import annotations

from typing import Any

from sqlalchemy import event
from sqlalchemy.orm import Session

from prepbook.lab.batches import next_code
from prepbook.store.engine import Database
from prepbook.store.models import Batch

from .conftest import add_batch


def _lookup_and_plan(db: Database, session: Session, prefix: str) -> tuple[str, str]:
    """The code ``next_code`` gives, and the plan of the statement it sent for it."""
    sent: list[tuple[str, Any]] = []

    def before(_conn: Any, _cursor: Any, statement: str, parameters: Any, *_: Any) -> None:
        sent.append((statement, parameters))

    event.listen(db.engine, "before_cursor_execute", before)
    try:
        code = next_code(session, Batch, prefix)
    finally:
        event.remove(db.engine, "before_cursor_execute", before)
    [(statement, parameters)] = sent
    conn = session.connection()
    if conn.dialect.name == "sqlite":
        rows = conn.exec_driver_sql("EXPLAIN QUERY PLAN " + statement, parameters)
        return code, "\n".join(str(r[-1]) for r in rows)
    # A test database holds a few dozen batches, and for so few rows a table scan is the
    # cheaper plan; with table scans priced out the planner shows whether an index can
    # serve the lookup at all (under LIKE and a non-C collation none can, and the plan
    # stays a table scan whatever it costs).
    conn.exec_driver_sql("SET LOCAL enable_seqscan = off")
    rows = conn.exec_driver_sql("EXPLAIN " + statement, parameters)
    return code, "\n".join(str(r[0]) for r in rows)


def test_the_next_code_is_found_through_an_index(db: Database) -> None:
    with db.session() as s:
        for day in ("261203", "261204", "261205"):
            for n in range(1, 13):
                add_batch(s, f"NaOH-0.1N-{day}-{n}")
        s.flush()
        code, plan = _lookup_and_plan(db, s, "NaOH-0.1N-261204")
    assert code == "NaOH-0.1N-261204-13"
    if db.engine.dialect.name == "sqlite":
        # SQLite's own index on the unique codes, searched for the range only.
        assert "SEARCH batches USING COVERING INDEX sqlite_autoindex_batches_" in plan, plan
        assert "code>? AND code<?" in plan, plan
    else:
        # Searched for the range (an Index Cond), not the whole code index read and
        # filtered, nor the table.
        assert "using ix_batches_code_bytes" in plan, plan
        assert "Index Cond" in plan, plan
        assert "Seq Scan" not in plan, plan


def test_the_next_code_counts_only_codes_that_start_with_the_prefix(db: Database) -> None:
    # "_" and "%" are LIKE's wildcards, and codes may hold "_"; a code that sorts just
    # after the prefix's range ("." follows "-") is not in it either.
    with db.session() as s:
        for code in ("KOHx0.1N-261205-1", "KOH_0.1N-261205.5-1", "KOH_0.1N-2612050-1"):
            add_batch(s, code)
        s.flush()
        assert next_code(s, Batch, "KOH_0.1N-261205") == "KOH_0.1N-261205-1"
        add_batch(s, "KOH_0.1N-261205-1")
        s.flush()
        assert next_code(s, Batch, "KOH_0.1N-261205") == "KOH_0.1N-261205-2"
