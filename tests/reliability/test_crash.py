"""A bench killed at any instant leaves the whole record or none of it (issue 6).

A child process makes batches, standardizes them and uses a batch in service in a
loop, printing (on a pipe) each write once its service has returned. The test
kills it with SIGKILL at a random instant, again and again, then checks: every
printed write is there; no run lacks a replicate and no row lacks its audit event
(`audit verify` compares every row with its last event); the database opens and,
on SQLite, passes `PRAGMA integrity_check`.

Bounded: 30 kills, each child alive 0.02-0.5 s after it is ready; about 30 s.
"""

from __future__ import annotations

import random
import sqlite3
import sys
import time
from pathlib import Path

import pytest

from tests.reliability.lab import (
    REPS,
    build_lab,
    crash_worker,
    inventory,
    process_context,
    read_lines,
)

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="SIGKILL is POSIX only")

KILLS = 30
TIME_LIMIT_S = 90


def test_killed_benches_leave_whole_records(backend: str) -> None:
    in_service = build_lab(backend)
    before = inventory(backend)
    ctx = process_context()
    rng = random.Random(20261130)  # reproducible instants; the OS adds its own jitter
    deadline = time.monotonic() + TIME_LIMIT_S
    printed: list[str] = []
    for kill in range(KILLS):
        assert time.monotonic() < deadline, f"time limit reached after {kill} kills"
        read_end, write_end = ctx.Pipe(duplex=False)
        proc = ctx.Process(target=crash_worker, args=(backend, "ben", in_service, write_end))
        proc.start()
        write_end.close()
        fd = read_end.fileno()
        ready, rest = read_lines_until(fd, "ready", deadline)
        time.sleep(rng.uniform(0.02, 0.5))
        proc.kill()  # SIGKILL: no cleanup, no rollback by the child
        proc.join(10)
        assert proc.exitcode == -9, proc.exitcode
        lines = ready + read_lines(fd, deadline, rest)
        read_end.close()
        assert not [line for line in lines if line.startswith("error")], lines
        printed += [line for line in lines if line != "ready"]

    after = inventory(backend)
    batches = {line.split(" ", 1)[1] for line in printed if line.startswith("batch ")}
    runs = {line.split(" ", 1)[1] for line in printed if line.startswith("run ")}
    uses = {line.split(" ", 1)[1] for line in printed if line.startswith("use ")}
    assert runs, "no write finished before the kills: the test proved nothing"
    assert batches <= set(after["batches"])
    assert runs <= set(after["runs"])
    assert uses <= set(after["uses"])
    # Nothing beyond the one write each kill may have cut short after its commit
    # but before its line was printed.
    assert len(after["batches"]) - len(before["batches"]) - len(batches) <= KILLS
    assert all(n == len(REPS) for n in after["replicates"].values()), after["replicates"]
    assert after["verify"].ok is True, after["verify"].problems
    if "://" not in backend:
        con = sqlite3.connect(Path(backend))
        try:
            assert con.execute("PRAGMA integrity_check").fetchall() == [("ok",)]
        finally:
            con.close()


def read_lines_until(fd: int, wanted: str, deadline: float) -> tuple[list[str], bytes]:
    """Whole lines from the child up to and including ``wanted`` (its start-up
    signal), and the bytes read past the last whole line."""
    import os
    import select

    data = b""
    while (wanted + "\n").encode() not in data:
        remaining = deadline - time.monotonic()
        assert remaining > 0, "the child never said it was ready"
        ready, _, _ = select.select([fd], [], [], remaining)
        chunk = os.read(fd, 65536) if ready else b""
        assert chunk, "the child ended before it was ready"
        data += chunk
    whole, _, rest = data.rpartition(b"\n")
    return whole.decode().split("\n"), rest
