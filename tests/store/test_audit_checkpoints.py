"""Attacks on the trail that a chain alone cannot see, and what checkpoints add.

Each attack is written first as the attacker would do it, with write access to the
database (raw SQL on either backend), then verified twice where it applies: with no
witness (no signing key, no witness folder: the attack passes, and verify says that
truncation cannot be ruled out) and with one (signed checkpoints in the database and in
a witness folder outside it: the attack is found and named).
"""

from __future__ import annotations

import json
import socket
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import make_url, select, text

from prepbook.errors import InvalidInput, Refused
from prepbook.store import audit
from prepbook.store.audit import chain, checkpoints, writing
from prepbook.store.engine import Database
from prepbook.store.models import AuditEvent, AuditHead
from tests.tampering import guarded_again

from .conftest import add_batch
from .test_audit import key_file  # noqa: F401  (the lab's audit key, set for the test)


def _witness(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A signing key and a witness folder, both outside the database."""
    keys = tmp_path / "qa-keys"
    keys.mkdir()
    audit.new_signing_key(keys / "lab.pem")
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(keys / "lab.pem"))
    folder = tmp_path / "witness"
    folder.mkdir()
    return folder


def _lab(db: Database) -> None:
    """Three write transactions: events 1-2 (spec, B-1), 3 (B-2), 4 (B-3)."""
    with db.session() as s:
        add_batch(s, "B-1")
    with db.session() as s:
        add_batch(s, "B-2")
    with db.session() as s:
        add_batch(s, "B-3")


def _target(db: Database) -> str:
    """The database as tests/tampering.py names it (a SQLite file's path, else the URL)."""
    url = make_url(db.url)
    return str(url.database) if url.get_backend_name() == "sqlite" else db.url


def _sql(db: Database, statement: str, **params: Any) -> None:
    """Change the database behind prepbook's back, committed at once: the attacker drops
    the store's guard triggers first and puts them back after (tests/tampering.py)."""
    with guarded_again(_target(db)), db.engine.begin() as conn:
        conn.execute(text(statement), params)


def _verify(db: Database, folder: Path | None = None,
            codes: tuple[str, ...] = ()) -> audit.VerifyReport:
    with db.session(write=False) as s:
        return audit.verify(s, codes=codes, witness=folder)


def _rehash(db: Database, key: bytes | None = None, *, keyed_ids: bool = True) -> None:
    """Recompute every event's hash and link and the head, as an attacker who knows the
    documented hashed text (and, when given, the key) can."""
    scheme, digest = chain.hasher(key)
    events = AuditEvent.__table__
    with guarded_again(_target(db)), db.engine.begin() as conn:
        rows = list(conn.execute(select(events).order_by(events.c.seq)))
        prev = None
        for r in rows:
            key_id = chain.key_fingerprint(key) if keyed_ids else None
            new = f"{scheme}:" + digest(chain.payload(
                r.seq, chain.iso(r.at), r.actor, r.action, r.record_type, r.record_id,
                r.values, r.reason, chain.iso(r.performed_at), prev, r.os_login, r.host,
                key_id))
            conn.execute(events.update().where(events.c.seq == r.seq)
                         .values(hash=new, prev_hash=prev, key_id=key_id))
            prev = new
        conn.execute(AuditHead.__table__.update().values(seq=len(rows), hash=prev))


def _truncate_to_three(db: Database) -> None:
    """Tail truncation: the last event and its row gone, the head moved back, and the
    database's own checkpoints of the removed event deleted too."""
    _sql(db, "DELETE FROM batches WHERE code = 'B-3'")
    _sql(db, "DELETE FROM audit_events WHERE seq = 4")
    _sql(db, "UPDATE audit_head SET seq = 3, hash = (SELECT hash FROM audit_events "
             "WHERE seq = 3) WHERE id = 1")
    _sql(db, "DELETE FROM audit_checkpoints WHERE events > 3")


# --- tail truncation ------------------------------------------------------------------


def test_tail_truncation_passes_without_a_witness_and_says_it_cannot_be_ruled_out(
        db: Database) -> None:
    _lab(db)
    _truncate_to_three(db)
    rep = _verify(db)
    assert rep.ok and rep.events == 3  # the chain alone cannot see it ...
    assert rep.witnessed_events is None  # ... and verify says so plainly
    assert rep.notes and "cannot be ruled out" in rep.notes[0]


def test_tail_truncation_is_named_by_the_witness_folder(
        db: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    folder = _witness(tmp_path, monkeypatch)
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(folder))
    _lab(db)
    assert _verify(db, folder).witnessed_events == 4
    _truncate_to_three(db)
    rep = _verify(db, folder)
    assert not rep.ok
    shortened = [p for p in rep.problems if p.startswith("3 events, but the checkpoint of ")]
    assert shortened and shortened[0].endswith("(witness folder) attests 4: the trail was "
                                               "shortened or rolled back")


def test_deleted_last_event_whose_row_was_kept_is_named_removed(db: Database) -> None:
    _lab(db)
    _sql(db, "DELETE FROM audit_events WHERE seq = 4")
    problems = _verify(db).problems
    assert ("the audit head names event #4 but the trail ends at #3: events removed from "
            "the end") in problems
    assert ("batches #3 (code B-3) has no audit event: its audit event was removed from the "
            "end of the trail") in problems
    assert not any("added outside prepbook" in p for p in problems)


# --- a rewritten (re-hashed) unkeyed chain ----------------------------------------------


def _rewrite_actor(db: Database) -> None:
    _sql(db, "UPDATE audit_events SET actor = 'mallory' WHERE seq = 2")
    _rehash(db)


def test_rewritten_unkeyed_chain_passes_without_a_witness(db: Database) -> None:
    _lab(db)
    _rewrite_actor(db)
    rep = _verify(db)
    assert rep.ok and rep.witnessed_events is None and "cannot be ruled out" in rep.notes[0]


def test_rewritten_unkeyed_chain_is_named_by_the_checkpoints(
        db: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    folder = _witness(tmp_path, monkeypatch)
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(folder))
    _lab(db)
    _rewrite_actor(db)
    _sql(db, "DELETE FROM audit_checkpoints")  # the attacker clears what the database holds
    rep = _verify(db, folder)
    assert not rep.ok and rep.witnessed_events is None
    named = [p for p in rep.problems if p.startswith("event #4 is not the one the checkpoint")]
    assert named and named[0].endswith("(witness folder) attests: the trail was rolled back "
                                       "or rewritten")


# --- downgrade of a keyed chain to plain sha256 ------------------------------------------


def _downgrade(db: Database) -> None:
    _rehash(db, None, keyed_ids=False)
    _sql(db, "UPDATE audit_keying SET scheme = 'sha256', key_fingerprint = NULL")


def test_downgraded_keyed_chain_is_named_by_a_key_holder_and_by_a_witness(
        db: Database, key_file: Path, tmp_path: Path,  # noqa: F811
        monkeypatch: pytest.MonkeyPatch) -> None:
    folder = _witness(tmp_path, monkeypatch)
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(folder))
    _lab(db)
    _downgrade(db)
    # The key holder sees it with or without a witness.
    keyed = _verify(db)
    assert ("4 audit event(s) are not keyed although an audit key is set: the chain was "
            "written or rewritten without it") in keyed.problems
    monkeypatch.delenv(audit.KEY_ENV)
    # An auditor without the key: the bare chain passes; the checkpoints do not.
    bare_db_only = _verify(db)
    assert not bare_db_only.ok  # the database's own checkpoints attest the keyed hashes
    _sql(db, "DELETE FROM audit_checkpoints")
    assert _verify(db).ok  # nothing left inside the database to show it
    witnessed = _verify(db, folder)
    assert not witnessed.ok
    assert any(p.startswith("event #4 is not the one the checkpoint of") for p in
               witnessed.problems)


def test_the_database_checkpoints_were_witnessed(
        db: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    folder = _witness(tmp_path, monkeypatch)
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(folder))
    _lab(db)
    lines = next(folder.iterdir()).read_text(encoding="utf-8").splitlines()
    assert [json.loads(line)["events"] for line in lines] == [2, 3, 4]  # one per transaction
    rep = _verify(db, folder)
    assert rep.ok and rep.witnessed_events == 4 and rep.notes == ()
    assert rep.checkpoints_checked == 3


def test_a_holder_of_both_keys_rewriting_the_trail_is_named_by_earlier_witness_lines(
        db: Database, key_file: Path, tmp_path: Path,  # noqa: F811
        monkeypatch: pytest.MonkeyPatch) -> None:
    folder = _witness(tmp_path, monkeypatch)
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(folder))
    _lab(db)
    # An insider with the audit key and the signing key rewrites the keyed chain, clears
    # the database's checkpoints and signs a fresh one of the rewritten trail.
    _sql(db, "UPDATE audit_events SET actor = 'mallory' WHERE seq = 2")
    _rehash(db, key_file.read_bytes().strip())
    _sql(db, "DELETE FROM audit_checkpoints")
    assert _verify(db).ok  # the chain and the database alone vouch for the rewrite
    with db.session() as s:
        audit.make_checkpoint(s, audit.load_signing_key(tmp_path / "qa-keys" / "lab.pem"))
    rep = _verify(db, folder)
    assert any(p.startswith("event #2 is not the one the checkpoint of") and
               p.endswith("(witness folder) attests: the trail was rolled back or rewritten")
               for p in rep.problems)


# --- benches with no key or another key -------------------------------------------------


def _events(db: Database) -> int:
    with db.session(write=False) as s:
        return len(s.scalars(select(AuditEvent.seq)).all())


def test_a_bench_without_the_key_refuses_to_write_into_a_keyed_trail(
        db: Database, key_file: Path, tmp_path: Path,  # noqa: F811
        monkeypatch: pytest.MonkeyPatch) -> None:
    _lab(db)
    monkeypatch.delenv(audit.KEY_ENV)
    with pytest.raises(Refused, match=r"^this lab's audit trail is keyed \(key [0-9a-f]{16}\) "
                       r"and this computer has no audit key: set PREPBOOK_AUDIT_KEY_FILE; "
                       r"nothing was written$"), db.session() as s:
        add_batch(s, "B-4")
    other = tmp_path / "other.key"
    other.write_bytes(b"a secret that is not the lab's")
    monkeypatch.setenv(audit.KEY_ENV, str(other))
    with pytest.raises(Refused, match="is not this lab's"), db.session() as s:
        add_batch(s, "B-4")
    assert _events(db) == 4
    # Verify without the key on a keyed trail says it cannot verify, never ok.
    monkeypatch.delenv(audit.KEY_ENV)
    rep = _verify(db)
    assert not rep.ok and "it cannot be verified" in rep.problems[0]


def test_a_keyed_bench_refuses_to_write_into_a_plain_trail(
        db: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    _lab(db)
    path = tmp_path / "late.key"
    path.write_bytes(b"a key set after the trail began")
    monkeypatch.setenv(audit.KEY_ENV, str(path))
    with pytest.raises(Refused, match="is not keyed"), db.session() as s:
        add_batch(s, "B-4")
    assert _events(db) == 4


def test_an_event_written_with_another_key_is_named_so(
        db: Database, key_file: Path, tmp_path: Path) -> None:  # noqa: F811
    _lab(db)
    # An older prepbook let a bench with another key write one event.
    _sql(db, "UPDATE audit_events SET key_id = 'feedfacefeedface', hash = "
             "'hmac-sha256:' || :h WHERE seq = 4", h="0" * 64)
    _sql(db, "UPDATE audit_head SET hash = (SELECT hash FROM audit_events WHERE seq = 4)")
    problems = _verify(db).problems
    assert problems == (f"audit event #4 (batches #3) was written with a different key (key "
                        f"feedfacefeedface; the key set here is "
                        f"{chain.key_fingerprint(key_file.read_bytes().strip())})",)


# --- codes typed from paper ------------------------------------------------------------


def test_a_typed_code_attests_its_events(db: Database) -> None:
    _lab(db)
    code = _verify(db).checkpoint
    assert code is not None and code.startswith("4-")
    typed = code.lower().replace("o", "0")  # as a person might type it
    rep = _verify(db, codes=(typed,))
    assert rep.ok and rep.witnessed_events == 4 and rep.notes == ()
    _truncate_to_three(db)
    rep = _verify(db, codes=(code,))
    assert rep.problems == (f"3 events, but the checkpoint code {code} (typed) attests 4: "
                            "the trail was shortened or rolled back",)


def test_a_typed_code_names_a_rewritten_trail(db: Database) -> None:
    _lab(db)
    code = _verify(db).checkpoint
    assert code is not None
    _rewrite_actor(db)
    assert _verify(db, codes=(code,)).problems == (
        f"event #4 is not the one the checkpoint code {code} (typed) attests: the trail "
        "was rolled back or rewritten",)


def test_a_malformed_code_is_refused(db: Database) -> None:
    with pytest.raises(InvalidInput, match="is not of the form EVENTS-LETTERS"):
        _verify(db, codes=("54",))


# --- forged checkpoints -----------------------------------------------------------------


def test_a_forged_witness_line_is_named(
        db: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    folder = _witness(tmp_path, monkeypatch)
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(folder))
    _lab(db)
    path = next(folder.iterdir())
    lines = path.read_text(encoding="utf-8").splitlines()
    last = json.loads(lines[-1])
    last["events"] = 9  # a witness line altered to accuse the lab of a shortened trail
    path.write_text("\n".join([*lines, json.dumps(last)]) + "\n", encoding="utf-8")
    rep = _verify(db, folder)
    assert any(p.endswith("has a signature that does not verify: forged or altered")
               for p in rep.problems)
    assert not any("shortened" in p for p in rep.problems)


def test_a_witness_folder_of_another_trail_is_named(
        db: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    folder = _witness(tmp_path, monkeypatch)
    _lab(db)
    (folder / f"{checkpoints.WITNESS_PREFIX}0123abcd.jsonl").write_text("", encoding="utf-8")
    rep = _verify(db, folder)
    assert any("none of this one" in p for p in rep.problems)


def test_a_signing_key_not_the_labs_is_refused(
        db: Database, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    _witness(tmp_path, monkeypatch)
    _lab(db)
    audit.new_signing_key(tmp_path / "stolen.pem")
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(tmp_path / "stolen.pem"))
    with pytest.raises(Refused, match="is not this lab's"), db.session() as s:
        add_batch(s, "B-4")
    assert _events(db) == 4


# --- time order -------------------------------------------------------------------------


def test_a_bench_clock_set_back_is_refused(db: Database, monkeypatch: pytest.MonkeyPatch) -> None:
    _lab(db)

    class SetBack(datetime):
        @classmethod
        def now(cls, tz: Any = None) -> Any:
            return datetime.now(tz) - timedelta(hours=2)

    monkeypatch.setattr(writing, "datetime", SetBack)
    with pytest.raises(Refused, match="before the last audit event"), db.session() as s:
        add_batch(s, "B-4")
    assert _events(db) == 4


def test_an_event_dated_before_its_predecessor_is_named(db: Database) -> None:
    _lab(db)
    earlier = datetime.now(UTC).replace(tzinfo=None) - timedelta(hours=3)
    with guarded_again(_target(db)), db.engine.begin() as conn:
        conn.execute(AuditEvent.__table__.update().where(AuditEvent.__table__.c.seq == 3)
                     .values(at=earlier))
    _rehash(db)
    problems = _verify(db).problems
    assert len(problems) == 1
    assert problems[0].startswith("audit event #3 is dated ")
    assert problems[0].endswith("before event #2: a clock set back, or times edited outside "
                                "prepbook")


# --- who wrote it, at which machine ------------------------------------------------------


def test_each_event_records_the_login_and_host_and_older_events_still_verify(
        db: Database) -> None:
    _lab(db)
    with db.session(write=False) as s:
        rows = s.execute(select(AuditEvent.os_login, AuditEvent.host)).all()
    assert set(rows) == {writing.writer()} and writing.writer()[1] == socket.gethostname()
    # An event from before the columns existed: no login, host or key id, ten fields.
    _sql(db, "UPDATE audit_events SET os_login = NULL, host = NULL WHERE seq = 1")
    with db.engine.begin() as conn:
        r = conn.execute(select(AuditEvent.__table__).where(AuditEvent.seq == 1)).one()
        old = "sha256:" + chain.hasher(None)[1](chain.payload(
            r.seq, chain.iso(r.at), r.actor, r.action, r.record_type, r.record_id, r.values,
            r.reason, chain.iso(r.performed_at), None))
    _sql(db, "UPDATE audit_events SET hash = :h WHERE seq = 1", h=old)
    _sql(db, "UPDATE audit_events SET prev_hash = :h WHERE seq = 2", h=old)
    _rehash(db)
    assert _verify(db).ok
    # The login is part of the hashed text: changing it is an edit.
    _sql(db, "UPDATE audit_events SET os_login = 'someone-else' WHERE seq = 3")
    assert _verify(db).problems == ("audit event #3 (batches #2) does not match its hash: "
                                    "edited outside prepbook",)
