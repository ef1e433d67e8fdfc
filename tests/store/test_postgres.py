"""The same storage checks on PostgreSQL, when a scratch server is given.

Set PREPBOOK_TEST_PG_URL to a server URL whose user may create databases, e.g.
``postgresql+psycopg://postgres@/postgres?host=/tmp/pg&port=55432``. Each test
works in a database of its own, created for it and dropped afterwards.
"""

from __future__ import annotations

import json
import os
import threading
import uuid
from collections.abc import Iterator
from datetime import datetime
from pathlib import Path

import pytest
from sqlalchemy import create_engine, func, inspect, select, text
from sqlalchemy.engine import make_url

from prepbook.errors import DatabaseError
from prepbook.store import audit, migrate
from prepbook.store.audit.schema_check import comparing
from prepbook.store.engine import Database, open_database
from prepbook.store.models import AuditEvent, Base, Batch, Setting
from prepbook.store.snapshot import snapshot
from tests.tampering import guarded_again

from .conftest import add_batch, now

PG_URL = os.environ.get("PREPBOOK_TEST_PG_URL")
pytestmark = [
    pytest.mark.postgres,
    pytest.mark.skipif(not PG_URL, reason="PREPBOOK_TEST_PG_URL not set"),
]


@pytest.fixture
def pg_url() -> Iterator[str]:
    assert PG_URL is not None
    name = f"prepbook_test_{uuid.uuid4().hex[:12]}"
    admin = create_engine(PG_URL, isolation_level="AUTOCOMMIT")
    try:
        with admin.connect() as conn:
            conn.execute(text(f'CREATE DATABASE "{name}"'))
        yield make_url(PG_URL).set(database=name).render_as_string(hide_password=False)
        with admin.connect() as conn:
            conn.execute(
                text("SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE datname = :n"),
                {"n": name},
            )
            conn.execute(text(f'DROP DATABASE "{name}"'))  # the scratch database only
    finally:
        admin.dispose()


@pytest.fixture
def pg(pg_url: str) -> Iterator[Database]:
    migrate.upgrade(pg_url)
    database = open_database(pg_url)
    yield database
    database.dispose()


def test_open_before_init_says_run_init(pg_url: str) -> None:
    with pytest.raises(DatabaseError, match="prepbook init"):
        open_database(pg_url)


def test_upgrade_creates_then_changes_nothing(pg_url: str) -> None:
    first = migrate.upgrade(pg_url)
    second = migrate.upgrade(pg_url)
    assert first.created and first.backup_path is None
    assert second == migrate.UpgradeReport(
        created=False,
        from_revision=migrate.HEAD_REVISION,
        to_revision=migrate.HEAD_REVISION,
        backup_path=None,
    )


def test_schema_matches_the_models(pg: Database) -> None:
    from alembic.autogenerate import compare_metadata
    from alembic.runtime.migration import MigrationContext

    with pg.engine.connect() as conn:
        context = MigrationContext.configure(conn, opts=comparing(conn.dialect.name))
        assert compare_metadata(context, Base.metadata) == []
        inspector = inspect(conn)
        for table in Base.metadata.sorted_tables:
            reflected = {c["name"] for c in inspector.get_check_constraints(table.name)}
            expected = {
                c.name for c in table.constraints if c.__class__.__name__ == "CheckConstraint"
            }
            assert reflected == expected, table.name


def test_rollback_and_chain_on_postgres(pg: Database) -> None:
    with pg.session() as session:
        add_batch(session, "B-1")
    with pytest.raises(RuntimeError), pg.session() as session:
        add_batch(session, "B-2")
        raise RuntimeError("bench error")
    with pg.session(write=False) as session:
        assert session.scalar(select(func.count()).select_from(Batch)) == 1
        report = audit.verify(session)
    assert report.ok and report.events == 2


def test_tampering_is_found_on_postgres(pg: Database) -> None:
    with pg.session() as session:
        add_batch(session, "B-1")
        add_batch(session, "B-2")
    # Behind prepbook's back, the guard triggers dropped first and put back after.
    with guarded_again(pg.url), pg.engine.connect() as conn:
        conn.execute(text("UPDATE batches SET volume_ml_text = '990' WHERE code = 'B-1'"))
        conn.execute(text("DELETE FROM audit_events WHERE seq = 3"))
        conn.commit()
    with pg.session(write=False) as session:
        problems = audit.verify(session).problems
    assert "batches #1 (code B-1) differs from its last audited state in: volume_ml_text" in (
        problems
    )
    assert any("events removed from the end" in p for p in problems)
    assert any("batches #2 (code B-2) has no audit event" in p for p in problems)


@pytest.fixture
def sqlite_db(tmp_path: Path) -> Iterator[Database]:
    """A SQLite file at head, whatever backend the rest of this run uses."""
    path = str(tmp_path / "side.sqlite3")
    migrate.upgrade(path)
    database = open_database(path)
    assert database.is_sqlite
    yield database
    database.dispose()


def test_same_row_gives_the_same_snapshot_as_on_sqlite(pg: Database, sqlite_db: Database) -> None:
    made = datetime(2030, 5, 6, 7, 8, 9, 123456)
    seen = []
    for database in (pg, sqlite_db):
        with database.session() as session:
            add_batch(session, "B-1", made_at=made)
        with database.session(write=False) as session:
            snap = snapshot(session.scalars(select(Batch)).one())
            stored = session.scalars(select(AuditEvent).where(AuditEvent.seq == 2)).one()
        seen.append((snap, stored.values))
    assert seen[0] == seen[1]
    assert seen[0][0]["made_at"] == "2030-05-06T07:08:09.123456"
    assert json.loads(seen[0][1]) == seen[0][0]


def test_concurrent_writers_keep_one_chain(pg_url: str, tmp_path: Path) -> None:
    migrate.upgrade(pg_url)
    errors: list[BaseException] = []

    def bench(name: str) -> None:
        database = open_database(pg_url)
        try:
            for i in range(15):
                with database.session() as session:
                    setting = Setting(
                        key=f"{name}-{i}", value="x", updated_at=now(), updated_by=name
                    )
                    session.add(setting)
                    audit.record(session, actor=name, action="set", row=setting)
        except BaseException as exc:  # pragma: no cover - reported below
            errors.append(exc)
        finally:
            database.dispose()

    threads = [threading.Thread(target=bench, args=(n,)) for n in ("ana", "ben", "cleo")]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert errors == []
    database = open_database(pg_url)
    try:
        with database.session(write=False) as session:
            report = audit.verify(session)
    finally:
        database.dispose()
    assert report.ok, report.problems
    assert report.events == 45


def test_a_write_transaction_holds_the_writer_lock_until_it_ends(pg: Database) -> None:
    # Two benches must not both read "the next code" before either commits: every
    # write transaction queues on one advisory lock (the PostgreSQL counterpart of
    # SQLite's BEGIN IMMEDIATE). Another connection cannot take it meanwhile.
    from prepbook.store.engine import WRITER_LOCK_KEY

    probe = "SELECT pg_try_advisory_xact_lock(:k)"
    with pg.engine.connect() as other:
        with pg.session() as _writing:
            assert other.execute(text(probe), {"k": WRITER_LOCK_KEY}).scalar() is False
            other.rollback()
        with pg.session(write=False) as _reading:  # readers never queue
            assert other.execute(text(probe), {"k": WRITER_LOCK_KEY}).scalar() is True
            other.rollback()
