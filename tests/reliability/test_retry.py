"""prepbook.store.retry reruns a write that lost a race, and nothing else."""

from __future__ import annotations

import sqlite3

import pytest
from sqlalchemy.exc import IntegrityError as SAIntegrityError
from sqlalchemy.exc import OperationalError

from prepbook.errors import DatabaseError, InvalidInput
from prepbook.store import retry


class _ServerError(Exception):
    """Stands in for a psycopg error: what counts is its SQLSTATE."""

    def __init__(self, sqlstate: str, message: str) -> None:
        super().__init__(message)
        self.sqlstate = sqlstate


def _flaky(failures: list[BaseException]):
    calls = []

    def service(value: str) -> str:
        calls.append(value)
        if failures:
            raise failures.pop(0)
        return f"recorded {value}"

    return service, calls


def _pg(sqlstate: str, message: str) -> SAIntegrityError:
    return SAIntegrityError("INSERT ...", {}, _ServerError(sqlstate, message))


@pytest.mark.parametrize("sqlstate", ["23505", "40001", "40P01"])
def test_a_collision_on_the_server_is_rerun(sqlstate: str, monkeypatch) -> None:
    monkeypatch.setattr(retry.time, "sleep", lambda _s: None)
    service, calls = _flaky([_pg(sqlstate, "duplicate key value"), _pg(sqlstate, "again")])
    assert retry.call(service, "R-1") == "recorded R-1"
    assert calls == ["R-1", "R-1", "R-1"]


def test_a_locked_sqlite_file_is_rerun(monkeypatch) -> None:
    monkeypatch.setattr(retry.time, "sleep", lambda _s: None)
    locked = OperationalError("BEGIN IMMEDIATE", {}, sqlite3.OperationalError("database is locked"))
    service, calls = _flaky([locked])
    assert retry.on_conflict(service)("B-1") == "recorded B-1"
    assert len(calls) == 2


@pytest.mark.parametrize("error", [
    InvalidInput("mass must be positive"),
    _pg("23503", "violates foreign key constraint"),  # not a race: a real fault
    OperationalError("SELECT", {}, sqlite3.OperationalError("no such table: batches")),
    RuntimeError("bench error"),
])
def test_anything_else_is_passed_on_at_once(error: BaseException) -> None:
    service, calls = _flaky([error])
    with pytest.raises(type(error)):
        retry.call(service, "B-1")
    assert calls == ["B-1"]


def test_a_collision_that_never_clears_becomes_one_clear_refusal(monkeypatch) -> None:
    monkeypatch.setattr(retry.time, "sleep", lambda _s: None)
    service, calls = _flaky([_pg("23505", f"duplicate key {i}") for i in range(10)])
    with pytest.raises(DatabaseError, match="nothing was written, try again"):
        retry.call(service, "R-1")
    assert len(calls) == retry.ATTEMPTS
