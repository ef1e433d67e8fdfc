"""Benches writing at once lose nothing (issue 6).

Four processes (one per technician) are released together and each makes
batches, standardizes them and uses the batch in service on one database.
Afterwards every write a bench was told is recorded is there, no code was
handed out twice, every run holds its three replicates and the audit chain
verifies. Writers queue: on SQLite with WAL, BEGIN IMMEDIATE and a busy timeout;
on PostgreSQL on one transaction-scoped advisory lock, so two transactions never
compute the same next code (prepbook.store.retry reruns a write that still
collides rather than losing it).

Bounded: 4 processes x 8 rounds x 3 writes, 120 s at most.
"""

from __future__ import annotations

import sys
import time
from collections import Counter

import pytest

from tests.reliability.lab import (
    REPS,
    TECHNICIANS,
    bench_worker,
    build_lab,
    inventory,
    process_context,
    read_lines,
)

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="POSIX pipes and processes")

ROUNDS = 8
TIME_LIMIT_S = 120


def test_benches_writing_at_once_lose_nothing(backend: str) -> None:
    in_service = build_lab(backend)
    before = inventory(backend)
    ctx = process_context()
    go = ctx.Event()
    benches = []
    for actor in TECHNICIANS:
        read_end, write_end = ctx.Pipe(duplex=False)
        proc = ctx.Process(target=bench_worker,
                           args=(backend, actor, in_service, ROUNDS, go, write_end))
        proc.start()
        write_end.close()  # the child holds the only write end: EOF when it is done
        benches.append((proc, read_end))
    go.set()
    deadline = time.monotonic() + TIME_LIMIT_S
    acknowledged: list[str] = []
    for proc, read_end in benches:
        acknowledged += read_lines(read_end.fileno(), deadline)
        proc.join(max(0.0, deadline - time.monotonic()))
        read_end.close()
    for proc, _ in benches:
        if proc.is_alive():  # pragma: no cover - only on a hang
            proc.kill()
            proc.join()
    errors = [line for line in acknowledged if line.startswith("error")]
    assert errors == []
    assert [proc.exitcode for proc, _ in benches] == [0] * len(TECHNICIANS)

    kinds = Counter(line.split(" ", 1)[0] for line in acknowledged)
    assert kinds == {"batch": len(TECHNICIANS) * ROUNDS, "run": len(TECHNICIANS) * ROUNDS,
                     "use": len(TECHNICIANS) * ROUNDS}
    batches = [line.split(" ", 1)[1] for line in acknowledged if line.startswith("batch ")]
    runs = [line.split(" ", 1)[1] for line in acknowledged if line.startswith("run ")]
    uses = [line.split(" ", 1)[1] for line in acknowledged if line.startswith("use ")]
    # No code was handed to two benches.
    assert len(set(batches)) == len(batches) and len(set(runs)) == len(runs)

    after = inventory(backend)
    assert set(batches) <= set(after["batches"])
    assert set(runs) <= set(after["runs"])
    assert sorted(uses) == sorted(set(after["uses"]) - set(before["uses"]))
    # Exactly the acknowledged writes were added, nothing else, nothing twice.
    assert len(after["batches"]) == len(before["batches"]) + len(batches)
    assert len(after["runs"]) == len(before["runs"]) + len(runs)
    assert len(set(after["batches"])) == len(after["batches"])
    assert len(set(after["runs"])) == len(after["runs"])
    assert all(n == len(REPS) for n in after["replicates"].values()), after["replicates"]
    assert after["verify"].ok is True, after["verify"].problems
    # One event per row written: a batch, a run, its replicates and where each one's
    # readings came from, a use.
    per_round = 1 + 1 + 2 * len(REPS) + 1
    assert after["events"] == before["events"] + per_round * len(TECHNICIANS) * ROUNDS
