"""Changing the audit key or the signing key of a trail that has begun, and the attacks
on it.

A change is recorded by ``rotating`` (the write side of `prepbook audit rotate-key`)
with proofs made by the key in use and by the new key; verify checks each stretch of
the chain with the key of its time. The attacks, each written first: a bench that
keeps the old key, a key swapped by editing the database (without the old key), a
stolen old signing key used after the change.
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

import pytest
from sqlalchemy import insert, text

from prepbook.errors import Refused
from prepbook.store import audit
from prepbook.store.audit import chain, rekeying, rotating
from prepbook.store.audit.checkpoints import Checkpoint, append_witness, message
from prepbook.store.engine import Database
from prepbook.store.models import table_of
from prepbook.store.models.trail import AuditRekeying

from .conftest import add_batch
from .test_audit_checkpoints import _lab, _sql

OLD = b"the lab's first invented audit secret"
NEW = b"the lab's second invented audit secret"
OTHER = b"an insider's own invented audit secret"


def _key(folder: Path, name: str, secret: bytes) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / name
    path.write_bytes(secret)
    path.chmod(0o600)
    return path


def _verify(db: Database, *, keyring: Path | None = None,
            witness: Path | None = None) -> audit.VerifyReport:
    with db.session(write=False) as s:
        return audit.verify(s, keyring=keyring, witness=witness)


@pytest.fixture
def keys(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> dict[str, Path]:
    """The lab's first audit key set on this bench, a new one, and an insider's."""
    found = {"old": _key(tmp_path / "bench", "old.key", OLD),
             "new": _key(tmp_path / "bench", "new.key", NEW),
             "other": _key(tmp_path / "insider", "other.key", OTHER)}
    monkeypatch.setenv(audit.KEY_ENV, str(found["old"]))
    return found


def _change_audit_key(db: Database, old: bytes, new: bytes) -> rekeying.Rekeying:
    with db.session() as s:
        add_batch(s, "B-R")  # the admin's signed action writes an event first
        return rotating.change_audit_key(s, old, new, "ada")


def _keyring(tmp_path: Path) -> Path:
    """QA's keyring folder: the old key kept for verify."""
    ring = tmp_path / "qa-keyring"
    _key(ring, "2026-old.key", OLD)
    return ring


# --- the audit key ----------------------------------------------------------------------


def test_a_changed_audit_key_verifies_each_stretch_with_its_own_key(
        db: Database, keys: dict[str, Path], tmp_path: Path,
        monkeypatch: pytest.MonkeyPatch) -> None:
    _lab(db)  # events 1-4 keyed with the old key
    change = _change_audit_key(db, OLD, NEW)  # event 5, then the change
    assert change.after_seq == 5
    assert change.old_key == chain.key_fingerprint(OLD)
    assert change.new_key == chain.key_fingerprint(NEW)
    monkeypatch.setenv(audit.KEY_ENV, str(keys["new"]))
    with db.session() as s:
        add_batch(s, "B-4")  # event 6, with the new key
    rep = _verify(db, keyring=_keyring(tmp_path))
    assert rep.ok, rep.problems
    assert rep.events == 6
    with db.engine.connect() as conn:
        key_ids = [r[0] for r in conn.execute(text(
            "SELECT key_id FROM audit_events ORDER BY seq"))]
    assert key_ids == [change.old_key] * 5 + [change.new_key]


def test_without_the_old_key_the_stretch_cannot_be_verified_never_ok(
        db: Database, keys: dict[str, Path], monkeypatch: pytest.MonkeyPatch) -> None:
    _lab(db)
    change = _change_audit_key(db, OLD, NEW)
    monkeypatch.setenv(audit.KEY_ENV, str(keys["new"]))
    rep = _verify(db)  # no keyring: the old key is not at hand
    assert not rep.ok
    assert any(p.startswith(f"the audit key {change.old_key} (old key of the audit key "
                            "change after event #5") and "cannot be verified" in p
               for p in rep.problems), rep.problems


def test_a_bench_that_keeps_the_old_key_refuses_to_write(
        db: Database, keys: dict[str, Path]) -> None:
    _lab(db)
    _change_audit_key(db, OLD, NEW)
    refused = r"the audit key set here \(key .*\) is not this lab's"
    with pytest.raises(Refused, match=refused), db.session() as s:
        add_batch(s, "B-5")
    with db.engine.connect() as conn:
        assert conn.execute(text("SELECT count(*) FROM audit_events")).scalar() == 5


def test_a_bench_without_the_key_in_use_cannot_change_it(
        db: Database, keys: dict[str, Path]) -> None:
    _lab(db)
    with pytest.raises(Refused, match="only the key in use can hand over"):
        _change_audit_key(db, OTHER, NEW)
    with db.engine.connect() as conn:
        assert conn.execute(text("SELECT count(*) FROM audit_rekeyings")).scalar() == 0


def _forged_change(db: Database, old: bytes, new: bytes, *, prover: bytes) -> None:
    """The attacker's change of the audit key: a row added to audit_rekeyings by hand,
    its 'old key' proof made with ``prover`` (the attacker does not hold ``old``)."""
    with db.engine.connect() as conn:
        seq, head = conn.execute(text("SELECT seq, hash FROM audit_head")).one()
        lab_id = conn.execute(text("SELECT lab_id FROM audit_keying")).scalar()
    change = rekeying.Rekeying(str(lab_id), rekeying.AUDIT, int(seq), str(head),
                               str(chain.key_fingerprint(old)),
                               str(chain.key_fingerprint(new)),
                               "2026-12-05T07:00:00.000000", "ada")
    with db.engine.begin() as conn:
        conn.execute(insert(table_of(AuditRekeying)).values(
            lab_id=change.lab_id, kind=change.kind, after_seq=change.after_seq,
            after_hash=change.after_hash, old_key=change.old_key, new_key=change.new_key,
            made_at=datetime(2026, 12, 5, 7),
            made_by="ada", old_proof=rotating.keyed_proof(prover, change),
            new_proof=rotating.keyed_proof(new, change)))


def test_a_key_swapped_without_the_command_is_refused_by_verify(
        db: Database, keys: dict[str, Path], tmp_path: Path,
        monkeypatch: pytest.MonkeyPatch) -> None:
    # Attack: an insider with write access to the database and a key of their own adds
    # the change row by hand (they cannot prove it with the lab's key), then writes with
    # their key, which the bench now takes for the lab's.
    _lab(db)
    _forged_change(db, OLD, OTHER, prover=OTHER)
    monkeypatch.setenv(audit.KEY_ENV, str(keys["other"]))
    with db.session() as s:
        add_batch(s, "B-5")  # event 5, written with the insider's key
    # QA verifies with the lab's key and its keyring.
    monkeypatch.setenv(audit.KEY_ENV, str(keys["old"]))
    rep = _verify(db, keyring=_keyring(tmp_path))
    assert not rep.ok
    assert any(p.startswith("the audit key change after event #4") and
               "is not made with the old key" in p and "a key swapped outside prepbook, "
               "refused" in p for p in rep.problems), rep.problems
    assert any(p.startswith("audit event #5 (batches #4") and "written with a different key"
               in p for p in rep.problems), rep.problems


def test_a_key_swapped_in_the_keying_row_is_named(
        db: Database, keys: dict[str, Path], monkeypatch: pytest.MonkeyPatch) -> None:
    # Attack: the keying row's fingerprint replaced by the insider's key, no change row.
    _lab(db)
    _sql(db, "UPDATE audit_keying SET key_fingerprint = :fp",
         fp=chain.key_fingerprint(OTHER))
    monkeypatch.setenv(audit.KEY_ENV, str(keys["other"]))
    with db.session() as s:
        add_batch(s, "B-5")
    for key in ("old", "other"):  # whichever key the auditor holds
        monkeypatch.setenv(audit.KEY_ENV, str(keys[key]))
        rep = _verify(db)
        assert not rep.ok
        assert any("written with a different key" in p for p in rep.problems), rep.problems


# --- the signing key --------------------------------------------------------------------


@pytest.fixture
def signing(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> dict[str, Path]:
    """The lab's first signing key (set on this bench), a new one, and a witness folder."""
    qa = tmp_path / "qa"
    qa.mkdir()
    audit.new_signing_key(qa / "first.pem")
    audit.new_signing_key(qa / "second.pem")
    (tmp_path / "witness").mkdir()
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(qa / "first.pem"))
    monkeypatch.setenv("PREPBOOK_WITNESS_FOLDER", str(tmp_path / "witness"))
    return {"first": qa / "first.pem", "second": qa / "second.pem",
            "witness": tmp_path / "witness"}


def _change_signing_key(db: Database, old: Path, new: Path) -> tuple[rekeying.Rekeying,
                                                                      Checkpoint]:
    with db.session() as s:
        add_batch(s, "B-R")
        return rotating.change_signing_key(s, audit.load_signing_key(old),
                                           audit.load_signing_key(new), "ada")


def test_a_changed_signing_key_keeps_every_checkpoint_valid(
        db: Database, signing: dict[str, Path], monkeypatch: pytest.MonkeyPatch) -> None:
    _lab(db)  # checkpoints of 2, 3, 4 events with the first key
    change, first_new = _change_signing_key(db, signing["first"], signing["second"])
    assert change.after_seq == 5 and first_new.events == 5
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(signing["second"]))
    with db.session() as s:
        add_batch(s, "B-4")  # event 6, its checkpoint signed with the second key
    lines = (signing["witness"] / next(p.name for p in signing["witness"].iterdir())
             ).read_text().splitlines()
    assert len(lines) == 5  # 2, 3, 4 (first key), 5 and 6 (second key)
    rep = _verify(db, witness=signing["witness"])
    assert rep.ok, rep.problems
    assert rep.witnessed_events == 6 and rep.checkpoints_checked == 5


def test_a_bench_that_keeps_the_old_signing_key_refuses_to_write(
        db: Database, signing: dict[str, Path]) -> None:
    _lab(db)
    _change_signing_key(db, signing["first"], signing["second"])
    with pytest.raises(Refused, match="is not this lab's"), db.session() as s:
        add_batch(s, "B-5")
    with db.engine.connect() as conn:
        assert conn.execute(text("SELECT count(*) FROM audit_events")).scalar() == 5


def test_a_stolen_old_signing_key_cannot_vouch_for_a_later_trail(
        db: Database, signing: dict[str, Path]) -> None:
    # Attack: the first key leaked (why it was changed); the thief signs a checkpoint
    # of a trail longer than the one the key was in use for, and plants it in the folder.
    _lab(db)
    _change_signing_key(db, signing["first"], signing["second"])
    thief = audit.load_signing_key(signing["first"])
    with db.engine.connect() as conn:
        lab_id = str(conn.execute(text("SELECT lab_id FROM audit_keying")).scalar())
    at = "2026-12-05T08:00:00.000000"
    planted = Checkpoint(lab_id, 9, "sha256:" + "0" * 64, at,
                         audit.checkpoints.public_hex(thief),
                         thief.sign(message(lab_id, 9, "sha256:" + "0" * 64, at)).hex())
    append_witness(signing["witness"], planted)
    rep = _verify(db, witness=signing["witness"])
    assert not rep.ok
    assert any("is signed with a key that is not the one this database records for the lab "
               "at that point of the trail" in p for p in rep.problems), rep.problems
    assert not any(p.startswith("5 events, but") for p in rep.problems)


def test_a_signing_key_swapped_without_the_command_is_refused_by_verify(
        db: Database, signing: dict[str, Path], tmp_path: Path,
        monkeypatch: pytest.MonkeyPatch) -> None:
    # Attack: an insider makes a key of their own and adds the change row by hand, signed
    # with their key (they do not hold the lab's), then makes checkpoints with it.
    _lab(db)
    audit.new_signing_key(tmp_path / "insider.pem")
    insider = audit.load_signing_key(tmp_path / "insider.pem")
    first = audit.load_signing_key(signing["first"])
    with db.engine.connect() as conn:
        seq, head = conn.execute(text("SELECT seq, hash FROM audit_head")).one()
        lab_id = str(conn.execute(text("SELECT lab_id FROM audit_keying")).scalar())
    change = rekeying.Rekeying(lab_id, rekeying.SIGNING, int(seq), str(head),
                               audit.checkpoints.public_hex(first),
                               audit.checkpoints.public_hex(insider),
                               "2026-12-05T07:00:00.000000", "ada")
    proof = insider.sign(rekeying.statement(change)).hex()
    with db.engine.begin() as conn:
        conn.execute(insert(table_of(AuditRekeying)).values(
            lab_id=lab_id, kind=change.kind, after_seq=change.after_seq,
            after_hash=change.after_hash, old_key=change.old_key, new_key=change.new_key,
            made_at=datetime(2026, 12, 5, 7), made_by="ada",
            old_proof=proof, new_proof=proof))
    monkeypatch.setenv("PREPBOOK_SIGNING_KEY_FILE", str(tmp_path / "insider.pem"))
    with db.session() as s:
        add_batch(s, "B-5")  # the bench takes the insider's key for the lab's
    rep = _verify(db, witness=signing["witness"])
    assert not rep.ok
    assert any(p.startswith("the signing key change after event #4") and
               "is not signed with the signing key of its time" in p
               for p in rep.problems), rep.problems
    assert any("is signed with a key that is not the one this database records" in p
               for p in rep.problems), rep.problems
