"""What goes wrong under a command (issue 14): an unknown database URL, a table missing,
a read-only file or folder, a full disk, a number too large to store, a root option
after the command. Each ends in one line on stderr, exit 1 (2 for a usage error), and
nothing written."""

from __future__ import annotations

import sqlite3
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import Engine, event

from tests.cli.test_bench_flow import _make_batch, bench  # noqa: F401
from tests.conftest import Cli, is_url, raw_sql, row_counts


@pytest.mark.parametrize("url", ["mysql://lab@localhost/prep", "bogus://x",
                                 "oracle+cx_oracle://u@h/s"])
def test_an_unsupported_database_url_names_the_supported_ones(tmp_path: Path, url: str) -> None:
    out = Cli(url).refused("status")
    assert "SQLite" in out.stderr and "PostgreSQL" in out.stderr


def test_a_missing_driver_says_how_to_install_it(tmp_path: Path) -> None:
    out = Cli("postgresql+nodriver://u@localhost/x").refused("status")
    assert "not installed" in out.stderr


def test_a_missing_table_is_named(bench: Cli) -> None:  # noqa: F811
    batch = _make_batch(bench)
    # (On PostgreSQL the assays' link to their use goes with it.)
    raw_sql(bench.db, "DROP TABLE uses" + (" CASCADE" if is_url(bench.db) else ""))
    out = bench.refused("batch", "show", batch)
    assert "not a prepbook database, or damaged: table uses is missing" in out.stderr


def test_a_number_too_large_to_look_up_is_one_line(bench: Cli) -> None:  # noqa: F811
    bench.refused("audit", "log", "--record", "batches#99999999999999999999999")
    bench.refused("audit", "log", "--limit", "99999999999999999999999")


def test_a_root_option_after_the_command_says_where_it_goes(bench: Cli) -> None:  # noqa: F811
    result = bench("status", "--db", str(bench.db))
    assert result.exit_code == 2
    assert "--db is an option of prepbook itself: put it before the command" in result.stderr


@pytest.mark.sqlite_only(reason="a read-only SQLite file and folder")
def test_a_read_only_database_refuses_writes_and_still_verifies(
        bench: Cli, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    """The tests run as root, whom file modes do not stop: the file and its folder are
    made read-only and the permission check is answered as for an unprivileged user
    (SQLite then really opens the file read-only and refuses the write itself)."""
    import os

    from prepbook.store import engine

    path = Path(bench.db)
    before = row_counts(path)
    files = sorted(path.parent.iterdir())
    path.chmod(0o444)
    path.parent.chmod(0o555)
    real = os.access

    def access(target: Any, mode: int, **kw: Any) -> bool:
        if mode & os.W_OK and str(target).startswith(str(path.parent)):
            return False
        return real(target, mode, **kw)

    monkeypatch.setattr(engine.os, "access", access)
    try:
        out = bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass",
                            "4.1", user="ben")
        assert "read-only" in out.stderr
        assert bench.json("audit", "verify")["ok"] is True
        assert bench.ok("status").stdout
        assert sorted(path.parent.iterdir()) == files  # nothing was made beside it
    finally:
        path.parent.chmod(0o755)
        path.chmod(0o644)
    assert row_counts(path) == before


@pytest.mark.sqlite_only(reason="SQLite's own disk-full error")
def test_the_disk_filling_up_during_a_write_writes_nothing(bench: Cli) -> None:  # noqa: F811
    """The disk fills up half-way through a write: the batch row is in, its audit event
    cannot be (SQLite's SQLITE_FULL, raised by the driver as it would be)."""
    before = row_counts(bench.db)

    def full(conn: Any, cursor: Any, statement: str, *args: Any) -> None:
        if statement.lstrip().upper().startswith("INSERT INTO AUDIT_EVENTS"):
            raise sqlite3.OperationalError("database or disk is full")

    event.listen(Engine, "before_cursor_execute", full)
    try:
        out = bench.refused("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass",
                            "4.1", user="ben")
    finally:
        event.remove(Engine, "before_cursor_execute", full)
    assert "the disk is full; nothing was written" in out.stderr
    assert row_counts(bench.db) == before


def test_a_file_that_cannot_be_written_is_one_line(bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    batch = _make_batch(bench)
    before = row_counts(bench.db)
    out = bench.refused("report", batch, "-o", str(tmp_path / "no-such-folder" / "r.pdf"))
    assert "prepbook: " in out.stderr
    assert row_counts(bench.db) == before
