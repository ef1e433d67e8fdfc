"""Every table of the record tampered in turn: a row edited, deleted, added.

The attacker has write access to the database (a SQL console on the file or the
server). They drop the guard triggers of the table, change one row, and put the
guards back; `audit verify` must name that row, and nothing else, for every table.
The list of tables comes from the database itself, so a table verify skipped, or one
added without an audit, fails here.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import TypeVar

import pytest
from sqlalchemy import Connection

from prepbook.store.models import AUDITED_TABLES
from tests.cli.test_bench_flow import bench  # noqa: F401
from tests.cli.test_integrity import recorded  # noqa: F401
from tests.conftest import Cli, is_url, row_counts
from tests.tampering import guarded_again

T = TypeVar("T")


@pytest.fixture
def every_table(recorded: tuple[Cli, str, str], tmp_path: Path) -> Cli:  # noqa: F811
    """A lab with at least one row in every audited table (a setting, a label print too)."""
    cli, batch, _ = recorded
    cli.ok("settings", "set", "lockout_after", "6", "--reason", "lab policy",
           "--passphrase-stdin", user="ada", input="ada-passphrase\n")
    cli.ok("label", batch, "-o", str(tmp_path / "label.pdf"), user="ben")
    _readings_from_instruments(cli, batch, tmp_path)
    cli.ok("assay", batch, "--sample", "S-1", "--analyte", "HCl", "--aliquot", "25", "--rep",
           "24.10", user="ben")
    counts = row_counts(cli.db)
    assert all(counts[name] > 0 for name in record_tables(cli.db)), counts
    assert cli.json("audit", "verify")["ok"] is True
    return cli


# One text column per table, edited behind prepbook's back (no check constraint on it).
EDITED = {
    "users": "created_by", "materials": "name", "specs": "name", "lots": "certificate",
    "instruments": "capacity_text", "batches": "notes", "runs": "indicator",
    "replicates": "amount_text", "reviews": "reason", "uses": "purpose", "settings": "value",
    "label_prints": "file_name", "instrument_connections": "port",
    "replicate_sources": "amount_raw", "replicate_curves": "file_name",
    "assays": "sample", "assay_replicates": "volume_ml_text",
}


def _readings_from_instruments(cli: Cli, batch: str, folder: Path) -> None:
    """A balance connection and a replicate with a stored curve (tests/cli/
    test_instrument_readings.py reads the balance itself)."""
    from prepbook.lab.demo_readings import khp_curve

    curve = folder / "curve.csv"
    curve.write_bytes(khp_curve(0.8085, 0.9998, 0.1003, seed=1))
    cli.ok("instrument", "connect", "BAL-1", "--port", "socket://127.0.0.1:9", "--profile",
           "mark-first", user="ben")
    cli.ok("standardize", batch, "--lot", "KHP-0001", "--balance", "BAL-1", "--burette",
           "BUR-1", "--rep", f"0.8085:@{curve}", user="ben")


def _copy_of_last_row(name: str) -> str:
    """SQL adding a copy of a table's last row under a new id (unique values changed)."""
    table = AUDITED_TABLES[name]
    columns = [c.name for c in table.columns if c.name != "id"]

    def value(column: str) -> str:
        bumped = {("replicates", "version"), ("replicate_curves", "position"),
                  ("instrument_connections", "version"), ("replicate_sources", "replicate_id"),
                  ("assay_replicates", "position")}
        if (name, column) in bumped:  # whole numbers kept unique
            return f"{column} + 1000"
        return f"{column} || '-copy'" if table.c[column].unique else column

    listed = ", ".join(f'"{c}"' for c in columns)
    chosen = ", ".join(value(c) for c in columns)
    return (f'INSERT INTO {name} ({listed}) SELECT {chosen} FROM {name} '
            f'WHERE id = (SELECT max(id) FROM {name})')


# The tables of the database that are not the record itself: the trail, its head, and
# Alembic's revision. A new table is either audited (and tampered below) or named here.
# The checkpoints and the keying belong to the trail (verify holds the chain against
# them); a login session is a credential, not a record (its login is an audit event).
NOT_RECORD = {"alembic_version", "audit_events", "audit_head", "audit_checkpoints",
              "audit_keying", "audit_rekeyings", "login_sessions"}


def record_tables(db: Path | str) -> list[str]:
    """Every table of a freshly made database but the trail's own, read from the
    database itself (not from prepbook's list of audited tables, which verify uses)."""
    return sorted(set(row_counts(db)) - NOT_RECORD)


def test_every_table_of_the_database_is_tampered_in_turn(every_table: Cli) -> None:
    # Fails if a table the migrations make is neither tampered below nor named as
    # outside the record: verify cannot skip a table without this suite noticing.
    assert sorted(EDITED) == record_tables(every_table.db)


class _BehindTheBack:
    """Changes made to the database directly, foreign keys not enforced, and undone.

    A raw SQLite connection does not enforce them; on PostgreSQL the superuser of the
    throwaway server turns the checks off for each transaction only.
    """

    def __init__(self, db: Path | str) -> None:
        from sqlalchemy import create_engine
        from sqlalchemy.pool import NullPool

        self.db = db
        self.engine = create_engine(str(db) if is_url(db) else f"sqlite:///{db}",
                                    poolclass=NullPool)

    def run(self, work: Callable[[Connection], T]) -> T:
        from sqlalchemy import text

        with guarded_again(self.db), self.engine.begin() as conn:
            if conn.dialect.name == "postgresql":
                conn.execute(text("SET LOCAL session_replication_role = replica"))
            return work(conn)

    def tamper(self, name: str, rid: int, change: str) -> tuple[int, str, Callable[[], None]]:
        """Change one row of ``name``: the id named, the problem's ending, the undo."""
        from sqlalchemy import func, select, text

        table = AUDITED_TABLES[name]
        row = dict(self.run(lambda c: c.execute(
            table.select().where(table.c.id == rid)).mappings().one()))
        if change == "edited":
            column = EDITED[name]
            self.run(lambda c: c.execute(
                table.update().where(table.c.id == rid).values({column: "tampered"})))
            return rid, f"differs from its last audited state in: {column}", lambda: self.run(
                lambda c: c.execute(table.update().where(table.c.id == rid).values(
                    {column: row[column]})))
        if change == "deleted":
            self.run(lambda c: c.execute(table.delete().where(table.c.id == rid)))
            return (rid, "is gone but its audit events remain: deleted outside prepbook",
                    lambda: self.run(lambda c: c.execute(table.insert().values(row))))
        self.run(lambda c: c.execute(text(_copy_of_last_row(name))))
        added = self.run(lambda c: c.execute(select(func.max(table.c.id))).scalar_one())
        return added, "has no audit event: added outside prepbook", lambda: self.run(
            lambda c: c.execute(table.delete().where(table.c.id == added)))


@pytest.mark.parametrize("change", ["edited", "deleted", "added"])
def test_a_tampered_row_of_each_audited_table_in_turn_is_named(
        every_table: Cli, change: str) -> None:
    cli = every_table
    side = _BehindTheBack(cli.db)
    try:
        for name in record_tables(cli.db):
            last = max(e["record_id"] for e in cli.json("audit", "log", "--record", name))
            rid, expected, undo = side.tamper(name, last, change)
            result = cli("audit", "verify", "--json")
            assert result.exit_code == 1, (name, result.stdout)
            problems = json.loads(result.stdout)["problems"]
            assert len(problems) == 1, (name, problems)
            assert problems[0].startswith(f"{name} #{rid}"), (name, problems)
            assert problems[0].endswith(expected), (name, problems)
            undo()
        assert cli.json("audit", "verify")["ok"] is True  # every change undone
    finally:
        side.engine.dispose()
