"""`audit verify` against a bare loop of sqlite3 + json.dumps + hashlib on the same file.

    python tests/benchmarks/verify_bench.py PATH/TO/lab.db [REPEATS]

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
import statistics
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


def measure(db_path: str | Path, runs: int = 3) -> dict[str, Any]:
    """Median seconds of the bare loops and of verify on the same file, interleaved.

    Each repeat runs the bare event loop, the bare row loop and verify one after the
    other (A B C A B C ...), so a machine shared with other work slows all three alike;
    the medians of ``runs`` repeats are compared. Wall time, and the process's CPU time
    (``_cpu``), which other processes on the machine disturb less. ``ratio`` is verify
    against the bare loop over what verify reads (every event and every audited row);
    ``ratio_events`` against the events alone.
    """
    path = Path(db_path)
    work = {"events": lambda: bare_loop(path), "rows": lambda: bare_rows_loop(path),
            "verify": lambda: prepbook_verify(path)}
    wall: dict[str, list[float]] = {name: [] for name in work}
    cpu: dict[str, list[float]] = {name: [] for name in work}
    results: dict[str, Any] = {}
    for _ in range(runs):
        for name, run in work.items():
            started, started_cpu = time.perf_counter(), time.process_time()
            results[name] = run()
            wall[name].append(time.perf_counter() - started)
            cpu[name].append(time.process_time() - started_cpu)
    w = {name: statistics.median(times) for name, times in wall.items()}
    c = {name: statistics.median(times) for name, times in cpu.items()}
    report = results["verify"]
    return {
        "events": report.events,
        "events_matched_by_bare_loop": results["events"],
        "rows": results["rows"],
        "repeats": runs,
        "bare_events_s": round(w["events"], 3),
        "bare_s": round(w["events"] + w["rows"], 3),
        "verify_s": round(w["verify"], 3),
        "ratio_events": round(w["verify"] / w["events"], 2),
        "ratio": round(w["verify"] / (w["events"] + w["rows"]), 2),
        "bare_cpu_s": round(c["events"] + c["rows"], 3),
        "verify_cpu_s": round(c["verify"], 3),
        "ratio_cpu": round(c["verify"] / (c["events"] + c["rows"]), 2),
        "verify_ok": report.ok,
    }


if __name__ == "__main__":
    if len(sys.argv) not in (2, 3):
        sys.exit("usage: python tests/benchmarks/verify_bench.py PATH/TO/lab.db [REPEATS]")
    print(json.dumps(measure(sys.argv[1], runs=int(sys.argv[2]) if len(sys.argv) > 2 else 3),
                     indent=2))
