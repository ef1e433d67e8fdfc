"""The store defends itself: guard triggers, the schema checked, damage named.

Each test starts from its attack. Someone with a SQL console on the database (the
owner of the SQLite file, or a PostgreSQL account owning the tables) first meets the
guard triggers; they can drop them, and `audit verify` then names the missing guard;
they can change the schema (drop an index, add a column, plant a trigger), and
verify names each change; the file can be damaged, and verify names the pages.
"""

from __future__ import annotations

import json
from datetime import date, datetime
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import Boolean, Date, DateTime, Float, Integer, create_engine, text
from sqlalchemy.exc import DBAPIError
from sqlalchemy.pool import NullPool

from prepbook.store.audit import guards
from tests.cli.test_bench_flow import _make_batch, bench  # noqa: F401
from tests.cli.test_integrity import recorded  # noqa: F401
from tests.cli.test_tamper_every_table import every_table, record_tables  # noqa: F401
from tests.conftest import Cli, is_url, on_postgres, raw_sql, row_counts
from tests.tampering import drop_guards, guarded_again, missing_guards


def _engine(db: Path | str) -> Any:
    return create_engine(str(db) if is_url(db) else f"sqlite:///{db}", poolclass=NullPool)


def _refused(db: Path | str, sql: str, **params: Any) -> str:
    """Run ``sql`` directly; it must be refused by the database. The refusal's text."""
    engine = _engine(db)
    try:
        with pytest.raises(DBAPIError) as caught, engine.begin() as conn:
            conn.execute(text(sql), params)
        return str(caught.value.orig)
    finally:
        engine.dispose()


def _allowed(db: Path | str, sql: str) -> None:
    engine = _engine(db)
    try:
        with engine.connect() as conn:  # rolled back: nothing changes
            conn.execute(text(sql))
    finally:
        engine.dispose()


def _changed(column: Any) -> tuple[str, dict[str, Any]]:
    """SQL for a value surely different from the column's own, and its parameters."""
    name = f'"{column.name}"'
    if isinstance(column.type, Boolean):
        return f"CASE WHEN {name} THEN false ELSE true END", {}
    if isinstance(column.type, DateTime):
        return ":v", {"v": datetime(2001, 2, 3, 4, 5, 6)}
    if isinstance(column.type, Date):
        return ":v", {"v": date(2001, 2, 3)}
    if isinstance(column.type, Integer):
        return f"COALESCE({name}, 0) + 1000", {}
    if isinstance(column.type, Float):
        return f"COALESCE({name}, 0) + 1", {}
    return "'tampered'", {}


# ------------------------------------------------------------------ the guard triggers


def test_plain_sql_cannot_delete_or_rewrite_any_guarded_table(every_table: Cli) -> None:  # noqa: F811
    """Every table of the record and the trail: no DELETE, no UPDATE of a column outside
    ``__updatable__``; an updatable column still changes (in a transaction rolled back)."""
    from prepbook.store.models import Base

    db = every_table.db
    names = {g.table for g in guards.guarded_tables()}
    assert names == set(record_tables(db)) | {"audit_events", "audit_head"}
    for guarded in guards.guarded_tables():
        table = Base.metadata.tables[guarded.table]
        assert "never deleted" in _refused(db, f"DELETE FROM {guarded.table}")
        for column in table.columns:
            if column.name in guarded.updatable:  # the trigger lets it through
                _allowed(db, f'UPDATE {guarded.table} SET "{column.name}" = "{column.name}"')
                continue
            value, params = _changed(column)
            refusal = _refused(db, f'UPDATE {guarded.table} SET "{column.name}" = {value}',
                               **params)
            assert refusal.startswith("prepbook: "), (guarded.table, column.name, refusal)
    if on_postgres():
        assert "never deleted" in _refused(db, "TRUNCATE audit_events CASCADE")
    assert every_table.json("audit", "verify")["ok"] is True


def test_the_audit_head_only_moves(recorded: tuple[Cli, str, str]) -> None:  # noqa: F811
    db = recorded[0].db
    assert "never deleted" in _refused(db, "DELETE FROM audit_head")
    assert "only hash, seq of audit_head" in _refused(db, "UPDATE audit_head SET id = 2")
    assert "audit_events rows are never changed" in _refused(
        db, "UPDATE audit_events SET reason = 'x' WHERE seq = 1")


def test_dropped_guards_are_named_and_verify_passes_once_they_are_back(
        recorded: tuple[Cli, str, str]) -> None:  # noqa: F811
    cli = recorded[0]
    drop_guards(cli.db, ["reviews", "audit_events"])
    result = cli("audit", "verify", "--json")
    assert result.exit_code == 1
    assert json.loads(result.stdout)["problems"] == missing_guards(
        cli.db, "audit_events", "reviews")
    with guarded_again(cli.db):
        pass
    assert cli.json("audit", "verify")["ok"] is True


# ------------------------------------------------------------------ the schema


def _problems(cli: Cli, *args: str) -> list[str]:
    result = cli("audit", "verify", "--json", *args)
    assert result.exit_code == 1, result.stdout
    problems: list[str] = json.loads(result.stdout)["problems"]
    return problems


def test_a_dropped_index_is_named(recorded: tuple[Cli, str, str]) -> None:  # noqa: F811
    cli = recorded[0]
    raw_sql(cli.db, "DROP INDEX ix_batches_retired_at")
    assert _problems(cli) == [
        "index ix_batches_retired_at on batches is missing from the schema"]


def test_an_added_column_with_data_is_named(recorded: tuple[Cli, str, str]) -> None:  # noqa: F811
    cli = recorded[0]
    raw_sql(cli.db, "ALTER TABLE lots ADD COLUMN side_notes VARCHAR")
    with guarded_again(cli.db):
        raw_sql(cli.db, "UPDATE lots SET side_notes = 'kept out of sight'")
    assert _problems(cli) == [
        "column lots.side_notes is not one prepbook makes: added outside prepbook"]


def _plant_swallowing_trigger(db: Path | str, name: str, columns: str) -> None:
    """A trigger on users that makes an UPDATE (``columns``: SQLite's ``OF ...``) do
    nothing, without an error."""
    if on_postgres():
        raw_sql(db, f"CREATE FUNCTION {name}() RETURNS trigger LANGUAGE plpgsql "
                    "AS $$ BEGIN RETURN NULL; END $$")
        raw_sql(db, f"CREATE TRIGGER {name} BEFORE UPDATE ON users FOR EACH ROW "
                    f"EXECUTE FUNCTION {name}()")
    else:
        raw_sql(db, f"CREATE TRIGGER {name} BEFORE UPDATE {columns} ON users "
                    "BEGIN SELECT RAISE(IGNORE); END")


def test_a_planted_trigger_and_view_are_named(recorded: tuple[Cli, str, str]) -> None:  # noqa: F811
    cli = recorded[0]
    _plant_swallowing_trigger(cli.db, "quiet", "")
    raw_sql(cli.db, "CREATE VIEW everyone AS SELECT name FROM users")
    assert _problems(cli) == [
        "trigger quiet on users is not one prepbook makes: planted outside prepbook",
        "view everyone is not one prepbook makes: added outside prepbook"]


def test_a_guard_rewritten_to_let_changes_through_is_named(
        recorded: tuple[Cli, str, str]) -> None:  # noqa: F811
    cli = recorded[0]
    drop_guards(cli.db, ["replicates"])
    if on_postgres():
        raw_sql(cli.db, "CREATE TRIGGER prepbook_guard_replicates BEFORE DELETE ON "
                        "replicates FOR EACH ROW EXECUTE FUNCTION prepbook_guard()")
    else:
        raw_sql(cli.db, "CREATE TRIGGER prepbook_guard_replicates_update BEFORE UPDATE ON "
                        "replicates WHEN 0 BEGIN SELECT RAISE(ABORT, 'x'); END")
    problems = _problems(cli)
    name = "prepbook_guard_replicates" + ("" if on_postgres() else "_update")
    assert (f"trigger {name} on replicates is not the one prepbook makes: altered outside "
            "prepbook") in problems


@pytest.mark.skipif(not on_postgres(), reason="PostgreSQL can disable a trigger in place")
def test_a_disabled_guard_is_named(recorded: tuple[Cli, str, str]) -> None:  # noqa: F811
    cli = recorded[0]
    raw_sql(cli.db, "ALTER TABLE runs DISABLE TRIGGER prepbook_guard_runs")
    assert any("prepbook_guard_runs on runs is disabled" in p for p in _problems(cli))


def test_a_trigger_that_swallows_failed_attempts_gives_one_line_not_a_traceback(
        bench: Cli) -> None:  # noqa: F811
    """A wrong passphrase must still be refused (and the lockout counter not bypassed in
    silence): the command fails with one line, and verify names the planted trigger."""
    drop_guards(bench.db, ["users"])
    _plant_swallowing_trigger(bench.db, "swallow", "OF failed_attempts")
    batch = _make_batch(bench)
    before = row_counts(bench.db)
    result = bench.refused("batch", "retire", batch, "--reason", "spilled",
                           "--passphrase-stdin", user="ben", input="not-bens-passphrase\n")
    assert "did not store a change" in result.stderr
    assert row_counts(bench.db) == before  # nothing recorded, the batch not retired
    problems = _problems(bench)
    assert "trigger swallow on users is not one prepbook makes: planted outside prepbook" \
        in problems


# ------------------------------------------------------------------ damage


def _overwrite_index_page(db_file: Path, index: str) -> None:
    """Garble the cells at the end of an index's root page (its header kept)."""
    import sqlite3

    con = sqlite3.connect(db_file)
    try:
        con.execute("PRAGMA wal_checkpoint(TRUNCATE)")
        page = con.execute("SELECT rootpage FROM sqlite_master WHERE name = ?",
                           (index,)).fetchone()[0]
        size = con.execute("PRAGMA page_size").fetchone()[0]
    finally:
        con.close()
    with db_file.open("r+b") as handle:
        handle.seek(page * size - 600)
        handle.write(b"A" * 600)


@pytest.mark.sqlite_only(reason="overwrites a page of the SQLite file")
def test_an_overwritten_index_page_is_named_as_damage(
        recorded: tuple[Cli, str, str]) -> None:  # noqa: F811
    cli = recorded[0]
    assert isinstance(cli.db, Path)
    _overwrite_index_page(cli.db, "ix_audit_events_record_type_record_id")
    quick = _problems(cli)
    assert len(quick) == 1 and quick[0].startswith(
        "the database file is damaged (SQLite quick_check): "), quick
    assert "page" in quick[0]
    thorough = _problems(cli, "--thorough")
    assert thorough[0].startswith("the database file is damaged (SQLite integrity_check)")
