"""The grouped writer of ``prepbook demo --years`` (store.bulk) records exactly what the
ordinary, one-transaction-per-call path records: the same rows, the same audit events,
a chain that verifies; and it refuses what the ordinary path refuses."""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import text

from prepbook.errors import DatabaseError, IntegrityError, Refused
from prepbook.lab import auditing, batches, history, instruments, lots, people, runs, setup
from prepbook.store.bulk import GroupedDatabase
from prepbook.store.engine import Database, open_database

ADMIN, TECH, REVIEWER = "ines", "tomas", "wren"
PASS = {ADMIN: "ines-passphrase", TECH: "tomas-passphrase", REVIEWER: "wren-passphrase"}
# Columns that hold the time a row was entered or a salted hash: they differ between two
# databases built a moment apart, whatever the write path.
Grouped = tuple[Path, GroupedDatabase]
VOLATILE = {"recorded_at", "created_at", "passphrase_hash", "at", "hash", "prev_hash"}


def _lab(db: Database) -> dict[str, Any]:
    """A small bench story, every time given: make, standardize, review, use, retire."""
    people.add_user(db, actor=ADMIN, name=ADMIN, role="admin", passphrase=PASS[ADMIN],
                    actor_passphrase=None)
    for name, role in ((TECH, "technician"), (REVIEWER, "reviewer")):
        people.add_user(db, actor=ADMIN, name=name, role=role, passphrase=PASS[name],
                        actor_passphrase=PASS[ADMIN])
    instruments.add_instrument(db, actor=ADMIN, code="BAL-7", kind="balance",
                               due="2027-05-01", capacity="220", tolerance="0.0002",
                               readability="0.0001")
    instruments.add_instrument(db, actor=ADMIN, code="BUR-7", kind="burette",
                               due="2027-05-01", capacity="50", tolerance="0.05",
                               readability="0.01")
    lots.add_lot(db, actor=ADMIN, material="KHP", code="KHP-GT-1", purity="99.95",
                 purity_u="0.05", expires="2028-01-01", certificate="CoA GT-1 (invented)",
                 dried="2026-05-30")
    made = batches.make_batch(db, actor=TECH, spec="NaOH-0.1N", volume="1000",
                              solute_mass="4.0400", balance="BAL-7", at="2026-06-01T08:00")
    code = made.batch

    def standardized(replicates: list[str], at: str, reviewed_at: str) -> str:
        out = runs.standardize(db, actor=TECH, batch=code, lot="KHP-GT-1", balance="BAL-7",
                               burette="BUR-7", temperature="21.0", replicates=replicates,
                               at=at)
        runs.review(db, actor=REVIEWER, run=out["run"], accept=True, reason=None,
                    passphrase=PASS[REVIEWER], at=reviewed_at)
        return str(out["run"])

    first = standardized(["0.8123:39.80", "0.8201:40.17", "0.8150:39.93"],
                         "2026-06-01T09:00", "2026-06-01T10:00")
    used = batches.use_batch(db, actor=TECH, code=code, volume="12.5",
                             purpose="alkalinity, sample GT-1", at="2026-06-02T11:00")
    # Restandardized (weaker now): a use after it must see the new factor, not the
    # first one, whether each call is its own transaction or all share one.
    again = standardized(["0.8123:40.10", "0.8201:40.49", "0.8150:40.22"],
                         "2026-06-02T14:00", "2026-06-02T15:00")
    later = batches.use_batch(db, actor=TECH, code=code, volume="10.0",
                              purpose="alkalinity, sample GT-2", at="2026-06-02T16:00")
    history.retire(db, actor=TECH, code=code, reason="used up", passphrase=PASS[TECH],
                   at="2026-06-03T08:00")
    assert later.factor < used.factor
    return {"batch": code, "runs": [first, again],
            "factors": [used.factor, later.factor]}


def _tables(path: Path) -> dict[str, list[dict[str, Any]]]:
    con = sqlite3.connect(path)
    con.row_factory = sqlite3.Row
    try:
        names = [r[0] for r in con.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' "
            "AND name != 'alembic_version' ORDER BY name")]
        out = {}
        for name in names:
            order = "seq" if name == "audit_events" else "rowid"
            rows = []
            for row in con.execute(f'SELECT * FROM "{name}" ORDER BY {order}'):
                item = {k: row[k] for k in row.keys() if k not in VOLATILE}  # noqa: SIM118
                if name == "audit_events":
                    values = json.loads(item["values"])
                    item["values"] = {k: v for k, v in values.items() if k not in VOLATILE}
                rows.append(item)
            out[name] = rows
        return out
    finally:
        con.close()


def _admin_and_technician(db: Database) -> None:
    people.add_user(db, actor=ADMIN, name=ADMIN, role="admin", passphrase=PASS[ADMIN],
                    actor_passphrase=None)
    people.add_user(db, actor=ADMIN, name=TECH, role="technician", passphrase=PASS[TECH],
                    actor_passphrase=PASS[ADMIN])


def _fresh(path: Path) -> None:
    setup.initialize(str(path), actor=ADMIN)


@pytest.fixture
def grouped(tmp_path: Path) -> Iterator[Grouped]:
    """A fresh database file opened for grouped writing, and its path."""
    path = tmp_path / "grouped.db"
    _fresh(path)
    db = GroupedDatabase(str(path))
    try:
        yield path, db
    finally:
        db.dispose()


def test_grouped_writes_record_exactly_what_ordinary_writes_record(tmp_path: Path) -> None:
    plain_path, grouped_path = tmp_path / "plain.db", tmp_path / "grouped.db"
    _fresh(plain_path)
    plain = open_database(str(plain_path))
    try:
        plain_out = _lab(plain)
    finally:
        plain.dispose()
    _fresh(grouped_path)
    grouped = GroupedDatabase(str(grouped_path))
    try:
        with grouped.group():
            grouped_out = _lab(grouped)
        report = auditing.verify(grouped)
    finally:
        grouped.dispose()
    assert grouped_out == plain_out
    assert report["ok"] is True, report
    plain_tables, grouped_tables = _tables(plain_path), _tables(grouped_path)
    assert set(grouped_tables) == set(plain_tables)
    for name in plain_tables:
        assert grouped_tables[name] == plain_tables[name], name
    # The story really wrote through every table it touches (the comparison is not empty).
    assert len(plain_tables["replicates"]) == 6 and len(plain_tables["uses"]) == 2
    assert [r["status"] for r in plain_tables["runs"]] == ["accepted", "accepted"]
    assert plain_tables["batches"][0]["retired_at"] is not None


def test_a_group_reads_its_own_buffered_writes(grouped: Grouped) -> None:
    path, db = grouped
    with db.group():
        _admin_and_technician(db)
        made = batches.make_batch(db, actor=TECH, spec="NaOH-0.1N", volume="1000",
                                  solute_mass="4.0400", at="2026-06-01T08:00")
        again = batches.make_batch(db, actor=TECH, spec="NaOH-0.1N", volume="1000",
                                   solute_mass="4.0400", at="2026-06-01T08:30")
        # Read back inside the same group, before anything was committed.
        shown = batches.show_batch(db, made.batch)
        assert shown.batch == made.batch
        assert again.batch != made.batch  # the next code saw the first one
    con = sqlite3.connect(path)
    try:
        codes = [r[0] for r in con.execute("SELECT code FROM batches ORDER BY id")]
        head = con.execute("SELECT seq FROM audit_head").fetchone()[0]
        last = con.execute("SELECT max(seq) FROM audit_events").fetchone()[0]
    finally:
        con.close()
    assert codes == [made.batch, again.batch]
    assert head == last


def test_a_refusal_inside_a_group_rolls_the_whole_group_back(grouped: Grouped) -> None:
    path, db = grouped
    before = _tables(path)
    with pytest.raises(DatabaseError, match="rolled back"), db.group():
        _admin_and_technician(db)
        made = batches.make_batch(db, actor=TECH, spec="NaOH-0.1N", volume="1000",
                                  solute_mass="4.0400", at="2026-06-01T08:00")
        with pytest.raises(Refused, match="may not be used"):  # never standardized
            batches.use_batch(db, actor=TECH, code=made.batch, volume="5",
                              purpose="a draw too early", at="2026-06-01T09:00")
    assert _tables(path) == before


def test_a_group_refuses_a_change_to_a_column_that_never_changes(grouped: Grouped) -> None:
    from prepbook.lab.common import write
    from prepbook.store.models import User

    path, db = grouped
    with db.group():
        people.add_user(db, actor=ADMIN, name=ADMIN, role="admin", passphrase=PASS[ADMIN],
                        actor_passphrase=None)
    before = _tables(path)
    with pytest.raises(DatabaseError, match="rolled back"), db.group(), \
            pytest.raises(IntegrityError, match="name cannot be changed"), \
            db.session() as s:
        user = s.query(User).filter_by(name=ADMIN).one()
        user.name = "someone-else"
        write(s, ADMIN, "user.rename", user)
    assert _tables(path) == before


def test_verify_inside_a_group_sees_the_buffered_rows_and_events(grouped: Grouped) -> None:
    from prepbook.store import audit

    _, db = grouped
    with db.group():
        _admin_and_technician(db)
        batches.make_batch(db, actor=TECH, spec="NaOH-0.1N", volume="1000",
                           solute_mass="4.0400", at="2026-06-01T08:00")
        # Events and the head wait in the buffer (no service statement names an
        # audit table); a verify in the same transaction must still see them all.
        with db.session() as s:
            report = audit.verify(s)
            head = s.execute(text("SELECT seq FROM audit_head")).scalar_one()
        assert report.ok, report.problems
        assert report.events == head
