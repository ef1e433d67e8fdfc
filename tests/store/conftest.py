"""Fixtures for the storage tests: every database lives under tmp_path, or on the
scratch PostgreSQL server when PREPBOOK_TEST_PG_URL is set (see tests/conftest.py)."""

from __future__ import annotations

from collections.abc import Iterator
from datetime import UTC, date, datetime
from pathlib import Path

import pytest
from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook.store import audit, migrate
from prepbook.store.engine import Database, open_database
from prepbook.store.models import Batch, Spec
from tests.conftest import on_postgres


@pytest.fixture(autouse=True)
def _isolated(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """No audit key from the developer's shell, and no way to reach the real home."""
    monkeypatch.delenv(audit.KEY_ENV, raising=False)
    monkeypatch.setenv("HOME", str(tmp_path / "home"))


@pytest.fixture
def db_file(tmp_path: Path) -> Path:
    """A freshly created SQLite database file at head.

    A test that asks for the file works on SQLite itself (raw sqlite3, the file's
    pragmas, copies of it), so on PostgreSQL it is skipped, saying so.
    """
    if on_postgres():
        pytest.skip("SQLite-specific: works on the SQLite database file itself")
    path = tmp_path / "lab.db"
    migrate.upgrade(str(path))
    return path


@pytest.fixture
def db(db_target: Path | str) -> Iterator[Database]:
    """A freshly created database at head, open (SQLite file or scratch PostgreSQL)."""
    migrate.upgrade(str(db_target))
    database = open_database(str(db_target))
    yield database
    database.dispose()


def now() -> datetime:
    return datetime.now(UTC).replace(tzinfo=None)


def add_spec(session: Session, code: str = "NaOH-0.1N", actor: str = "ana") -> Spec:
    """An invented solution spec, written with its audit event."""
    spec = Spec(
        code=code,
        name="Sodium hydroxide 0.1 N",
        solute_code="NaOH",
        nominal=0.1,
        unit="N",
        data='{"max_rsd_percent": 0.2}',
        builtin=False,
        created_at=now(),
        created_by=actor,
    )
    session.add(spec)
    audit.record(session, actor=actor, action="spec add", row=spec)
    return spec


def add_batch(
    session: Session, code: str, actor: str = "ana", made_at: datetime | None = None
) -> Batch:
    """An invented batch (made from solid) and its audit event; adds the spec if needed."""
    spec = session.scalars(select(Spec).where(Spec.code == "NaOH-0.1N")).one_or_none()
    if spec is None:
        spec = add_spec(session, actor=actor)
    batch = Batch(
        code=code,
        spec=spec,
        method="solid",
        volume_ml_text="1000",
        solute_mass_g_text="4.1",
        theoretical_normality=0.1025,
        made_at=made_at or now(),
        recorded_at=made_at or now(),
        made_by=actor,
        notes=None,
        expires=date(2031, 1, 31),
    )
    session.add(batch)
    audit.record(session, actor=actor, action="batch make", row=batch)
    return batch
