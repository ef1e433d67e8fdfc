"""No passphrase is checked while the writer lock is held.

Argon2 takes a tenth of a second or more by design; checked inside a write transaction
it would stall every bench of the lab. Each time a passphrase is checked during these
signed commands, a second connection tries to take the writer lock without waiting
(SQLite: ``BEGIN IMMEDIATE`` with no busy timeout; PostgreSQL: ``pg_try_advisory_xact_lock``
on the lock every write takes): it must get it every time.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import create_engine, text

from prepbook.lab import common
from prepbook.lab.database import open_database
from prepbook.store.engine import WRITER_LOCK_KEY
from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli


def _lock_is_free(target: Path | str) -> bool:
    """Whether another connection could take the writer lock right now."""
    if isinstance(target, Path):
        con = sqlite3.connect(target, timeout=0, isolation_level=None)
        try:
            con.execute("BEGIN IMMEDIATE")
            con.execute("ROLLBACK")
            return True
        except sqlite3.OperationalError:  # "database is locked"
            return False
        finally:
            con.close()
    engine = create_engine(target)
    try:
        with engine.connect() as conn:
            return bool(conn.execute(text("SELECT pg_try_advisory_xact_lock(:key)"),
                                     {"key": WRITER_LOCK_KEY}).scalar())
    finally:
        engine.dispose()


@pytest.fixture
def checks(bench: Cli, monkeypatch: pytest.MonkeyPatch) -> list[bool]:  # noqa: F811
    """For every passphrase checked from now on: whether the writer lock was free."""
    seen: list[bool] = []
    real: Callable[..., bool] = common.passphrase_matches

    def probing(*args: Any) -> bool:
        seen.append(_lock_is_free(bench.db))
        return real(*args)

    monkeypatch.setattr(common, "passphrase_matches", probing)
    return seen


def test_the_probe_sees_a_held_lock(bench: Cli) -> None:  # noqa: F811
    db = open_database(str(bench.db))
    try:
        assert _lock_is_free(bench.db)
        with db.session() as s:
            s.execute(text("SELECT 1"))  # the write transaction opens at its first statement
            assert not _lock_is_free(bench.db)
    finally:
        db.dispose()


def test_no_signed_command_checks_a_passphrase_under_the_writer_lock(
        bench: Cli, checks: list[bool]) -> None:  # noqa: F811
    batch = _make_batch(bench)
    run = _standardize(bench, batch)["run"]
    second = _standardize(bench, batch)["run"]
    signed = [
        ("ben", ["correct", run, "--replicate", "2", "--volume", "39.30", "--reason",
                 "misread meniscus"], "ben-passphrase\n"),
        ("cleo", ["review", run, "--accept"], "cleo-passphrase\n"),
        ("cleo", ["revoke", run, "--reason", "certificate withdrawn"], "cleo-passphrase\n"),
        ("ben", ["exclude", second, "--replicate", "3", "--reason", "bubble in the tip"],
         "ben-passphrase\n"),
        ("ben", ["batch", "retire", batch, "--reason", "used up"], "ben-passphrase\n"),
        ("ada", ["settings", "set", "lockout_after", "6", "--reason", "policy"],
         "ada-passphrase\n"),
        ("ada", ["user", "add", "dan", "--role", "technician"],
         "dan-passphrase\nada-passphrase\n"),
        ("ada", ["user", "disable", "dan", "--reason", "left the lab"], "ada-passphrase\n"),
        ("ben", ["user", "passphrase", "ben"], "ben-passphrase\nben-passphrase-2\n"),
    ]
    for user, args, stdin in signed:
        before = len(checks)
        bench.ok(*args, "--passphrase-stdin", user=user, input=stdin)
        assert len(checks) > before, f"{args[0]}: no passphrase was checked"
    # A wrong passphrase too: checked, refused and its failure recorded, never locked.
    bench.refused("review", second, "--reject", "--passphrase-stdin", user="cleo",
                  input="not-cleo\n")
    assert checks and all(checks), checks
