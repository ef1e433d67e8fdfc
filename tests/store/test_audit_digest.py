"""A run's computed result enters the audit trail as its fingerprint; old events keep the text.

``runs.result_json`` (verdict, checks, uncertainty budget: kilobytes of JSON derived
from the readings) is snapshotted as ``sha256:<hex of its UTF-8 text>``; the
readings and the result (masses, volumes, normality, factor, status) stay in full.
Events written before that hold the full text; they still verify, and the row
check accepts either form while still finding an edit to the text.
"""

from __future__ import annotations

import hashlib
import json
import shutil
import sqlite3
from pathlib import Path

import pytest
from sqlalchemy import select, text

from prepbook.store import audit
from prepbook.store.audit import writing
from prepbook.store.engine import Database
from prepbook.store.models import AUDITED_TABLES, AuditEvent, Run
from prepbook.store.snapshot import digested_columns, fingerprint, legacy_to_digest, snapshot
from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli, raw_sql
from tests.tampering import drop_guards, guarded_again, missing_guards

from .conftest import add_batch, now

FIXTURES = Path(__file__).resolve().parent.parent / "fixtures"
OLD_LAB = FIXTURES / "lab-ff8077f934d0.sqlite3"

# An invented computed result, with a non-ASCII character so the UTF-8 encoding counts.
RESULT = json.dumps(
    {"verdict": "pass", "checks": [{"name": "rsd", "message": "RSD 0.05 % ≤ 0.2 %"}]},
    sort_keys=True,
    ensure_ascii=False,
)


def _sha256_of(value: str) -> str:
    # Computed here, independently of snapshot.fingerprint.
    return "sha256:" + hashlib.sha256(value.encode("utf-8")).hexdigest()


def _legacy_snapshot(row: object) -> dict:
    """The snapshot as written before result_json was digested: the full text."""
    values = snapshot(row)  # type: ignore[arg-type]
    if isinstance(row, Run):
        values["result_json"] = row.result_json
    return values


def _add_run(
    db: Database,
    *,
    legacy: bool = False,
    monkeypatch: pytest.MonkeyPatch | None = None,
    indicator: str | None = "phenolphthalein",
) -> None:
    """Batch B-1 and its run R-1 (events 1-3); ``legacy`` writes the run's event the old way."""
    with db.session() as session:
        batch = add_batch(session, "B-1")
        run = Run(
            code="R-1",
            batch=batch,
            method="direct",
            temperature_c_text="20",
            blank_ml_text="0",
            indicator=indicator,
            performed_at=now(),
            recorded_at=now(),
            analyst="ana",
            status="awaiting-review",
            normality=0.10012345678901234,
            factor=1.0012345678901234,
            sd=2.1e-5,
            rsd_percent=0.021,
            u=4.4e-5,
            U=8.8e-5,
            k=2.0,
            result_json=RESULT,
        )
        session.add(run)
        if legacy:
            assert monkeypatch is not None
            with monkeypatch.context() as patch:
                patch.setattr(writing, "snapshot", _legacy_snapshot)
                audit.record(session, actor="ana", action="standardize", row=run)
        else:
            audit.record(session, actor="ana", action="standardize", row=run)


def _run_event(db: Database) -> dict:
    with db.session(write=False) as session:
        event = session.scalars(
            select(AuditEvent).where(AuditEvent.record_type == "runs").order_by(AuditEvent.seq)
        ).all()[-1]
        return json.loads(event.values)


def _tamper(db: Database, sql: str) -> None:
    """Edit the database behind prepbook's back (on SQLite or PostgreSQL alike), the
    guard triggers dropped for it and put back after."""
    with guarded_again(db.path or db.url), db.engine.begin() as conn:
        conn.execute(text(sql))


def _problems(db: Database) -> tuple[str, ...]:
    with db.session(write=False) as session:
        return audit.verify(session).problems


# --- today's form ------------------------------------------------------------------------


def test_only_computed_results_curve_files_and_passphrase_hashes_are_digested() -> None:
    marked = {name: digested_columns(table) for name, table in AUDITED_TABLES.items()}
    assert {name: cols for name, cols in marked.items() if cols} == {
        "runs": ("result_json",), "replicate_curves": ("content",),
        "assays": ("result_json",), "users": ("passphrase_hash",)}


def test_a_run_snapshot_holds_the_fingerprint_of_its_result_text(db: Database) -> None:
    _add_run(db)
    values = _run_event(db)
    assert values["result_json"] == _sha256_of(RESULT)
    # The record itself stays in full, digit for digit.
    assert values["normality"] == 0.10012345678901234
    assert values["factor"] == 1.0012345678901234
    assert values["status"] == "awaiting-review"
    assert values["temperature_c_text"] == "20" and values["blank_ml_text"] == "0"
    with db.session(write=False) as session:
        run = session.scalars(select(Run)).one()
        assert run.result_json == RESULT  # the row keeps the text; only the trail digests
        assert json.loads(json.dumps(snapshot(run))) == values
    assert _problems(db) == ()


def test_an_edited_result_text_is_named(db: Database) -> None:
    _add_run(db)
    _tamper(db, "UPDATE runs SET result_json = replace(result_json, 'pass', 'fail')")
    assert _problems(db) == (
        "runs #1 (code R-1) differs from its last audited state in: result_json",
    )


def test_a_result_text_replaced_by_its_own_fingerprint_is_named(db: Database) -> None:
    # The fingerprint stands for the text; the text "sha256:..." is a different text.
    _add_run(db)
    _tamper(db, f"UPDATE runs SET result_json = '{_sha256_of(RESULT)}'")
    assert _problems(db) == (
        "runs #1 (code R-1) differs from its last audited state in: result_json",
    )


# --- events written before the digest (legacy form) -----------------------------------------


def test_an_event_holding_the_full_result_text_still_verifies(
    db: Database, monkeypatch: pytest.MonkeyPatch
) -> None:
    _add_run(db, legacy=True, monkeypatch=monkeypatch)
    assert _run_event(db)["result_json"] == RESULT  # the old form, as written then
    assert _problems(db) == ()


def test_a_legacy_event_still_finds_an_edit_to_the_result_text(
    db: Database, monkeypatch: pytest.MonkeyPatch
) -> None:
    _add_run(db, legacy=True, monkeypatch=monkeypatch)
    _tamper(db, "UPDATE runs SET result_json = replace(result_json, 'pass', 'fail')")
    assert _problems(db) == (
        "runs #1 (code R-1) differs from its last audited state in: result_json",
    )


def test_a_legacy_event_names_only_the_column_that_was_edited(
    db: Database, monkeypatch: pytest.MonkeyPatch
) -> None:
    _add_run(db, legacy=True, monkeypatch=monkeypatch)
    _tamper(db, "UPDATE runs SET factor = 1.5")
    assert _problems(db) == ("runs #1 (code R-1) differs from its last audited state in: factor",)


def test_a_legacy_event_with_an_edited_text_elsewhere_is_named(
    db: Database, monkeypatch: pytest.MonkeyPatch
) -> None:
    # Another text column holds what looks like the digested key: JSON escapes its
    # quotes, so it cannot pass for the real one.
    trick = ',"result_json":"x"'
    _add_run(db, legacy=True, monkeypatch=monkeypatch, indicator=trick)
    assert _problems(db) == ()
    _tamper(db, "UPDATE runs SET indicator = 'methyl orange'")
    assert _problems(db) == (
        "runs #1 (code R-1) differs from its last audited state in: indicator",
    )


def test_a_change_after_a_legacy_event_is_recorded_in_todays_form(
    db: Database, monkeypatch: pytest.MonkeyPatch
) -> None:
    _add_run(db, legacy=True, monkeypatch=monkeypatch)
    with db.session() as session:
        run = session.scalars(select(Run)).one()
        run.status = "accepted"
        audit.record(session, actor="cleo", action="review accept", row=run)
    values = _run_event(db)
    assert values["status"] == "accepted" and values["result_json"] == _sha256_of(RESULT)
    assert _problems(db) == ()


def test_the_legacy_text_is_compared_in_todays_form() -> None:
    table = AUDITED_TABLES["runs"]
    trick = ',"result_json":"x"'
    old = {"id": 1, "indicator": trick, "result_json": RESULT, "status": "accepted"}
    today = {**old, "result_json": _sha256_of(RESULT)}
    assert legacy_to_digest(table, old) == today
    assert legacy_to_digest(table, today) == today  # already a fingerprint: kept
    assert legacy_to_digest(table, {**old, "result_json": None})["result_json"] is None
    assert fingerprint(RESULT) == _sha256_of(RESULT)


# --- a database from an earlier release --------------------------------------------------------


def test_an_upgraded_old_lab_verifies_and_still_finds_a_result_edit(tmp_path: Path) -> None:
    path = tmp_path / "lab.db"
    shutil.copyfile(OLD_LAB, path)
    con = sqlite3.connect(path)
    try:
        legacy = con.execute(
            "SELECT count(*) FROM audit_events WHERE record_type = 'runs'"
            """ AND "values" LIKE '%"result_json":"{%'"""
        ).fetchone()[0]
        code = con.execute("SELECT code FROM runs WHERE id = 1").fetchone()[0]
    finally:
        con.close()
    assert legacy > 0, "the fixture should hold runs events with the full result text"
    cli = Cli(path)
    cli.ok("init", user="ada")
    verdict = cli.json("audit", "verify")
    assert verdict["ok"] is True, verdict["problems"]
    drop_guards(path, ["runs"])  # as the owner of the file can
    raw_sql(
        path,
        "UPDATE runs SET result_json = replace(result_json, '\"verdict\"', "
        "'\"verdict \"') WHERE id = 1",
    )
    result = cli("audit", "verify", "--json")
    assert result.exit_code == 1
    assert json.loads(result.stdout)["problems"] == [
        *missing_guards(path, "runs"),
        f"runs #1 (code {code}) differs from its last audited state in: result_json",
    ]


def test_a_column_added_since_an_event_matches_while_empty_and_is_named_once_set(
        tmp_path: Path) -> None:
    # The old lab's lots were audited before lots had a density column (revision
    # c4d8e1f2a735): empty, the column matches; a value slipped in is named.
    path = tmp_path / "lab.db"
    shutil.copyfile(OLD_LAB, path)
    cli = Cli(path)
    cli.ok("init", user="ada")
    assert cli.json("audit", "verify")["ok"] is True
    con = sqlite3.connect(path)
    try:
        lot_id, code = con.execute("SELECT id, code FROM lots ORDER BY id LIMIT 1").fetchone()
    finally:
        con.close()
    drop_guards(path, ["lots"])
    raw_sql(path, "UPDATE lots SET density_text = '1.18' WHERE id = ?", lot_id)
    result = cli("audit", "verify", "--json")
    assert result.exit_code == 1
    assert json.loads(result.stdout)["problems"] == [
        *missing_guards(path, "lots"),
        f"lots #{lot_id} (code {code}) differs from its last audited state in: density_text",
    ]


# --- through the command line -----------------------------------------------------------------


def test_a_standardization_is_shown_from_the_run_and_audited_by_fingerprint(
    bench: Cli,  # noqa: F811
) -> None:
    batch = _make_batch(bench)
    run = _standardize(bench, batch)["run"]
    shown = bench.json("batch", "show", batch)["runs"][0]
    assert shown["run"] == run
    assert shown["checks"], "the checks come from the run's own result text"
    assert bench.json("audit", "verify")["ok"] is True
    drop_guards(bench.db, ["runs"])  # as the owner of the file can
    raw_sql(
        bench.db, "UPDATE runs SET result_json = replace(result_json, '\"checks\"', '\"checks \"')"
    )
    result = bench("audit", "verify", "--json")
    assert result.exit_code == 1
    problems = json.loads(result.stdout)["problems"]
    assert problems == [*missing_guards(bench.db, "runs"),
                        f"runs #1 (code {run}) differs from its last audited state in: result_json"]
