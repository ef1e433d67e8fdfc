"""``Database.one_transaction``: several service calls, one commit, each call still
checked and audited as it is on its own; a failed call fails the block."""

from __future__ import annotations

from pathlib import Path

import pytest

from prepbook.errors import DatabaseError, NotFound, Refused
from prepbook.lab import auditing, instruments, people, setup
from prepbook.lab.database import Database, open_database
from tests.conftest import row_counts

ADMIN, PASS = "ines", "ines-passphrase"


@pytest.fixture
def db(db_target: Path | str) -> Database:
    setup.initialize(str(db_target), actor=ADMIN)
    opened = open_database(str(db_target))
    people.add_user(opened, actor=ADMIN, name=ADMIN, role="admin", passphrase=PASS,
                    actor_passphrase=None)
    return opened


def _balance(db: Database, code: str) -> None:
    instruments.add_instrument(db, actor=ADMIN, code=code, kind="balance", due="2099-01-01",
                               capacity="220", tolerance="0.0002", readability="0.0001")


def test_calls_in_one_transaction_are_committed_together(
        db: Database, db_target: Path | str) -> None:
    before = row_counts(db_target)
    with db.one_transaction():
        _balance(db, "BAL-1")
        _balance(db, "BAL-2")
        # The block's own calls see each other's writes ...
        assert [i.code for i in instruments.list_instruments(db)] == ["BAL-1", "BAL-2"]
        # ... nobody else does until the block ends.
        assert row_counts(db_target)["instruments"] == before["instruments"]
    after = row_counts(db_target)
    assert after["instruments"] == before["instruments"] + 2
    assert after["audit_events"] == before["audit_events"] + 2
    assert auditing.verify(db).ok is True


def test_a_refused_call_fails_the_whole_block(db: Database, db_target: Path | str) -> None:
    before = row_counts(db_target)
    with pytest.raises(DatabaseError, match="already exists.*nothing of the block"), \
            db.one_transaction():
        _balance(db, "BAL-1")
        with pytest.raises(Refused, match="already exists"):
            _balance(db, "BAL-1")  # the same code twice
        _balance(db, "BAL-2")  # the caller went on: the block fails all the same
    assert row_counts(db_target) == before
    assert auditing.verify(db).ok is True


def test_a_call_that_is_not_found_fails_the_whole_block(
        db: Database, db_target: Path | str) -> None:
    before = row_counts(db_target)
    with pytest.raises(DatabaseError, match="nothing of the block"), db.one_transaction():
        _balance(db, "BAL-1")
        with pytest.raises(NotFound):
            instruments.add_instrument(db, actor="nobody", code="BAL-9", kind="balance",
                                       due="2099-01-01", capacity="220",
                                       tolerance="0.0002", readability="0.0001")
    assert row_counts(db_target) == before


def test_an_error_leaving_the_block_rolls_everything_back(
        db: Database, db_target: Path | str) -> None:
    before = row_counts(db_target)
    with pytest.raises(RuntimeError, match="power cut"), db.one_transaction():
        _balance(db, "BAL-1")
        raise RuntimeError("power cut")
    assert row_counts(db_target) == before
    _balance(db, "BAL-1")  # the database is usable again, outside any block
    assert auditing.verify(db).ok is True


def test_blocks_do_not_nest(db: Database) -> None:
    with db.one_transaction(), pytest.raises(DatabaseError, match="do not nest"), \
            db.one_transaction():
        pass  # pragma: no cover - never reached
