"""A second database as witness: the attacks on the trail it is there to name.

Each attack is written first as the attacker would do it, with write access to the
lab's database (raw SQL, the guards dropped and put back): the trail cut short with
the database's own checkpoints, an older copy put back, the history rewritten. The
witness database (a SQLite file here, a database of the test server on PostgreSQL)
receives every checkpoint as it is made, and ``verify`` holds the trail against it
through the same comparison as the witness folder's. A witness that cannot be reached
does not stop a write; verify lists the checkpoints it lacks.
"""

from __future__ import annotations

import re
import sqlite3
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest
from sqlalchemy import create_engine, make_url, select, text
from sqlalchemy.exc import DBAPIError
from sqlalchemy.pool import NullPool

from prepbook.store import audit
from prepbook.store.audit import witness_db
from prepbook.store.engine import Database, open_database
from tests.conftest import on_postgres, scratch_pg_database

from .test_audit_checkpoints import _lab, _rehash, _sql, _truncate_to_three


@pytest.fixture
def witness_url(tmp_path: Path) -> Iterator[str]:
    """An empty second database, for the witness table (not made yet)."""
    if on_postgres():
        with scratch_pg_database() as url:
            yield url
    else:
        yield f"sqlite:///{tmp_path / 'qa' / 'witness.db'}"


@pytest.fixture
def witnessed(witness_url: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> str:
    """The lab's signing key and a witness database with its table, named before the
    first write; no witness folder."""
    (tmp_path / "qa").mkdir(exist_ok=True)
    audit.new_signing_key(tmp_path / "qa" / "lab.pem")
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(tmp_path / "qa" / "lab.pem"))
    witness_db.create(witness_url)
    monkeypatch.setenv("PREPBOOK_WITNESS_DATABASE", witness_url)
    return witness_url


def _verify(db: Database, url: str | None) -> audit.VerifyReport:
    with db.session(write=False) as s:
        return audit.verify(s, witness_db=url)


def _witnessed_rows(url: str) -> list[tuple[int, str]]:
    engine = create_engine(url, poolclass=NullPool)
    try:
        with engine.connect() as conn:
            table = witness_db.TABLE
            return [(int(r.events), r.head_hash) for r in conn.execute(
                select(table.c.events, table.c.head_hash).order_by(table.c.events))]
    finally:
        engine.dispose()


def _assert_shortened(rep: audit.VerifyReport, events: int, attested: int) -> None:
    assert not rep.ok
    assert any(p.startswith(f"{events} events, but the checkpoint of ")
               and p.endswith(f"(witness database) attests {attested}: the trail was "
                              "shortened or rolled back") for p in rep.problems), rep.problems


def test_every_checkpoint_is_appended_to_the_witness_database(
        db: Database, witnessed: str) -> None:
    _lab(db)
    rows = _witnessed_rows(witnessed)
    assert [events for events, _ in rows] == [2, 3, 4]  # one per write transaction
    rep = _verify(db, witnessed)
    assert rep.ok, rep.problems
    assert rep.witnessed_events == 4 and rep.notes == ()
    assert rows[-1][1] == rep.head_hash


def test_tail_truncation_passes_without_the_witness_and_is_named_with_it(
        db: Database, witnessed: str) -> None:
    _lab(db)
    _truncate_to_three(db)  # the database's own checkpoints of event 4 removed too
    without = _verify(db, None)
    assert without.ok and "cannot be ruled out" in without.notes[0]
    _assert_shortened(_verify(db, witnessed), 3, 4)


def test_a_rewritten_history_is_named_by_the_witness_database(
        db: Database, witnessed: str) -> None:
    _lab(db)
    # The attacker names another actor of a batch's event, re-hashes the unkeyed chain
    # whole and removes the database's own checkpoints, which no longer fit.
    _sql(db, "UPDATE audit_events SET actor = 'mallory' WHERE seq = 2")
    _rehash(db, keyed_ids=False)
    _sql(db, "DELETE FROM audit_checkpoints")
    assert _verify(db, None).ok  # the chain alone cannot see it
    rep = _verify(db, witnessed)
    assert not rep.ok
    rewritten = [p for p in rep.problems if "(witness database) attests" in p]
    assert rewritten and all(p.startswith("event #") and p.endswith(
        "the trail was rolled back or rewritten") for p in rewritten), rep.problems


@pytest.mark.sqlite_only(reason="puts an older copy of the SQLite file in its place")
def test_a_rollback_to_an_older_copy_is_named_by_the_witness_database(
        db: Database, witnessed: str, tmp_path: Path) -> None:
    from .conftest import add_batch

    with db.session() as s:
        add_batch(s, "B-1")
    path = Path(str(db.engine.url.database))
    older = tmp_path / "older.db"
    source, copy = sqlite3.connect(path), sqlite3.connect(older)
    source.backup(copy)  # a consistent copy, as `prepbook backup` makes
    source.close()
    copy.close()
    with db.session() as s:
        add_batch(s, "B-2")
    # The older copy verified as the lab's database (as if put back in its place).
    db = open_database(str(older))
    _assert_shortened(_verify(db, witnessed), 2, 3)


def test_an_unreachable_witness_does_not_stop_the_write_and_verify_lists_the_gap(
        db: Database, witnessed: str, monkeypatch: pytest.MonkeyPatch,
        capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    from .conftest import add_batch

    with db.session() as s:
        add_batch(s, "B-1")  # witnessed: events 2
    unreachable = f"sqlite:///{tmp_path / 'gone' / 'witness.db'}"
    monkeypatch.setenv("PREPBOOK_WITNESS_DATABASE", unreachable)
    with db.session() as s:
        add_batch(s, "B-2")  # recorded all the same: events 3
    err = capsys.readouterr().err
    assert "prepbook: warning: recorded, and checkpoint 3-" in err
    assert "kept in the database, but NOT witnessed: the witness database" in err
    assert "does not exist" in err
    with db.session(write=False) as s:
        assert str(audit.head_code(s)).startswith("3-")
    # Verified against the witness that was reachable: the gap is listed.
    rep = _verify(db, witnessed)
    assert rep.ok, rep.problems
    assert rep.witnessed_events == 2
    assert any(n.startswith("1 checkpoint(s) kept in the database are not in the witness "
                            "database") and "(attesting events #3)" in n
               for n in rep.notes), rep.notes
    # Verified against the unreachable one: it says it cannot read it.
    gone = _verify(db, unreachable)
    assert not gone.ok
    assert any("the witness database" in p and "does not exist" in p
               for p in gone.problems), gone.problems


def test_a_witness_database_of_another_lab_is_named(
        db: Database, witness_url: str, tmp_path: Path) -> None:
    from .conftest import add_batch

    (tmp_path / "qa").mkdir()
    witness_db.create(witness_url)  # holds another lab's checkpoint, none of this one
    witness_db.append(witness_url, {
        "lab_id": "0" * 32, "events": 1, "head_hash": "sha256:00",
        "made_at": "2026-12-01T10:00:00.000000", "public_key": "00", "signature": "00"})
    with db.session() as s:
        add_batch(s, "B-1")
    rep = _verify(db, witness_url)
    assert not rep.ok
    assert any(p.startswith("the witness database holds checkpoints of other trails "
                            f"({'0' * 32}) and none of this one") for p in rep.problems), \
        rep.problems


@pytest.mark.sqlite_only(reason="the SQLite witness file's own triggers")
def test_a_sqlite_witness_refuses_to_change_or_delete_a_checkpoint(
        db: Database, witnessed: str) -> None:
    _lab(db)
    path = witnessed.removeprefix("sqlite:///")
    with sqlite3.connect(path) as conn:
        for statement in ("UPDATE prepbook_witness_checkpoints SET events = 1",
                          "DELETE FROM prepbook_witness_checkpoints"):
            with pytest.raises(sqlite3.DatabaseError, match="prepbook: prepbook_witness"):
                conn.execute(statement)


README = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")


def _witness_grants() -> str:
    match = re.search(r"<!-- postgresql witness roles[^>]*-->\s*```sql\n(.*?)```", README,
                      re.S)
    assert match, "README has no PostgreSQL witness role block"
    return match.group(1)


@pytest.mark.skipif(not on_postgres(), reason="PostgreSQL accounts and grants")
def test_the_readme_witness_grants_let_a_bench_only_add_rows(
        db: Database, witness_url: str, tmp_path: Path,
        monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    # Attack: the benches' account, used from a SQL console, takes back or rewrites a
    # witnessed checkpoint. The README's grants let it add rows and nothing else.
    witness_db.create(witness_url)  # as the witness database's owner
    role = f"prepbook_bench_{uuid.uuid4().hex[:12]}"
    secret = uuid.uuid4().hex
    owner = create_engine(witness_url, poolclass=NullPool)
    bench_url = make_url(witness_url).set(username=role, password=secret) \
        .render_as_string(hide_password=False)
    try:
        with owner.begin() as conn:
            conn.execute(text(f"CREATE ROLE {role} LOGIN PASSWORD '{secret}'"))
            for statement in filter(str.strip, _witness_grants().split(";")):
                conn.execute(text(statement.replace("prepbook_bench", role)))
        (tmp_path / "qa").mkdir(exist_ok=True)
        audit.new_signing_key(tmp_path / "qa" / "lab.pem")
        monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(tmp_path / "qa" / "lab.pem"))
        monkeypatch.setenv("PREPBOOK_WITNESS_DATABASE", bench_url)
        _lab(db)  # the benches witness through their own account
        assert "NOT witnessed" not in capsys.readouterr().err
        assert [events for events, _ in _witnessed_rows(witness_url)] == [2, 3, 4]
        bench = create_engine(bench_url, poolclass=NullPool)
        try:
            for sql in ("UPDATE prepbook_witness_checkpoints SET events = 9",
                        "DELETE FROM prepbook_witness_checkpoints",
                        "TRUNCATE prepbook_witness_checkpoints",
                        "SELECT * FROM prepbook_witness_checkpoints",
                        "DROP TABLE prepbook_witness_checkpoints"):
                with pytest.raises(DBAPIError) as caught, bench.begin() as conn:
                    conn.execute(text(sql))
                assert "permission denied" in str(caught.value.orig) or \
                    "must be owner" in str(caught.value.orig), sql
        finally:
            bench.dispose()
        rep = _verify(db, witness_url)  # QA reads with the owner's account
        assert rep.ok and rep.witnessed_events == 4, rep.problems
    finally:
        with owner.begin() as conn:
            conn.execute(text(f"DROP OWNED BY {role}"))
            conn.execute(text(f"DROP ROLE IF EXISTS {role}"))
        owner.dispose()
