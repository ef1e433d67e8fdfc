"""Backends for the reliability tests: a SQLite file always, and a scratch
PostgreSQL database when PREPBOOK_TEST_PG_URL names a server."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest

from tests.conftest import on_postgres, pg_server_url, scratch_pg_database


@pytest.fixture(params=["sqlite", "postgresql"])
def backend(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """A database target (not created yet): SQLite in the SQLite run, PostgreSQL in
    the PostgreSQL run (or skipped, saying why)."""
    if request.param == "sqlite":
        if on_postgres():
            pytest.skip("run on SQLite by the suite's SQLite run; this run is PostgreSQL's")
        yield str(tmp_path / "lab.db")
        return
    if pg_server_url() is None:
        pytest.skip("no PostgreSQL server: set PREPBOOK_TEST_PG_URL")
    with scratch_pg_database() as url:
        yield url
