"""Many benches writing to one PostgreSQL lab at once, through the services.

    python tests/benchmarks/load_bench.py [--benches 1,4,16] [--reviews 0,0.06]
                                          [--pace 0,300] [--latency 0,5] [--seconds 20]
                                          [--url SERVER_URL]

Without ``--url`` it starts its own throwaway PostgreSQL server (tests/benchmarks/
pg_throwaway.py, as .ci/run does) with a real collation (C.UTF-8) and removes it at the
end. For each configuration (number of benches x share of signed reviews) it makes a
fresh lab database, then runs one process per bench for ``--seconds`` with a bench's
mix of work: uses of its own batch (most), standardizations of it,
new batches and, at the given share, a signed review (Argon2 passphrase check at the
default cost) of a run another person recorded. Each bench writes as fast as it can
(``--pace 0``: the lab's throughput), or at a given pace, writes a minute a bench, the
arrivals at random (a Poisson process) whether or not the last write has returned, each
timed from when it was due, so a write that waited for the one before counts its wait
(``--pace 300``: how long a person waits while the lab is busy but not saturated). Run
flat out, N benches each always waiting for one write keep N writes in flight, so the
mean time of a write is N over the throughput (Little's law): at 16 benches a
machine doing 160 writes/s gives a mean of 100 ms, whatever the code, and only a paced
run tells how long a write takes below saturation. ``--latency MS`` puts a slow link
between the benches and the server (slow_link.py: every byte delivered MS later, each
way), as when the server is in another building or behind a VPN: a write that holds the
lab while it waits for round trips then shows. It prints, per configuration, the
throughput of acknowledged writes and p50/p95/p99/max of the plain writes (everything
but reviews) and of the reviews, and how long a write holds the lab-wide writer lock
(from the lock granted to the commit done), exclusively (writes/s of those can never
pass one over its mean) and shared (uses, which overlap),
beside the figures measured before this work. Then it checks that every write a bench
was told had succeeded is in the database and that `audit verify` passes. Not part of
the test suite.
"""

from __future__ import annotations

import argparse
import multiprocessing as mp
import os
import random
import sys
import time
import uuid
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

if __name__ == "__main__":  # run as a script: the repository's own prepbook
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

ADMIN = "olga"
REVIEWERS = ("pavel", "rosa", "sten")
# Invented users of a throwaway database; a passphrase may not contain its user's
# name (the passphrase policy), so the name is in it as hex digits.
PASSPHRASE = "load-bench-passphrase-{hex}"
# Each bench's batch: large enough that one bench alone cannot empty it in a minute (a
# standardization draws about 120 mL); 20 L ran dry after about 10 s, and every use
# after that was refused, which counted as a slow bench.
BATCH_ML = "500000"
# Measured before this work (the figures), for the side-by-side table.
BEFORE = {(16, 0.0): "135 writes/s", (16, 0.06): "64 writes/s; use p95 163 ms, p99 820 ms, "
          "max 2.2 s"}
TARGET = ("16 benches, 6 % reviews: plain p99 <= 100 ms, none over 500 ms; throughput (flat "
          "out) 1.5x before: 203 writes/s without reviews, 96 with")


def passphrase(name: str) -> str:
    return PASSPHRASE.format(hex=name.encode().hex())


def technician(bench: int) -> str:
    return f"tech{bench:02d}"


@dataclass
class BenchLog:
    bench: int
    times: dict[str, list[float]] = field(default_factory=dict)
    acked: dict[str, list[str]] = field(default_factory=dict)
    refused: int = 0
    crashed: str | None = None  # a bench that stopped on an unexpected error says so
    cpu_s: float = 0.0  # processor time the bench process spent in the timed work
    # (shared, seconds) of each write: the writer lock from granted to commit done
    held: list[tuple[bool, float]] = field(default_factory=list)


def watch_the_lock(db: Any, held: list[tuple[bool, float]]) -> None:
    """Note in ``held`` how long each write transaction of ``db`` holds the writer lock,
    and whether in shared mode (a use): from the advisory lock granted (its statement
    returned) to the commit (or rollback) done, when PostgreSQL releases it. A bench
    process has this one database."""
    from sqlalchemy import event
    from sqlalchemy.orm import Session

    granted: list[tuple[bool, float]] = []

    def after(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        if "pg_advisory_xact_lock" in statement and not granted:
            granted.append(("_shared" in statement, time.perf_counter()))

    def ended(_session: Any, *_args: Any) -> None:
        if granted:
            shared, began = granted.pop()
            held.append((shared, time.perf_counter() - began))

    event.listen(db.engine, "after_cursor_execute", after)
    event.listen(Session, "after_commit", ended)
    event.listen(Session, "after_rollback", ended)


def _readings(rng: random.Random) -> list[str]:
    # KHP (204.22 g/mol) against about 0.1 N NaOH: mass g : titrant mL, invented; spread
    # +-0.1 %, so the replicates stay within the RSD limit a review checks (0.2 %).
    out = []
    for _ in range(3):
        mass = rng.uniform(0.78, 0.84)
        out.append(f"{mass:.4f}:{mass / 0.20422 / 0.1 * rng.uniform(0.999, 1.001):.2f}")
    return out


def set_up_lab(url: str, benches: int) -> dict[str, str]:
    """A fresh lab: users, a lot, instruments, and one batch in service per bench."""
    from prepbook.lab import batches, instruments, lots, people, reviews, runs, setup
    from prepbook.lab.database import open_database

    setup.initialize(url, actor=ADMIN)
    db = open_database(url)
    people.add_user(db, actor=ADMIN, name=ADMIN, role="admin", passphrase=passphrase(ADMIN),
                    actor_passphrase=None)
    for name in REVIEWERS:
        people.add_user(db, actor=ADMIN, name=name, role="reviewer",
                        passphrase=passphrase(name), actor_passphrase=passphrase(ADMIN))
    for b in range(benches):
        people.add_user(db, actor=ADMIN, name=technician(b), role="technician",
                        passphrase=passphrase(technician(b)), actor_passphrase=passphrase(ADMIN))
    lots.add_lot(db, actor=ADMIN, material="KHP", code="LB-KHP-1", purity="99.95",
                 purity_u="0.05", expires="2099-12-31", certificate="invented", dried=None)
    instruments.add_instrument(db, actor=ADMIN, code="LB-BAL", kind="balance", due="2099-12-31",
                               capacity="220", tolerance="0.0002", readability="0.0001")
    instruments.add_instrument(db, actor=ADMIN, code="LB-BUR", kind="burette", due="2099-12-31",
                               capacity="50", tolerance="0.05", readability="0.01")
    rng = random.Random(1)
    mine = {}
    for b in range(benches):
        made = batches.make_batch(db, actor=technician(b), spec="NaOH-0.1N", volume=BATCH_ML,
                                  solute_mass="80.0")
        run = runs.standardize(db, actor=technician(b), batch=made.batch,
                               replicates=_readings(rng), lot="LB-KHP-1", balance="LB-BAL",
                               burette="LB-BUR", temperature="20")
        reviews.review(db, actor=REVIEWERS[0], run=str(run.run), accept=True, reason=None,
                       passphrase=passphrase(REVIEWERS[0]))
        mine[technician(b)] = made.batch
    return mine


def bench(url: str, number: int, batch: str, seconds: float, review_share: float,
          pace: float, ready: Any, out: Any) -> None:
    from prepbook.lab.database import open_database

    db = open_database(url)
    rng = random.Random(number)
    log = BenchLog(bench=number)
    me = technician(number)
    reviewer = REVIEWERS[number % len(REVIEWERS)]
    # Warm up as a bench that has been open a while: modules imported (a computation
    # previewed, not recorded: what it imports stays imported), catalog read, a
    # connection in the pool. Only then the clock starts.
    from prepbook.catalog import loader
    from prepbook.lab import reviews, runs

    loader.find_spec("NaOH-0.1N")
    runs.standardize(db, actor=me, batch=batch, replicates=_readings(random.Random(0)),
                     lot="LB-KHP-1", balance="LB-BAL", burette="LB-BUR", temperature="20",
                     record=False)
    reviews.runs_awaiting_review(db)
    ready.wait()  # every bench warmed up: all start together, however long that took
    watch_the_lock(db, log.held)
    began = time.process_time()
    try:
        _work(db, rng, log, me, reviewer, batch, time.time() + seconds, review_share, pace)
    except Exception as exc:  # reported in the table, never hidden
        log.crashed = f"{type(exc).__name__}: {exc}"
    log.cpu_s = time.process_time() - began
    out.put(log)


def _work(db: Any, rng: random.Random, log: BenchLog, me: str, reviewer: str, batch: str,
          end: float, review_share: float, pace: float) -> None:
    """Write until ``end``: flat out, or (``pace`` writes a minute) each write timed from
    when it was due, the gaps between them drawn from an exponential distribution of
    their own random stream, so the mix of work is the same either way."""
    from prepbook.errors import PrepbookError
    from prepbook.lab import batches, reviews, runs

    number = log.bench
    arrivals = random.Random(10_000 + number)
    due = time.perf_counter()
    i = 0
    while time.time() < end:
        i += 1
        roll = rng.random()
        kind = ("review" if roll < review_share else
                "standardize" if roll < review_share + 0.12 else
                "make" if roll < review_share + 0.18 else "use")
        if pace:
            due += arrivals.expovariate(pace / 60)
            wait = due - time.perf_counter()
            if wait > 0:
                time.sleep(wait)
            began = due  # a write that is late because of the one before counts its wait
        else:
            began = time.perf_counter()
        try:
            if kind == "use":
                tag = f"load {number}-{i} {uuid.uuid4().hex[:6]}"
                batches.use_batch(db, actor=me, code=batch, volume="1", purpose=tag)
                ack = tag
            elif kind == "standardize":
                ack = str(runs.standardize(db, actor=me, batch=batch, replicates=_readings(rng),
                                           lot="LB-KHP-1", balance="LB-BAL", burette="LB-BUR",
                                           temperature="20").run)
            elif kind == "make":
                ack = batches.make_batch(db, actor=me, spec="NaOH-0.1N", volume="1000",
                                         solute_mass="4.0").batch
            else:
                waiting = [q for q in reviews.runs_awaiting_review(db)
                           if q.analyst != reviewer]
                if not waiting:
                    continue
                target = rng.choice(waiting).run
                reviews.review(db, actor=reviewer, run=target, accept=True, reason=None,
                               passphrase=passphrase(reviewer))
                ack = target
        except PrepbookError:
            log.refused += 1  # e.g. two reviewers took the same run: refused, not lost
            continue
        log.times.setdefault(kind, []).append(time.perf_counter() - began)
        log.acked.setdefault(kind, []).append(ack)


def percentile(values: list[float], p: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, round(p / 100 * (len(ordered) - 1)))]


def check_everything_acknowledged_is_there(url: str, logs: list[BenchLog]) -> str:
    from sqlalchemy import select

    from prepbook.lab import auditing
    from prepbook.lab.database import open_database
    from prepbook.store.models import Batch, Review, Run, Use

    db = open_database(url)
    with db.session(write=False) as s:
        purposes = set(s.scalars(select(Use.purpose)))
        run_codes = set(s.scalars(select(Run.code)))
        batch_codes = set(s.scalars(select(Batch.code)))
        reviewed = set(s.scalars(select(Run.code).join(Review, Review.run_id == Run.id)))
    missing = 0
    for log in logs:
        missing += sum(a not in purposes for a in log.acked.get("use", []))
        missing += sum(a not in run_codes for a in log.acked.get("standardize", []))
        missing += sum(a not in batch_codes for a in log.acked.get("make", []))
        missing += sum(a not in reviewed for a in log.acked.get("review", []))
    report = auditing.verify(db)
    return (f"acknowledged writes missing: {missing}; audit verify: "
            f"{'ok' if report.ok else 'FAILED ' + '; '.join(report.problems[:3])} "
            f"({report.events} events)")


def run_configuration(server: str, benches: int, review_share: float, seconds: float,
                      pace: float = 0.0, latency_ms: float = 0.0) -> None:
    from sqlalchemy import create_engine, text
    from sqlalchemy.engine import make_url
    from sqlalchemy.pool import NullPool

    name = f"load_{benches}_{round(review_share * 100)}_{round(pace)}_{uuid.uuid4().hex[:6]}"
    admin = create_engine(server, isolation_level="AUTOCOMMIT", poolclass=NullPool)
    with admin.connect() as conn:
        conn.execute(text(f'CREATE DATABASE "{name}"'))
    admin.dispose()
    url = make_url(server).set(database=name).render_as_string(hide_password=False)
    mine = set_up_lab(url, benches)
    if latency_ms:
        from tests.benchmarks.slow_link import SlowLink

        there = make_url(url)
        with SlowLink(there.host or "127.0.0.1", there.port or 5432, latency_ms / 1000) as link:
            far = there.set(host="127.0.0.1", port=link.port).render_as_string(
                hide_password=False)
            logs = _run_benches(far, benches, mine, seconds, review_share, pace)
    else:
        logs = _run_benches(url, benches, mine, seconds, review_share, pace)
    _report(url, logs, benches, review_share, seconds, pace, latency_ms)


def _run_benches(url: str, benches: int, mine: dict[str, str], seconds: float,
                 review_share: float, pace: float) -> list[BenchLog]:
    ctx = mp.get_context("spawn")
    out = ctx.Queue()
    # The clock starts when every process has imported and connected (on a busy machine
    # that takes far longer than on an idle one).
    ready = ctx.Barrier(benches + 1)
    procs = [ctx.Process(target=bench, args=(url, b, mine[technician(b)], seconds,
                                             review_share, pace, ready, out))
             for b in range(benches)]
    for p in procs:
        p.start()
    ready.wait(timeout=600)
    logs = [out.get(timeout=seconds + 600) for _ in procs]
    for p in procs:
        p.join()
    return logs


def _report(url: str, logs: list[BenchLog], benches: int, review_share: float, seconds: float,
            pace: float, latency_ms: float) -> None:
    plain = [t for log in logs for k, ts in log.times.items() if k != "review" for t in ts]
    signed = [t for log in logs for t in log.times.get("review", [])]
    writes = len(plain) + len(signed)
    how = (f"paced at {pace:g} writes/min a bench (offered {benches * pace / 60:.1f} writes/s)"
           if pace else "flat out")
    if latency_ms:
        how += f", {latency_ms:g} ms each way to the server"
    line = (f"{benches:>3} benches, {review_share * 100:>3.0f} % reviews, {how}: "
            f"{writes / seconds:7.1f} writes/s; plain writes n={len(plain)} "
            f"p50 {percentile(plain, 50) * 1000:.1f} ms, p95 {percentile(plain, 95) * 1000:.1f}, "
            f"p99 {percentile(plain, 99) * 1000:.1f}, max {max(plain) * 1000:.0f} ms")
    if signed:
        line += (f"; reviews n={len(signed)} p50 {percentile(signed, 50) * 1000:.0f} ms, "
                 f"max {max(signed) * 1000:.0f} ms")
    # On one machine the benches, the server and anything else running share the
    # processors; in a lab each bench is its own computer.
    cpu = sum(log.cpu_s for log in logs)
    line += (f"; bench processes' processor time {cpu / max(writes, 1) * 1000:.1f} ms a write"
             f" (load average {os.getloadavg()[0]:.1f})")
    for shared, name in ((False, "exclusive"), (True, "shared")):
        held = [t for log in logs for mode, t in log.held if mode is shared]
        if held:
            # Held exclusively, the lab waits: those writes/s can never pass 1 / mean.
            # Shared holds overlap (uses of different batches), waits for their batch
            # and the audit head included.
            line += (f"; writer lock held {name} n={len(held)} p50 "
                     f"{percentile(held, 50) * 1000:.1f} ms, mean "
                     f"{sum(held) / len(held) * 1000:.1f}, p99 "
                     f"{percentile(held, 99) * 1000:.1f}, max {max(held) * 1000:.0f} ms")
    refused = sum(log.refused for log in logs)
    print(line + (f"; refused {refused}" if refused else ""))
    for log in logs:
        if log.crashed:
            print(f"      bench {log.bench} STOPPED: {log.crashed}")
    uses = [t for log in logs for t in log.times.get("use", [])]
    if uses:
        print(f"      use: p50 {percentile(uses, 50) * 1000:.1f} ms, "
              f"p95 {percentile(uses, 95) * 1000:.1f}, p99 {percentile(uses, 99) * 1000:.1f}, "
              f"max {max(uses) * 1000:.0f} ms")
    before = BEFORE.get((benches, review_share))
    if before and not pace and not latency_ms:
        print(f"      before (the issue's figures, measured under other conditions): {before}")
    print("      " + check_everything_acknowledged_is_there(url, logs))


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--benches", default="1,4,16")
    parser.add_argument("--reviews", default="0,0.06")
    parser.add_argument("--pace", default="0",
                        help="writes a minute a bench, comma-separated; 0: flat out")
    parser.add_argument("--latency", default="0",
                        help="ms each way between the benches and the server, comma-separated")
    parser.add_argument("--seconds", type=float, default=20.0)
    parser.add_argument("--url", help="a PostgreSQL server URL whose user may create databases")
    parser.add_argument("--locale", default="C.UTF-8")
    args = parser.parse_args()
    configs = [(int(b), float(r), float(p), float(ms)) for b in args.benches.split(",")
               for r in args.reviews.split(",") for p in args.pace.split(",")
               for ms in args.latency.split(",")]
    print(f"target: {TARGET}")
    if args.url:
        for b, r, p, ms in configs:
            run_configuration(args.url, b, r, args.seconds, p, ms)
        return
    from tests.benchmarks.pg_throwaway import throwaway_server

    with throwaway_server(locale=args.locale) as server:
        for b, r, p, ms in configs:
            run_configuration(server, b, r, args.seconds, p, ms)


if __name__ == "__main__":
    main()
