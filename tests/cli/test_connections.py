"""A command closes the database connections it opened when it ends.

In a shell each command is a process of its own, but the terminal app, the tests and
any program that calls prepbook's commands in one process run many of them; a
connection left open per command exhausts a PostgreSQL server's client slots (100 by
default) within one long session.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

import pytest
from sqlalchemy import event
from sqlalchemy.pool import Pool


@pytest.fixture
def opened_and_closed() -> Iterator[dict[str, int]]:
    tally = {"opened": 0, "closed": 0}

    def opened(_dbapi: Any, _record: Any) -> None:
        tally["opened"] += 1

    def closed(_dbapi: Any, _record: Any) -> None:
        tally["closed"] += 1

    event.listen(Pool, "connect", opened)
    event.listen(Pool, "close", closed)
    try:
        yield tally
    finally:
        event.remove(Pool, "connect", opened)
        event.remove(Pool, "close", closed)


def test_reading_and_writing_commands_leave_no_connection_open(cli, opened_and_closed) -> None:
    cli.ok("init")
    cli.ok("user", "add", "ada", "--role", "admin", "--passphrase-stdin",
           input="copper-kettle-91\n")
    before = dict(opened_and_closed)
    for i in range(12):
        cli.ok("spec", "list")
        cli.ok("lot", "add", "KHP", "--code", f"KHP-{i:04d}", "--purity", "99.98",
               "--expires", "2031-06-30", user="ada")
    opened = opened_and_closed["opened"] - before["opened"]
    closed = opened_and_closed["closed"] - before["closed"]
    assert opened >= 24, opened  # each command opened its own
    assert closed == opened, (opened, closed)
