"""The hash-chained audit trail: recording, verification, tampering found and named."""

from __future__ import annotations

import hashlib
import json
import sqlite3
import threading
from datetime import UTC, datetime, timedelta, timezone
from pathlib import Path

import msgspec
import pytest
from sqlalchemy import select

from prepbook.errors import InvalidInput
from prepbook.store import audit
from prepbook.store.audit import chain
from prepbook.store.engine import Database, open_database
from prepbook.store.models import AuditEvent, AuditHead, Batch, Setting
from prepbook.store.snapshot import snapshot, snapshot_mapping
from tests.tampering import drop_guards, guarded_again, restore_guards

from .conftest import add_batch, now


def _write_lab(db: Database) -> None:
    """Spec, three batches, one retired: five events for six writes' worth of history."""
    with db.session() as session:
        add_batch(session, "B-1")  # events 1 (spec) and 2
        add_batch(session, "B-2")  # event 3
    with db.session() as session:
        add_batch(session, "B-3")  # event 4
    with db.session() as session:
        batch = session.scalars(select(Batch).where(Batch.code == "B-2")).one()
        batch.retired_at = now()
        batch.retired_by = "ana"
        batch.retired_reason = "contaminated"
        audit.record(session, actor="ana", action="batch retire", row=batch, reason="contaminated")
        # event 5


def _verify(db: Database) -> audit.VerifyReport:
    with db.session(write=False) as session:
        return audit.verify(session)


def _raw(db_file: Path, *statements: str) -> None:
    """Change the file behind prepbook's back, as someone with a SQLite shell could
    (the guard triggers dropped first and put back after)."""
    with guarded_again(db_file):
        con = sqlite3.connect(db_file)
        try:
            for statement in statements:
                con.execute(statement)
            con.commit()
        finally:
            con.close()


def test_an_empty_trail_verifies(db: Database) -> None:
    rep = _verify(db)
    assert (rep.ok, rep.events, rep.head_hash, rep.problems) == (True, 0, None, ())
    assert rep.checkpoint is None and rep.witnessed_events is None


def test_recorded_events_chain_and_verify(db: Database) -> None:
    _write_lab(db)
    report = _verify(db)
    assert report.problems == ()
    assert report.ok and report.events == 5
    with db.session(write=False) as session:
        events = session.scalars(select(AuditEvent).order_by(AuditEvent.seq)).all()
        assert [e.seq for e in events] == [1, 2, 3, 4, 5]
        assert events[0].prev_hash is None
        assert all(b.prev_hash == a.hash for a, b in zip(events, events[1:], strict=False))
        assert report.head_hash == events[-1].hash


def test_event_hash_is_sha256_of_the_documented_fields(db: Database) -> None:
    # Recompute one hash independently of audit.py, from the field list in its docstring.
    with db.session() as session:
        add_batch(session, "B-1")
    with db.session(write=False) as session:
        event = session.scalars(select(AuditEvent).where(AuditEvent.seq == 2)).one()
        fields = [
            event.seq,
            event.at.isoformat(timespec="microseconds"),
            event.actor,
            event.action,
            event.record_type,
            event.record_id,
            event.values,
            event.reason,
            None,
            event.prev_hash,
            event.os_login,
            event.host,
            event.key_id,
        ]
        assert event.os_login and event.host and event.key_id is None
        payload = json.dumps(fields, separators=(",", ":"), ensure_ascii=False).encode()
        assert event.hash == "sha256:" + hashlib.sha256(payload).hexdigest()
        batch = session.scalars(select(Batch)).one()
        assert json.loads(event.values) == snapshot(batch)


def test_event_snapshot_holds_the_whole_row_after_the_write(db: Database) -> None:
    _write_lab(db)
    with db.session(write=False) as session:
        last = session.scalars(select(AuditEvent).where(AuditEvent.seq == 5)).one()
        values = json.loads(last.values)
        assert last.record_type == "batches" and last.reason == "contaminated"
        assert values["code"] == "B-2" and values["retired_reason"] == "contaminated"
        assert set(values) == {c.name for c in Batch.__table__.columns}


def test_times_are_stored_in_utc(db: Database) -> None:
    bench_time = datetime(2030, 3, 4, 9, 30, tzinfo=timezone(timedelta(hours=-5)))
    with db.session() as session:
        setting = Setting(key="lab", value="QC", updated_at=now(), updated_by="ana")
        session.add(setting)
        audit.record(session, actor="ana", action="set", row=setting, performed_at=bench_time)
    with db.session(write=False) as session:
        event = session.scalars(select(AuditEvent)).one()
        assert event.performed_at == datetime(2030, 3, 4, 14, 30)
        assert abs(event.at - datetime.now(UTC).replace(tzinfo=None)) < timedelta(minutes=1)
    assert _verify(db).ok


def test_record_refuses_a_missing_actor(db: Database) -> None:
    with pytest.raises(InvalidInput, match="actor"), db.session() as session:
        setting = Setting(key="lab", value="QC", updated_at=now(), updated_by="ana")
        session.add(setting)
        audit.record(session, actor=" ", action="set", row=setting)


def test_snapshot_is_the_same_on_every_read(db: Database) -> None:
    with db.session() as session:
        written = snapshot(add_batch(session, "B-1"))
    reads = []
    for _ in range(2):
        with db.session(write=False) as session:
            reads.append(snapshot(session.scalars(select(Batch)).one()))
    with db.session(write=False) as session:
        table = Batch.__table__
        raw = session.connection().execute(select(table)).mappings().one()
        reads.append(snapshot_mapping(table, raw))
    assert reads == [written, written, written]
    assert written["expires"] == "2031-01-31"
    assert written["theoretical_normality"] == 0.1025
    assert json.loads(json.dumps(written)) == written


def test_snapshot_canonicalises_types(db: Database) -> None:
    with db.session() as session:
        batch = add_batch(session, "B-1")
        batch_snapshot = snapshot(batch)
    assert isinstance(batch_snapshot["made_at"], str)
    assert datetime.fromisoformat(batch_snapshot["made_at"]) == batch.made_at
    assert batch_snapshot["retired_at"] is None
    with db.session() as session:
        setting = Setting(key="k", value="v", updated_at=now(), updated_by="ana")
        session.add(setting)
        session.flush()
        assert snapshot(setting)["id"] == setting.id


# --- tampering through a raw SQLite connection -------------------------------------------


def test_edited_row_is_named_with_its_columns(db: Database, db_file: Path) -> None:
    _write_lab(db)
    _raw(db_file, "UPDATE batches SET volume_ml_text = '990', notes = 'x' WHERE code = 'B-1'")
    report = _verify(db)
    assert not report.ok
    assert report.problems == (
        "batches #1 (code B-1) differs from its last audited state in: notes, volume_ml_text",
    )


def test_a_value_of_the_wrong_type_is_reported_as_unreadable(db: Database, db_file: Path) -> None:
    # SQLite keeps text that is not a number as text in an integer column; the row
    # check converts it as record() would and says the row cannot be read.
    _write_lab(db)
    _raw(db_file, "UPDATE batches SET spec_id = 'one' WHERE code = 'B-1'")
    problems = _verify(db).problems
    # The row is named on its own, and nothing else is reported (the other rows of
    # the table are still checked and found unchanged).
    assert problems == (
        "batches #1 cannot be read ('one' is not a whole number): edited outside prepbook",
    )


def test_row_added_outside_prepbook_is_named(db: Database, db_file: Path) -> None:
    _write_lab(db)
    _raw(
        db_file,
        "INSERT INTO batches (code, spec_id, method, volume_ml_text, made_at, recorded_at,"
        " made_by, expires) VALUES ('B-9', 1, 'solid', '500', '2030-01-01 00:00:00.000000',"
        " '2030-01-01 00:00:00.000000', 'mallory', '2031-01-01')",
    )
    report = _verify(db)
    assert report.problems == ("batches #4 (code B-9) has no audit event: added outside prepbook",)


def test_row_deleted_outside_prepbook_is_named(db: Database, db_file: Path) -> None:
    _write_lab(db)
    _raw(db_file, "DELETE FROM batches WHERE code = 'B-3'")
    report = _verify(db)
    assert report.problems == (
        "batches #3 (code B-3) is gone but its audit events remain: deleted outside prepbook",
    )


def test_edited_event_values_are_found(db: Database, db_file: Path) -> None:
    _write_lab(db)
    _raw(
        db_file,
        'UPDATE audit_events SET "values" = replace("values", \'"1000"\', \'"990"\') WHERE seq = 4',
    )
    problems = _verify(db).problems
    assert "audit event #4 (batches #3) does not match its hash: edited outside prepbook" in (
        problems
    )
    assert "batches #3 (code B-3) differs from its last audited state in: volume_ml_text" in (
        problems
    )
    assert len(problems) == 2


def test_deleted_last_event_is_found(db: Database, db_file: Path) -> None:
    _write_lab(db)
    _raw(db_file, "DELETE FROM audit_events WHERE seq = 5")
    problems = _verify(db).problems
    assert (
        "the audit head names event #5 but the trail ends at #4: events removed from the end"
        in problems
    )
    # The retirement is now unaudited: the row no longer equals its last remaining event.
    assert (
        "batches #2 (code B-2) differs from its last audited state in: "
        "retired_at, retired_by, retired_reason" in problems
    )
    assert len(problems) == 2


def test_deleted_middle_event_is_found(db: Database, db_file: Path) -> None:
    _write_lab(db)
    _raw(db_file, "DELETE FROM audit_events WHERE seq = 3")
    problems = _verify(db).problems
    assert "audit event #3 missing before #4: removed outside prepbook" in problems
    assert len(problems) == 1  # batch B-2 still matches its later event #5


def test_rewritten_chain_without_the_head_is_found(db: Database, db_file: Path) -> None:
    _write_lab(db)
    _raw(db_file, "UPDATE audit_events SET prev_hash = 'sha256:00' WHERE seq = 3")
    problems = _verify(db).problems
    assert any("#3 does not link to event #2" in p for p in problems)
    assert any("audit event #3 (batches #2) does not match its hash" in p for p in problems)


def test_unreadable_time_in_an_event_is_reported_not_fatal(db: Database, db_file: Path) -> None:
    _write_lab(db)
    _raw(db_file, "UPDATE audit_events SET at = 'yesterday' WHERE seq = 2")
    report = _verify(db)
    assert report.events == 5
    assert report.problems == ("audit event #2 has an unreadable time: edited outside prepbook",)


# --- keyed chain ---------------------------------------------------------------------------


@pytest.fixture
def key_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    path = tmp_path / "audit.key"
    path.write_bytes(b"invented lab secret for tests\n")
    monkeypatch.setenv(audit.KEY_ENV, str(path))
    return path


def test_keyed_chain_verifies_with_the_right_key(db: Database, key_file: Path) -> None:
    _write_lab(db)
    report = _verify(db)
    assert report.ok, report.problems
    assert report.head_hash is not None and report.head_hash.startswith("hmac-sha256:")


def test_keyed_chain_without_the_key_is_reported(
    db: Database, key_file: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    _write_lab(db)
    monkeypatch.delenv(audit.KEY_ENV)
    report = _verify(db)
    assert not report.ok
    assert report.problems[0].startswith("this trail is keyed (key ")
    assert report.problems[0].endswith(f"no audit key is set here: it cannot be verified; "
                                       f"set {audit.KEY_ENV}")
    assert report.problems[1:] == (
        "5 audit event(s) are keyed (hmac-sha256) and cannot be checked without the key: "
        f"set {audit.KEY_ENV}",
    )


def test_keyed_chain_with_a_wrong_key_is_reported(
    db: Database, key_file: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    _write_lab(db)
    wrong = tmp_path / "wrong.key"
    wrong.write_bytes(b"another secret, not the lab one")
    monkeypatch.setenv(audit.KEY_ENV, str(wrong))
    report = _verify(db)
    assert not report.ok
    # Named for what happened: written with another key than the one set here, not edited.
    assert "is not the one this trail is keyed with" in report.problems[0]
    assert sum("was written with a different key" in p for p in report.problems) == 5
    assert not any("edited" in p for p in report.problems)


def test_missing_key_file_is_reported(
    db: Database, key_file: Path, monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    _write_lab(db)
    monkeypatch.setenv(audit.KEY_ENV, str(tmp_path / "gone.key"))
    report = _verify(db)
    assert not report.ok
    assert any("cannot read the audit key file" in p for p in report.problems)
    with pytest.raises(InvalidInput, match="audit key file"), db.session() as session:
        add_batch(session, "B-4")


def test_forged_unkeyed_rewrite_of_a_keyed_chain_is_found(
    db: Database, db_file: Path, key_file: Path
) -> None:
    # Someone without the key edits an event and recomputes a plain SHA-256 chain from it.
    _write_lab(db)
    drop_guards(db_file)  # as the owner of the file can; put back after the rewrite
    con = sqlite3.connect(db_file)
    try:
        rows = con.execute(
            'SELECT seq, at, actor, action, record_type, record_id, "values", reason,'
            " performed_at FROM audit_events ORDER BY seq"
        ).fetchall()
        prev = None
        for seq, at, actor, action, rtype, rid, values, reason, performed in rows:
            if seq == 2:
                values = values.replace('"1000"', '"990"')
            at_iso = datetime.fromisoformat(at).isoformat(timespec="microseconds")
            fields = [seq, at_iso, actor, action, rtype, rid, values, reason, performed, prev]
            payload = json.dumps(fields, separators=(",", ":"), ensure_ascii=False).encode()
            digest = "sha256:" + hashlib.sha256(payload).hexdigest()
            con.execute(
                'UPDATE audit_events SET "values" = ?, prev_hash = ?, hash = ? WHERE seq = ?',
                (values, prev, digest, seq),
            )
            prev = digest
        con.execute("UPDATE audit_head SET hash = ?", (prev,))
        con.execute("UPDATE batches SET volume_ml_text = '990' WHERE id = 1")
        con.commit()
    finally:
        con.close()
    restore_guards(db_file)
    report = _verify(db)
    assert report.problems == (
        "5 audit event(s) are not keyed although an audit key is set: the chain was written "
        "or rewritten without it",
    )


# --- concurrency, log, speed ---------------------------------------------------------------


def test_two_benches_writing_at_once_serialize(db_file: Path) -> None:
    errors: list[BaseException] = []

    def bench(name: str) -> None:
        database = open_database(str(db_file))
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
    database = open_database(str(db_file))
    try:
        report = _verify(database)
    finally:
        database.dispose()
    assert report.ok, report.problems
    assert report.events == 45


def test_log_lists_events_with_filters(db: Database) -> None:
    _write_lab(db)
    with db.session(write=False) as session:
        everything = audit.log(session)
        assert [e.seq for e in everything] == [1, 2, 3, 4, 5]
        assert everything[1].record == "batches #1"
        assert everything[4].reason == "contaminated"
        assert set(msgspec.structs.asdict(everything[0])) >= {
            "seq",
            "at",
            "actor",
            "action",
            "record",
            "reason",
            "performed_at",
        }
        b2 = audit.log(session, record_type="batches", record_id=2)
        assert [(e.seq, e.action) for e in b2] == [(3, "batch make"), (5, "batch retire")]
        assert [e.seq for e in audit.log(session, limit=2)] == [4, 5]
        assert audit.log(session, actor="nobody") == []
        today = datetime.now(UTC).date()
        assert len(audit.log(session, since=today, until=today)) == 5
        assert audit.log(session, until=today - timedelta(days=1)) == []
        with pytest.raises(InvalidInput):
            audit.log(session, limit=0)


def _bulk_chain(db: Database, n: int) -> None:
    """n valid events (each settings row added, then changed once), inserted in bulk.

    Writing them through record() one transaction at a time would take minutes.
    """
    scheme, digest = chain.hasher(None)
    at = now()
    events, settings, prev = [], [], None
    for seq in range(1, n + 1):
        rid = (seq + 1) // 2
        value = "v0" if seq % 2 else "v1"
        row = {"id": rid, "key": f"k{rid}", "value": value, "updated_at": at, "updated_by": "ana"}
        values = audit.canonical_json(snapshot_mapping(Setting.__table__, row))
        if seq % 2 == 0:
            settings.append(row)
        payload = chain.payload(
            seq, chain.iso(at), "ana", "set", "settings", rid, values, None, None, prev
        )
        h = f"{scheme}:{digest(payload)}"
        events.append(
            {
                "seq": seq,
                "at": at,
                "actor": "ana",
                "action": "set",
                "record_type": "settings",
                "record_id": rid,
                "values": values,
                "reason": None,
                "performed_at": None,
                "prev_hash": prev,
                "hash": h,
            }
        )
        prev = h
    with db.engine.begin() as conn:
        conn.execute(Setting.__table__.insert(), settings)
        conn.execute(AuditEvent.__table__.insert(), events)
        head = AuditHead.__table__
        conn.execute(head.update().where(head.c.id == 1).values(seq=n, hash=prev))


@pytest.mark.slow
def test_verify_streams_a_large_trail(db: Database) -> None:
    """Verify reads the trail in a few statements and builds no ORM object per event
    (how fast that is, is measured in tests/benchmarks/bench.py, not here)."""
    from sqlalchemy import event

    n = 20_000
    _bulk_chain(db, n)
    statements: list[str] = []
    loaded: list[object] = []

    def count(_conn: object, _cursor: object, sql: str, *_: object) -> None:
        statements.append(sql)

    def load(target: object, _context: object) -> None:
        loaded.append(target)

    event.listen(db.engine, "before_cursor_execute", count)
    event.listen(AuditEvent, "load", load)
    event.listen(Setting, "load", load)
    try:
        report = _verify(db)
    finally:
        event.remove(db.engine, "before_cursor_execute", count)
        event.remove(AuditEvent, "load", load)
        event.remove(Setting, "load", load)
    assert report.ok, report.problems
    assert report.events == n
    assert loaded == []
    # A number of statements set by the schema (its check reads each table's columns,
    # indexes and triggers; then the head, the event stream, one read per table), never
    # one per event or row: here 20,000 events.
    assert len(statements) < 1_000, len(statements)


def test_payload_is_the_json_the_docstring_names() -> None:
    # The hashed text must be exactly json.dumps' bytes, odd values included.
    cases = [
        (
            1,
            "2030-01-01T00:00:00.000000",
            "ana",
            "set",
            "settings",
            7,
            '{"a":"é\\"}',
            None,
            None,
            None,
        ),
        (2, None, 'O"Brien', "batch\tmake", "batches", 3, "{}", "réason\n", "x", "sha256:ab"),
        (3, "t", "a", "b", "c", "7", "{}", None, None, None),  # a tampered text id
    ]
    for fields in cases:
        expected = json.dumps(list(fields), separators=(",", ":"), ensure_ascii=False).encode()
        assert chain.payload(*fields) == expected


# --- awkward text, odd spellings, blobs ----------------------------------------------------

TRICKY = 'tab\there\nnew line "quoted" back\\slash \x01\x1f\x7f é 漢字 😀 \u2028 end'


def test_awkward_text_verifies(db: Database) -> None:
    # Control characters, quotes, backslashes, non-ASCII letters, an emoji and a line
    # separator, in a reason and in a row's text: hashed and compared exactly.
    _write_lab(db)
    with db.session() as session:
        batch = session.scalars(select(Batch).where(Batch.code == "B-3")).one()
        batch.retired_at = now()
        batch.retired_by = "ana"
        batch.retired_reason = TRICKY
        audit.record(session, actor="ana", action="batch retire", row=batch, reason=TRICKY)
    report = _verify(db)
    assert report.ok and report.events == 6, report.problems


def test_an_event_time_spelled_the_iso_way_is_the_same_time(db: Database, db_file: Path) -> None:
    # The same time written the ISO way ('T') instead of SQLAlchemy's stored shape
    # (' '): still the same time, so still verified; another time is found.
    _write_lab(db)
    _raw(db_file, "UPDATE audit_events SET at = replace(at, ' ', 'T') WHERE seq = 3",
         "UPDATE audit_events SET performed_at = '2026-01-02 03:04:05' WHERE seq = 4")
    report = _verify(db)
    assert report.problems == (
        "audit event #4 (batches #3) does not match its hash: edited outside prepbook",)


def test_a_blob_in_an_event_is_named(db: Database, db_file: Path) -> None:
    _write_lab(db)
    _raw(db_file, "UPDATE audit_events SET actor = CAST('ana' AS BLOB) WHERE seq = 2")
    report = _verify(db)
    assert report.events == 5
    assert report.problems == (
        "audit event #2 (batches #1) cannot be read (Object of type bytes is not JSON "
        "serializable): edited outside prepbook",)


def test_rows_edited_and_deleted_in_a_table_of_text_and_times_are_named(
        db: Database, db_file: Path) -> None:
    from prepbook.store.models import Use  # noqa: PLC0415

    _write_lab(db)
    with db.session() as session:
        batch = session.scalars(select(Batch).where(Batch.code == "B-1")).one()
        for n in range(3):
            use = Use(batch_id=batch.id, used_at=now(), used_by="ben", volume_ml_text="20",
                      purpose=f"sample {n}")
            session.add(use)
            session.flush()
            audit.record(session, actor="ben", action="batch use", row=use)
    assert _verify(db).ok
    _raw(db_file, "UPDATE uses SET purpose = 'sample 9' WHERE id = 2",
         "DELETE FROM uses WHERE id = 3")
    assert _verify(db).problems == (
        "uses #2 differs from its last audited state in: purpose",
        "uses #3 is gone but its audit events remain: deleted outside prepbook",
    )


def test_a_row_time_stored_the_iso_way_is_the_same_time(db: Database, db_file: Path) -> None:
    # 'T' instead of SQLAlchemy's space: the same time, read the same both ways.
    _write_lab(db)
    _raw(db_file, "UPDATE batches SET made_at = replace(made_at, ' ', 'T') WHERE id = 1",
         "UPDATE audit_events SET at = replace(at, ' ', 'T') WHERE seq = 1")
    assert _verify(db).ok
