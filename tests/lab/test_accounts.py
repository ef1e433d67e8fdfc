"""Accounts: lockouts that grow and end by themselves, early unlock, the last admin,
names checked whole, the passphrase policy, resets and what a signature records."""

from __future__ import annotations

import subprocess
import sys
from datetime import timedelta
from pathlib import Path

import msgspec
import pytest

from prepbook.errors import InvalidInput, Refused
from tests.conftest import row_counts

ADA, BEN, EVE = "copper-kettle-91", "quiet-burette-27", "steady-pipette-8"


def ada_and_ben(target: Path | str):  # type: ignore[no-untyped-def]
    """A new database with ada (admin) and ben (technician), through the services."""
    from prepbook.lab import people, setup
    from prepbook.store.engine import open_database

    setup.initialize(str(target), actor="ada")
    opened = open_database(str(target))
    people.add_user(opened, actor="ada", name="ada", role="admin", passphrase=ADA,
                    actor_passphrase=None)
    people.add_user(opened, actor="ada", name="ben", role="technician", passphrase=BEN,
                    actor_passphrase=ADA)
    return opened


@pytest.fixture
def db(db_target: Path | str, no_auto_login: None):  # type: ignore[no-untyped-def]
    return ada_and_ben(db_target)


def sign(db, name: str, secret: str) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people

    people.check_signature(db, name=name, passphrase=secret)


def later(monkeypatch: pytest.MonkeyPatch, by: timedelta) -> None:
    """Move prepbook's clock (the lockout's) forward; audit times stay real."""
    from prepbook.inputs import utc_now
    from prepbook.lab import common

    start = utc_now()
    monkeypatch.setattr(common, "utc_now", lambda: start + by)


def test_the_lock_grows_with_each_further_failure_and_ends_by_itself(
        db, monkeypatch: pytest.MonkeyPatch) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people

    for attempt in range(1, 6):
        with pytest.raises(Refused) as wrong:
            sign(db, "ben", "not-his-passphrase")
        assert ("locked out until" in str(wrong.value)) == (attempt == 5)
    assert "prepbook user unlock ben --reason TEXT" in str(wrong.value)
    with pytest.raises(Refused, match="locked out"):
        sign(db, "ben", BEN)  # even the right one, while locked; not counted
    assert {u.name: u.failed_attempts for u in people.list_users(db)}["ben"] == 5
    later(monkeypatch, timedelta(minutes=16))  # the first lock: 15 minutes
    with pytest.raises(Refused, match="locked out until"):
        sign(db, "ben", "not-his-passphrase")  # a sixth: locked again, for 30 minutes
    later(monkeypatch, timedelta(minutes=29))
    with pytest.raises(Refused, match="locked out"):
        sign(db, "ben", BEN)
    later(monkeypatch, timedelta(minutes=31))
    sign(db, "ben", BEN)
    assert {u.name: u.failed_attempts for u in people.list_users(db)}["ben"] == 0


def test_no_lock_lasts_for_good() -> None:
    from prepbook.lab.security import LONGEST_LOCK, lock_period

    first = timedelta(minutes=15)
    assert lock_period(4, 5, first) is None
    assert [lock_period(n, 5, first) for n in (5, 6, 7)] == [first, 2 * first, 4 * first]
    assert lock_period(500, 5, first) == LONGEST_LOCK == timedelta(hours=24)


def test_the_last_admin_locked_out_signs_in_again_within_a_day(
        db, monkeypatch: pytest.MonkeyPatch) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import settings

    settings.set_value(db, actor="ada", key="lockout_minutes", value="1440",
                       reason="the longest first lock", passphrase=ADA)
    for _ in range(5):
        with pytest.raises(Refused):
            sign(db, "ada", "not-her-passphrase")
    later(monkeypatch, timedelta(hours=23))
    with pytest.raises(Refused, match="locked out"):
        sign(db, "ada", ADA)
    later(monkeypatch, timedelta(hours=24, minutes=1))
    sign(db, "ada", ADA)


def test_an_admin_unlocks_early_with_a_reason(db) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people

    for _ in range(5):
        with pytest.raises(Refused):
            sign(db, "ben", "not-his-passphrase")
    with pytest.raises(InvalidInput, match="reason"):
        people.unlock_user(db, actor="ada", name="ben", passphrase=ADA, reason=None)
    done = people.unlock_user(db, actor="ada", name="ben", passphrase=ADA,
                              reason="identity checked at the bench")
    assert done.locked is False and done.failed_attempts == 0
    sign(db, "ben", BEN)


def test_the_last_active_admin_is_neither_disabled_nor_demoted(db) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people

    with pytest.raises(Refused, match="last active admin"):
        people.change_role(db, actor="ada", name="ada", role="reviewer", passphrase=ADA,
                           reason="stepping back")
    people.add_user(db, actor="ada", name="eve", role="admin", passphrase=EVE,
                    actor_passphrase=ADA)
    people.change_role(db, actor="eve", name="ada", role="reviewer", passphrase=EVE,
                       reason="ada moves to QC review")
    with pytest.raises(Refused, match="last active admin"):
        people.change_role(db, actor="eve", name="eve", role="technician", passphrase=EVE,
                           reason="x")
    people.change_role(db, actor="eve", name="ada", role="admin", passphrase=EVE,
                       reason="back")
    people.disable_user(db, actor="ada", name="eve", passphrase=ADA, reason="left")
    people.enable_user(db, actor="ada", name="eve", passphrase=ADA, reason="returned")


def test_failed_logins_from_two_processes_are_both_counted(
        db, db_target: Path | str, tmp_path: Path) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people

    command = [sys.executable, "-m", "prepbook", "--db", str(db_target), "login", "ben",
               "--passphrase-stdin"]
    procs = [subprocess.Popen(command, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, text=True) for _ in range(2)]
    outs = [p.communicate("not-his-passphrase\n", timeout=120) for p in procs]
    assert [p.returncode for p in procs] == [1, 1], outs
    assert all("wrong passphrase for ben" in err for _, err in outs)
    assert {u.name: u.failed_attempts for u in people.list_users(db)}["ben"] == 2
    failed = [e for e in _events(db) if e[0] == "auth.failed"]
    assert len(failed) == 2


def _events(db) -> list[tuple[str, str | None]]:  # type: ignore[no-untyped-def]
    from sqlalchemy import select

    from prepbook.store.models import AuditEvent

    with db.session(write=False) as s:
        return [(a, r) for a, r in s.execute(select(AuditEvent.action, AuditEvent.reason)
                                             .order_by(AuditEvent.seq))]


@pytest.mark.parametrize(("name", "why"), [
    ("cleo\n", "U\\+000A \\(category Cc\\)"),
    ("cl\u200beo", "ZERO WIDTH SPACE"),
    ("cleo ", "SPACE"),
    ("\u202ecleo", "RIGHT-TO-LEFT OVERRIDE"),
    ("Cleo", "looks like the existing user 'cleo'"),
    ("\uff43\uff4c\uff45\uff4f", "looks like the existing user 'cleo'"),  # fullwidth
    ("9cleo", "must start with a letter"),
    ("", "1-40 characters"),
])
def test_names_are_checked_whole(db, name: str, why: str) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people

    people.add_user(db, actor="ada", name="cleo", role="reviewer", passphrase=EVE,
                    actor_passphrase=ADA)
    before = row_counts(db.url.removeprefix("sqlite:///")) if db.is_sqlite else None
    with pytest.raises(InvalidInput, match=why):
        people.add_user(db, actor="ada", name=name, role="reviewer", passphrase=EVE,
                        actor_passphrase=ADA)
    if before is not None:
        assert row_counts(db.url.removeprefix("sqlite:///")) == before


def test_a_name_in_another_script_is_welcome(db) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people

    assert people.add_user(db, actor="ada", name="zoë", role="technician", passphrase=EVE,
                           actor_passphrase=ADA).name == "zoë"


def test_the_passphrase_policy(db, monkeypatch: pytest.MonkeyPatch) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people, settings

    monkeypatch.setitem(settings.KNOWN, "passphrase_name_rule", msgspec.structs.replace(
        settings.KNOWN["passphrase_name_rule"], default="on"))
    with pytest.raises(InvalidInput, match="at least 12 characters"):
        people.add_user(db, actor="ada", name="dan", role="technician",
                        passphrase="short-one-1", actor_passphrase=ADA)
    with pytest.raises(InvalidInput, match="must not contain the user's name"):
        people.add_user(db, actor="ada", name="dan", role="technician",
                        passphrase="my-name-is-DAN-1", actor_passphrase=ADA)
    settings.set_value(db, actor="ada", key="passphrase_min_length", value="16",
                       reason="lab policy", passphrase=ADA)
    with pytest.raises(InvalidInput, match="at least 16 characters"):
        people.change_passphrase(db, name="ben", old=BEN, new="fifteen-chars-1")


def test_a_reset_ends_sessions_and_the_user_chooses_anew(db) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people, sessions

    here = sessions.os_account()
    opened = sessions.login(db, name="ben", passphrase=BEN, os_login=here[0], host=here[1])
    people.reset_passphrase(db, actor="ada", name="ben", new_passphrase="one-time-only-42",
                            passphrase=ADA, reason="forgot it")
    with pytest.raises(Refused, match="has ended"):
        sessions.live(db, name="ben", token=opened.token, os_login=here[0], host=here[1])
    with pytest.raises(sessions.MustChoose):
        sessions.login(db, name="ben", passphrase="one-time-only-42", os_login=here[0],
                       host=here[1])
    again = sessions.login(db, name="ben", passphrase="one-time-only-42", os_login=here[0],
                           host=here[1], new_passphrase="brand-new-choice-7")
    assert again.session.live
    sign(db, "ben", "brand-new-choice-7")
    actions = [a for a, _ in _events(db)]
    assert actions.count("user.reset") == 1 and actions[-2:] == ["user.passphrase",
                                                                 "user.login"]


def test_a_signature_records_its_meaning_in_the_signed_transaction(db) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people, settings

    settings.set_value(db, actor="ada", key="lockout_after", value="4", reason="policy",
                       passphrase=ADA)
    events = _events(db)
    assert events[-2:] == [("user.signed", "changed a setting: lockout_after = 4"),
                           ("setting.set", "policy")]
    # refused inside the signed transaction: the signature is not recorded either
    with pytest.raises(Refused, match="already a technician"):
        people.change_role(db, actor="ada", name="ben", role="technician", passphrase=ADA,
                           reason="x")
    assert _events(db)[-1] == ("setting.set", "policy")
    people.change_role(db, actor="ada", name="ben", role="reviewer", passphrase=ADA,
                       reason="promoted")
    assert _events(db)[-2:] == [("user.signed", "changed a role: ben to reviewer"),
                                ("user.role", "promoted")]


def test_only_the_passphrase_actions_change_a_passphrase_hash(db) -> None:  # type: ignore[no-untyped-def]
    import json

    from sqlalchemy import select

    from prepbook.store.models import AuditEvent

    people_calls(db)
    with db.session(write=False) as s:
        seen: dict[int, str] = {}
        for action, record_id, values in s.execute(
                select(AuditEvent.action, AuditEvent.record_id, AuditEvent.values)
                .where(AuditEvent.record_type == "users").order_by(AuditEvent.seq)):
            digest = json.dumps(json.loads(values).get("passphrase_hash"))
            if record_id in seen and seen[record_id] != digest:
                assert action in ("user.add", "user.passphrase", "user.reset"), action
            seen[record_id] = digest


def people_calls(db) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people

    people.change_passphrase(db, name="ben", old=BEN, new="another-choice-55")
    people.reset_passphrase(db, actor="ada", name="ben", new_passphrase="one-time-only-42",
                            passphrase=ADA, reason="forgot it")
    people.change_role(db, actor="ada", name="ben", role="reviewer", passphrase=ADA,
                       reason="promoted")


def test_the_database_owner_recovers_an_admin_in_the_audit_trail(
        db, monkeypatch: pytest.MonkeyPatch) -> None:  # type: ignore[no-untyped-def]
    from prepbook.lab import people, sessions

    for _ in range(5):
        with pytest.raises(Refused):
            sign(db, "ada", "not-her-passphrase")
    with pytest.raises(Refused, match="not an active admin"):
        people.recover_admin(db, name="ben", new_passphrase="one-time-only-42",
                             reason="x", os_login="root", host="bench")
    people.recover_admin(db, name="ada", new_passphrase="one-time-only-42",
                         reason="the only admin forgot her passphrase", os_login="root",
                         host="bench")
    assert _events(db)[-1] == ("user.reset", "the only admin forgot her passphrase")
    here = sessions.os_account()
    with pytest.raises(sessions.MustChoose):
        sessions.login(db, name="ada", passphrase="one-time-only-42", os_login=here[0],
                       host=here[1])
    monkeypatch.setattr(people, "_owns_database", lambda _db, _s: False)
    with pytest.raises(Refused, match="only the owner of the database"):
        people.recover_admin(db, name="ada", new_passphrase="one-time-only-43",
                             reason="x", os_login="mallory", host="bench")
