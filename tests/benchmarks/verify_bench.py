"""`audit verify` against a bare loop of sqlite3 + json.dumps + hashlib on the same file.

    python tests/benchmarks/verify_bench.py PATH/TO/lab.db

The bare loop reads every event with the sqlite3 module, writes the hashed text of
its fields with json (an encoder built once) and hashes it with ``hashlib``: the least
any check of the chain can cost (the same loop as ``bench.py``). prepbook's ``verify``
does that and also checks the links, the head and every audited row against its last
event, so the bare loop it is measured against also reads every audited row and writes
it as JSON. ``verify`` also holds the trail against the checkpoints in the database
and in the witness folder named by PREPBOOK_WITNESS_FOLDER, when set. Not a timed
test: it prints the figures (the target is verify at most 1.5x the bare loop over the
same rows; the ratio to the events alone is printed too).
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
import sys
import time
from pathlib import Path
from typing import Any


def bare_loop(db_path: Path) -> int:
    """Hash every event of the file the plainest fast way; the number that match."""
    dumps = json.JSONEncoder(separators=(",", ":"), ensure_ascii=False).encode
    con = sqlite3.connect(f"file:{db_path}?mode=ro", uri=True)
    try:
        cursor = con.execute(
            'SELECT seq, at, actor, action, record_type, record_id, "values", reason,'
            " performed_at, prev_hash, hash, os_login, host, key_id FROM audit_events"
            " ORDER BY seq")
        matched = 0
        for (seq, at, actor, action, rtype, rid, values, reason, pat, prev, stored, login,
             host, key_id) in cursor:
            at = at.replace(" ", "T")
            pat = pat.replace(" ", "T") if pat else None
            fields = [seq, at, actor, action, rtype, rid, values, reason, pat, prev]
            if login is not None or host is not None or key_id is not None:
                fields += [login, host, key_id]
            text = dumps(fields)
            matched += stored == "sha256:" + hashlib.sha256(text.encode()).hexdigest()
        return matched
    finally:
        con.close()


def bare_rows_loop(db_path: Path) -> int:
    """Write every row of every audited table as JSON the plainest fast way; their number.

    ``verify`` compares each current row with its last event's snapshot, so the least
    any check of the rows can cost is reading them all and writing each as JSON.
    """
    from prepbook.store.models import AUDITED_TABLES

    dumps = json.JSONEncoder(separators=(",", ":"), ensure_ascii=False).encode
    con = sqlite3.connect(f"file:{db_path}?mode=ro", uri=True)
    try:
        rows = 0
        for name in AUDITED_TABLES:
            for row in con.execute(f'SELECT * FROM "{name}" ORDER BY id'):  # noqa: S608
                rows += bool(dumps(row))
        return rows
    finally:
        con.close()


def prepbook_verify(db_path: Path) -> Any:
    """prepbook's own ``audit verify`` through the service the command calls."""
    from prepbook.lab import auditing
    from prepbook.lab.database import open_database

    db = open_database(str(db_path))
    try:
        return auditing.verify(db)
    finally:
        db.dispose()


def _best_of(runs: int, work: Any) -> tuple[float, Any]:
    best, result = float("inf"), None
    for _ in range(runs):
        started = time.perf_counter()
        result = work()
        best = min(best, time.perf_counter() - started)
    return best, result


def measure(db_path: str | Path, runs: int = 3) -> dict[str, Any]:
    """Best-of-``runs`` seconds of the bare loops and of verify on the same file.

    ``ratio`` is verify against the bare loop over what verify reads (every event and
    every audited row); ``ratio_events`` against the events alone.
    """
    path = Path(db_path)
    events_s, matched = _best_of(runs, lambda: bare_loop(path))
    rows_s, rows = _best_of(runs, lambda: bare_rows_loop(path))
    verify_s, report = _best_of(runs, lambda: prepbook_verify(path))
    return {
        "events": report.events,
        "events_matched_by_bare_loop": matched,
        "rows": rows,
        "bare_events_s": round(events_s, 3),
        "bare_s": round(events_s + rows_s, 3),
        "verify_s": round(verify_s, 3),
        "ratio_events": round(verify_s / events_s, 2),
        "ratio": round(verify_s / (events_s + rows_s), 2),
        "verify_ok": report.ok,
    }


if __name__ == "__main__":
    if len(sys.argv) != 2:
        sys.exit("usage: python tests/benchmarks/verify_bench.py PATH/TO/lab.db")
    print(json.dumps(measure(sys.argv[1]), indent=2))
