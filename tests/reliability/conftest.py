"""Backends for the reliability tests: a SQLite file always, and a scratch
PostgreSQL database when PREPBOOK_TEST_PG_URL names a server."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest

from tests.conftest import pg_server_url, scratch_pg_database


@pytest.fixture(params=["sqlite", "postgresql"])
def backend(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """A database target (not created yet) on each backend available."""
    if request.param == "sqlite":
        yield str(tmp_path / "lab.db")
        return
    if pg_server_url() is None:
        pytest.skip("no PostgreSQL server: set PREPBOOK_TEST_PG_URL")
    with scratch_pg_database() as url:
        yield url
