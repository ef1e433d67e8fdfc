"""Uses of different batches are written side by side; nothing else is.

On PostgreSQL a use takes the lab-wide writer lock in shared mode and its batch's own
lock exclusively (``Database.hold_writer_lock``, ``hold_batch_lock``); every other write
takes the writer lock exclusively. The attacks and races written down here:

- two benches drawing the last millilitres of one batch at the same moment: each reads
  what is left only after the other has committed, so the batch is never overdrawn;
- a retirement (or any other write) landing in the middle of a use: it waits for the
  use to commit, and a use waits for it;
- the trail: events of uses written side by side still form one unbroken chain.

A second connection plays the write in flight: it takes the locks a use (or another
write) takes and holds them until the test lets go. SQLite has one writer at a time
whatever is asked, so these are PostgreSQL's (the suite's PostgreSQL pass runs them).
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from decimal import Decimal
from typing import Any

import pytest
from sqlalchemy import create_engine, text

from prepbook.errors import Refused
from prepbook.lab import auditing, batches, history, sessions
from prepbook.lab.database import open_database
from prepbook.store.engine import BATCH_LOCK_SPACE, WRITER_LOCK_KEY
from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli, on_postgres

pytestmark = pytest.mark.skipif(not on_postgres(),
                                reason="SQLite has one writer at a time whatever is asked")

WAIT_S = 1.0  # how long a write must stay blocked to count as waiting


@pytest.fixture
def db(bench: Cli) -> Iterator[Any]:  # noqa: F811
    """The lab of ``bench`` opened for the services, closed after the test."""
    opened = open_database(str(bench.db))
    try:
        yield opened
    finally:
        opened.dispose()


def _in_service(cli: Cli) -> str:
    batch = _make_batch(cli)
    run = _standardize(cli, batch)["run"]
    cli.ok("review", run, "--accept", "--passphrase-stdin", user="cleo",
           input="cleo-passphrase\n")
    return batch


@contextmanager
def _write_in_flight(url: str, *locks: tuple[str, dict[str, int]]) -> Iterator[None]:
    """Another bench's write holding ``locks`` (statement, parameters) until the block ends."""
    engine = create_engine(url)
    try:
        with engine.connect() as conn, conn.begin():
            for statement, params in locks:
                conn.execute(text(statement), params)
            yield
    finally:
        engine.dispose()


def _a_use_of(batch_id: int) -> tuple[tuple[str, dict[str, int]], ...]:
    return (("SELECT pg_advisory_xact_lock_shared(:key)", {"key": WRITER_LOCK_KEY}),
            ("SELECT pg_advisory_xact_lock(:space, :id)",
             {"space": BATCH_LOCK_SPACE, "id": batch_id}))


ANOTHER_WRITE = (("SELECT pg_advisory_xact_lock(:key)", {"key": WRITER_LOCK_KEY}),)


class _Started:
    """``work`` run in a thread: whether it has finished, and how."""

    def __init__(self, work: Callable[[], Any]) -> None:
        self.result: Any = None
        self.error: BaseException | None = None
        self.done = threading.Event()

        def run() -> None:
            try:
                self.result = work()
            except BaseException as exc:  # reported by the test
                self.error = exc
            finally:
                self.done.set()

        self.thread = threading.Thread(target=run, daemon=True)
        self.thread.start()

    def finished(self, within: float) -> bool:
        return self.done.wait(within)


def _batch_id(db: Any, code: str) -> int:
    with db.session(write=False) as s:
        return int(s.execute(text("SELECT id FROM batches WHERE code = :c"), {"c": code})
                   .scalar_one())


def _goes_beside(url: str, in_flight: tuple[tuple[str, dict[str, int]], ...],
                work: Callable[[], Any], what: str) -> None:
    """``work`` completes while another bench's write holds ``in_flight``."""
    with _write_in_flight(url, *in_flight):
        beside = _Started(work)
        assert beside.finished(30), f"{what} waited for the write in flight"
        assert beside.error is None, beside.error


def _waits_behind(url: str, in_flight: tuple[tuple[str, dict[str, int]], ...],
                  work: Callable[[], Any], what: str) -> None:
    """``work`` waits while another bench's write holds ``in_flight``, then completes."""
    with _write_in_flight(url, *in_flight):
        behind = _Started(work)
        assert not behind.finished(WAIT_S), f"{what} did not wait for the write in flight"
    assert behind.finished(30) and behind.error is None, behind.error


def _use(db: Any, code: str) -> Callable[[], Any]:
    return lambda: batches.use_batch(db, actor="ben", code=code, volume="5",
                                     purpose="alkalinity")


def test_a_use_of_another_batch_is_written_while_one_is_in_flight(
        bench: Cli, db: Any) -> None:  # noqa: F811
    first, second = _in_service(bench), _in_service(bench)
    url, use_of_first = str(bench.db), _a_use_of(_batch_id(db, first))
    _goes_beside(url, use_of_first, _use(db, second), "a use of another batch")
    _waits_behind(url, use_of_first, _use(db, first), "a use of the same batch")
    assert auditing.verify(db).ok


def test_any_other_write_waits_for_a_use_in_flight_and_a_use_for_it(
        bench: Cli, db: Any) -> None:  # noqa: F811
    batch, spare = _in_service(bench), _in_service(bench)
    url = str(bench.db)
    _waits_behind(url, _a_use_of(_batch_id(db, batch)), lambda: history.retire(
        db, actor="ben", code=spare, reason="used up", passphrase="ben-passphrase"),
        "a retirement")
    _waits_behind(url, ANOTHER_WRITE, _use(db, batch), "a use")
    assert auditing.verify(db).ok


def test_benches_drawing_one_batch_at_once_never_overdraw_it(
        bench: Cli, db: Any) -> None:  # noqa: F811
    batch, other = _in_service(bench), _in_service(bench)
    left = Decimal(str(bench.json("batch", "show", batch)["remaining_ml"]))
    # Twelve benches at once, each drawing a little more than a tenth of what is left
    # (and four others using a second batch meanwhile): nine fit, three are refused.
    draw = (left / 10).quantize(Decimal("0.01"), rounding="ROUND_UP") + Decimal("0.01")
    go = threading.Barrier(16)

    def use(code: str, ml: Decimal) -> Callable[[], Any]:
        def work() -> Any:
            go.wait(30)
            return batches.use_batch(db, actor="ben", code=code, volume=f"{ml:f}",
                                     purpose="assay")
        return work

    started = ([_Started(use(batch, draw)) for _ in range(12)]
               + [_Started(use(other, Decimal(5))) for _ in range(4)])
    assert all(s.finished(120) for s in started)
    mine = started[:12]
    refused = [s for s in mine if isinstance(s.error, Refused)]
    assert all(s.error is None or isinstance(s.error, Refused) for s in started), \
        [s.error for s in started]
    assert len(mine) - len(refused) == 9
    assert all("more than remains" in str(s.error) for s in refused)
    now_left = Decimal(str(bench.json("batch", "show", batch)["remaining_ml"]))
    assert now_left == left - 9 * draw >= 0
    report = auditing.verify(db)
    assert report.ok, report.problems


def test_a_live_session_is_checked_beside_a_use_in_flight(
        bench: Cli, db: Any) -> None:  # noqa: F811
    # The check before each command's write moves only its session's idle clock: it
    # need not wait for uses (it would wait for any other kind of write).
    batch = _in_service(bench)
    opened = sessions.login(db, name="ben", passphrase="ben-passphrase",
                            os_login="ben-os", host="bench-3")

    def check() -> Any:
        return sessions.live(db, name="ben", token=opened.token, os_login="ben-os",
                             host="bench-3")

    url = str(bench.db)
    _goes_beside(url, _a_use_of(_batch_id(db, batch)), check, "the session check")
    _waits_behind(url, ANOTHER_WRITE, check, "the session check")
