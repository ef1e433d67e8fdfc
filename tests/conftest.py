"""Shared fixtures: a CLI runner at a fixed width on a tmp_path database.

Tests never touch the real home directory or a real lab database: PREPBOOK_DB
and PREPBOOK_USER are cleared and HOME points into tmp_path.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner, Result


@pytest.fixture(autouse=True)
def _isolated_env(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("PREPBOOK_DB", raising=False)
    monkeypatch.delenv("PREPBOOK_USER", raising=False)
    monkeypatch.delenv("PREPBOOK_AUDIT_KEY_FILE", raising=False)
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    monkeypatch.setenv("COLUMNS", "160")
    monkeypatch.setenv("NO_COLOR", "1")


class Cli:
    """Runs prepbook in-process through Typer's CliRunner."""

    def __init__(self, db: Path) -> None:
        self.db = db
        self.runner = CliRunner()

    def __call__(self, *args: str, user: str | None = None, input: str | None = None,
                 db: Path | None = None) -> Result:
        from prepbook.cli.app import app

        full = ["--db", str(db or self.db)]
        if user:
            full += ["--user", user]
        full += list(args)
        result = self.runner.invoke(app, full, input=input)
        if result.exception is not None and not isinstance(result.exception, SystemExit):
            raise AssertionError(f"prepbook {' '.join(args)} raised "
                                 f"{result.exception!r}\n{result.stdout}\n{result.stderr}") \
                from result.exception
        return result

    def ok(self, *args: str, **kw: Any) -> Result:
        result = self(*args, **kw)
        assert result.exit_code == 0, (args, result.stdout, result.stderr)
        return result

    def json(self, *args: str, **kw: Any) -> Any:
        return json.loads(self.ok(*args, "--json", **kw).stdout)

    def refused(self, *args: str, **kw: Any) -> Result:
        result = self(*args, **kw)
        assert result.exit_code == 1, (args, result.exit_code, result.stdout, result.stderr)
        assert result.stdout == "", result.stdout
        lines = result.stderr.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("prepbook: "), result.stderr
        return result


@pytest.fixture
def cli(tmp_path: Path) -> Cli:
    return Cli(tmp_path / "lab.db")


def row_counts(db: Path) -> dict[str, int]:
    """Rows in every table, read with plain sqlite3 (not through prepbook)."""
    con = sqlite3.connect(db)
    try:
        names = [r[0] for r in con.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'")]
        return {n: con.execute(f'SELECT COUNT(*) FROM "{n}"').fetchone()[0] for n in names}
    finally:
        con.close()


@pytest.fixture
def counts() -> Callable[[Path], dict[str, int]]:
    return row_counts
