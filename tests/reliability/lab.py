"""A small invented lab built through the services, and the bench work the
reliability tests run in child processes (importable, so a forkserver child can
run it with everything already imported).

Every acknowledged write is reported to the parent on a pipe *after* the
service has returned, that is after its transaction committed: a line the
parent received is a write the bench was told is recorded.
"""

from __future__ import annotations

import os
import sys
from datetime import UTC, datetime, timedelta
from typing import Any

# Invented readings (KHP against about 0.1 N NaOH); the checks they pass or fail
# do not matter here, only that each run is recorded whole.
REPS = ["0.8085:39.16", "0.8116:39.29", "0.8596:41.67"]
TECHNICIANS = ("ben", "dora", "emil", "fay")
PASSPHRASE = "{}-passphrase"
PRELOAD = [
    "prepbook.lab.setup", "prepbook.lab.batches", "prepbook.lab.runs", "prepbook.lab.board",
    "prepbook.lab.people", "prepbook.lab.auditing", "prepbook.store.retry",
    "prepbook.chem.standardization", "prepbook.chem.uncertainty", "prepbook.catalog.loader",
    "numpy", "scipy.stats", "scipy.optimize", "periodictable", "uncertainties",
    "tests.reliability.lab", "tests.reliability._preload",
]


def _day(n: int) -> str:
    return (datetime.now(UTC).date() + timedelta(days=n)).isoformat()


def _add_users(db: object) -> None:
    """The lab's invented users. Their passphrases ("ben-passphrase") contain their names,
    which the lab's default policy refuses: the rule is lifted while they are added, as
    tests/conftest.py lifts it for each test (a module fixture runs before that)."""
    import msgspec
    import pytest

    from prepbook.lab import people, settings

    with pytest.MonkeyPatch.context() as mp:
        mp.setitem(settings.KNOWN, "passphrase_name_rule", msgspec.structs.replace(
            settings.KNOWN["passphrase_name_rule"], default="off"))
        people.add_user(db, actor="ada", name="ada", role="admin",  # type: ignore[arg-type]
                        passphrase=PASSPHRASE.format("ada"), actor_passphrase=None)
        for name, role in [("cleo", "reviewer"), *((t, "technician") for t in TECHNICIANS)]:
            people.add_user(db, actor="ada", name=name, role=role,  # type: ignore[arg-type]
                            passphrase=PASSPHRASE.format(name),
                            actor_passphrase=PASSPHRASE.format("ada"))


def build_lab(target: str) -> str:
    """Users, a KHP lot, instruments and one batch in service; returns that batch's code."""
    from prepbook.lab import batches, instruments, lots, runs, setup
    from prepbook.store.engine import open_database

    setup.initialize(target, actor="ada")
    db = open_database(target)
    try:
        _add_users(db)
        lots.add_lot(db, actor="ben", material="KHP", code="KHP-0001", purity="99.98",
                     purity_u="0.05", expires=_day(900), certificate=None, dried=_day(-1))
        instruments.add_instrument(db, actor="ben", code="BAL-1", kind="balance",
                                   due=_day(400), capacity=None, tolerance="0.0002",
                                   readability="0.0001")
        instruments.add_instrument(db, actor="ben", code="BUR-1", kind="burette",
                                   due=_day(400), capacity="50", tolerance="0.05",
                                   readability=None)
        # A 20 L carboy: the benches draw from it round after round (what remains is kept).
        made = batches.make_batch(db, actor="ben", spec="NaOH-0.1N", volume="20000",
                                  solute_mass="82", balance="BAL-1")
        run = runs.standardize(db, actor="ben", batch=made.batch, replicates=REPS,
                               lot="KHP-0001", balance="BAL-1", burette="BUR-1",
                               temperature="21.0")
        runs.review(db, actor="cleo", run=run.run, accept=True, reason=None,
                    passphrase=PASSPHRASE.format("cleo"))
        return made.batch
    finally:
        db.dispose()


def bench_cycle(db: Any, actor: str, in_service: str, token: str) -> None:
    """One round of bench work, each write acknowledged as a ``KIND CODE`` line once
    its service returned: make a batch, standardize it (three replicates), and use
    the batch in service (the use is known by its purpose, ``token``)."""
    from prepbook.lab import batches, runs
    from prepbook.store import retry

    made = retry.call(batches.make_batch, db, actor=actor, spec="NaOH-0.1N", volume="1000",
                      solute_mass="4.1", balance="BAL-1", notes=token)
    acknowledge(f"batch {made.batch}")
    run = retry.call(runs.standardize, db, actor=actor, batch=made.batch, replicates=REPS,
                     lot="KHP-0001", balance="BAL-1", burette="BUR-1", temperature="21.0")
    acknowledge(f"run {run.run}")
    retry.call(batches.use_batch, db, actor=actor, code=in_service, volume="25",
               purpose=token)
    acknowledge(f"use {token}")


_REPORT_FD: int | None = None


def acknowledge(line: str) -> None:
    """Tell the parent about one acknowledged write (one atomic pipe write)."""
    if _REPORT_FD is not None:
        data = (line + "\n").encode()
        assert len(data) < 512  # below PIPE_BUF: the write is atomic
        os.write(_REPORT_FD, data)


def bench_worker(target: str, actor: str, in_service: str, rounds: int, go: Any,
                 report: Any) -> None:
    """A bench in a child process: wait for the start signal, then ``rounds`` cycles.

    ``report`` is the write end of a multiprocessing pipe; lines go through its
    file descriptor so a kill can never leave half a line behind.
    """
    global _REPORT_FD
    from prepbook.store.engine import open_database

    _REPORT_FD = report.fileno()
    db = open_database(target)
    try:
        go.wait(60)
        for i in range(rounds):
            bench_cycle(db, actor, in_service, f"{actor}-{os.getpid()}-{i}")
    except BaseException as exc:  # reported to the parent, which fails the test
        acknowledge(f"error {type(exc).__name__}: {' '.join(str(exc).split())[:300]}")
        raise
    finally:
        db.dispose()
        report.close()
        sys.stdout.flush()


def warm_up(db: Any, actor: str, in_service: str) -> None:
    """Everything a bench cycle loads on first use (catalog, lazy imports), without
    writing: a standardization computed with ``record=False``."""
    from prepbook.lab import board, runs

    runs.standardize(db, actor=actor, batch=in_service, replicates=REPS, lot="KHP-0001",
                     balance="BAL-1", burette="BUR-1", temperature="21.0", record=False)
    board.board(db)


def crash_worker(target: str, actor: str, in_service: str, report: Any) -> None:
    """Bench work without end, until the parent kills the process (SIGKILL)."""
    global _REPORT_FD
    from prepbook.store.engine import open_database

    _REPORT_FD = report.fileno()
    db = open_database(target)
    warm_up(db, actor, in_service)
    acknowledge("ready")
    i = 0
    while True:
        bench_cycle(db, actor, in_service, f"{actor}-{os.getpid()}-{i}")
        i += 1


def inventory(target: str) -> dict[str, Any]:
    """What the database holds, read back through plain queries, and `audit verify`."""
    from sqlalchemy import func, select

    from prepbook.lab import auditing
    from prepbook.store.engine import open_database
    from prepbook.store.models import AuditEvent, Batch, Replicate, Run, Use

    db = open_database(target)
    try:
        with db.session(write=False) as s:
            batch_codes = list(s.scalars(select(Batch.code)))
            run_codes = list(s.scalars(select(Run.code)))
            replicates = dict(s.execute(
                select(Run.code, func.count(Replicate.id))
                .outerjoin(Replicate, Replicate.run_id == Run.id)
                .group_by(Run.code)).all())
            purposes = [p for p in s.scalars(select(Use.purpose)) if p is not None]
            events = s.scalar(select(func.count()).select_from(AuditEvent))
        verify = auditing.verify(db)
    finally:
        db.dispose()
    return {"batches": batch_codes, "runs": run_codes, "replicates": replicates,
            "uses": purposes, "events": events, "verify": verify}


def process_context() -> Any:
    """Child processes that start with prepbook already imported (forkserver), where
    the platform has it; spawn elsewhere."""
    import multiprocessing

    if "forkserver" in multiprocessing.get_all_start_methods():
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(PRELOAD)
        return ctx
    return multiprocessing.get_context("spawn")


def read_lines(fd: int, deadline: float, data: bytes = b"") -> list[str]:
    """Every complete line from a pipe until its writers are gone (or the deadline),
    after ``data`` already read; a line cut short by a kill is not one."""
    import select as io_select
    import time

    while time.monotonic() < deadline:
        ready, _, _ = io_select.select([fd], [], [], max(0.0, deadline - time.monotonic()))
        if not ready:
            break
        chunk = os.read(fd, 65536)
        if not chunk:
            break
        data += chunk
    whole, _, _partial = data.rpartition(b"\n")
    return whole.decode().split("\n") if whole else []
