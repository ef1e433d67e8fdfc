"""Who is acting: a write needs a live login session of that person, on this
operating-system account and database; --user only chooses among live sessions.

The attacks come first: no session, another account's session, a copied, edited or
forged session file, an expired or idle one, and a reviewer recording as a colleague.
"""

from __future__ import annotations

import json
import os
from datetime import timedelta
from pathlib import Path

import pytest

from tests.conftest import Cli, row_counts

ADA, BEN, CLEO = "copper-kettle-91", "quiet-burette-27", "violet-meniscus-5"
LOT = ["lot", "add", "KHP", "--code", "KHP-0001", "--purity", "99.98", "--expires",
       "2030-06-30"]


@pytest.fixture
def lab(cli: Cli, no_auto_login: None) -> Cli:
    """ada (admin), ben (technician), cleo (reviewer); nobody logged in."""
    cli.ok("init")
    cli.ok("user", "add", "ada", "--role", "admin", "--passphrase-stdin", input=f"{ADA}\n")
    cli.ok("login", "ada", "--passphrase-stdin", input=f"{ADA}\n")
    cli.ok("user", "add", "ben", "--role", "technician", "--passphrase-stdin",
           input=f"{BEN}\n{ADA}\n")
    cli.ok("user", "add", "cleo", "--role", "reviewer", "--passphrase-stdin",
           input=f"{CLEO}\n{ADA}\n")
    cli.ok("logout", "ada")
    return cli


def login(cli: Cli, name: str, secret: str) -> None:
    cli.ok("login", name, "--passphrase-stdin", input=f"{secret}\n")


def session_file(name: str) -> Path:
    folder = Path(os.environ["PREPBOOK_SESSION_DIR"])
    for path in folder.glob("*.json"):
        if json.loads(path.read_text())["user"] == name:
            return path
    raise AssertionError(f"no session file of {name}")


def refused_unwritten(cli: Cli, *args: str, user: str | None = None) -> str:
    before = row_counts(cli.db, sign_ins=True)
    result = cli.refused(*args, user=user)
    assert row_counts(cli.db, sign_ins=True) == before
    return result.stderr


def test_a_write_without_a_session_is_refused_and_writes_nothing(lab: Cli) -> None:
    err = refused_unwritten(lab, *LOT)
    assert "nobody is logged in" in err and "prepbook login NAME" in err
    err = refused_unwritten(lab, *LOT, user="ben")
    assert "ben is not logged in" in err and "prepbook login ben" in err
    # reading needs no session
    assert lab.json("user", "list")
    login(lab, "ben", BEN)
    lab.ok(*LOT)  # the one live session acts, no --user needed
    assert lab.json("lot", "list")[0]["code"] == "KHP-0001"


def test_user_only_chooses_among_live_sessions(lab: Cli) -> None:
    login(lab, "ben", BEN)
    login(lab, "cleo", CLEO)
    err = refused_unwritten(lab, *LOT)
    assert "several people are logged in here (ben, cleo)" in err
    assert "ada is not logged in" in refused_unwritten(lab, *LOT, user="ada")
    lab.ok(*LOT, user="ben")
    assert [w["user"] for w in lab.json("whoami")] == ["ben", "cleo"]
    lab.ok("logout", "cleo")
    assert [w["user"] for w in lab.json("whoami")] == ["ben"]


def test_a_reviewer_cannot_record_as_a_colleague_then_accept_it(lab: Cli) -> None:
    """The bypass the issue found: a reviewer records a run with --user ben (no secret
    asked), then accepts it herself. Recording as ben now needs ben's session."""
    login(lab, "ben", BEN)
    lab.ok(*LOT)
    lab.ok("instrument", "add", "BAL-1", "--kind", "balance", "--due", "2030-06-01",
           "--readability", "0.0001")
    lab.ok("instrument", "add", "BUR-1", "--kind", "burette", "--due", "2030-06-01",
           "--capacity", "50")
    lab.ok("batch", "make", "NaOH-0.1N", "--code", "NAOH-0001", "--volume", "1000",
           "--solute-mass", "4.1")
    lab.ok("logout", "ben")
    login(lab, "cleo", CLEO)
    standardize = ["standardize", "NAOH-0001", "--lot", "KHP-0001", "--balance", "BAL-1",
                   "--burette", "BUR-1", "--rep", "0.8085:39.16", "--rep", "0.8116:39.29",
                   "--rep", "0.8596:41.67"]
    assert "ben is not logged in" in refused_unwritten(lab, *standardize, user="ben")
    # Recorded as herself, she may not review her own run.
    run = lab.json(*standardize, user="cleo")["run"]
    err = lab.refused("review", run, "--accept", "--passphrase-stdin", user="cleo",
                      input=f"{CLEO}\n").stderr
    assert "cannot review it" in err


def test_another_os_account_cannot_use_the_session(lab: Cli,
                                                   monkeypatch: pytest.MonkeyPatch) -> None:
    from prepbook.lab import sessions

    login(lab, "ben", BEN)
    real = sessions.os_account()
    monkeypatch.setattr(sessions, "os_account", lambda: ("mallory", real[1]))
    err = refused_unwritten(lab, *LOT)
    assert f"opened by {real[0]} on {real[1]}, not by mallory" in err
    monkeypatch.setattr(sessions, "os_account", lambda: (real[0], "elsewhere"))
    assert "not by" in refused_unwritten(lab, *LOT)
    monkeypatch.setattr(sessions, "os_account", lambda: real)
    lab.ok(*LOT)


def test_a_copied_edited_or_forged_session_file_is_useless(lab: Cli) -> None:
    login(lab, "ben", BEN)
    path = session_file("ben")
    kept = path.read_text()
    # a copy kept after the logout: the database ended that session
    lab.ok("logout", "ben")
    path.write_text(kept)
    path.chmod(0o600)
    assert "has ended" in refused_unwritten(lab, *LOT)
    # a forged token
    data = json.loads(kept)
    path.write_text(json.dumps({**data, "token": "x" * 43}))
    assert "not one this database opened" in refused_unwritten(lab, *LOT)
    # ben's live token moved into a file claiming to be cleo's: not cleo's session
    login(lab, "ben", BEN)
    token = json.loads(session_file("ben").read_text())["token"]
    session_file("ben").unlink()
    login(lab, "cleo", CLEO)
    cleo = session_file("cleo")
    cleo.write_text(json.dumps({**json.loads(cleo.read_text()), "token": token}))
    assert "not one this database opened" in refused_unwritten(lab, *LOT, user="cleo")


@pytest.mark.skipif(os.name != "posix", reason="POSIX file modes")
def test_a_session_file_others_may_read_is_refused(lab: Cli) -> None:
    login(lab, "ben", BEN)
    path = session_file("ben")
    assert path.stat().st_mode & 0o777 == 0o600
    assert path.parent.stat().st_mode & 0o777 == 0o700
    path.chmod(0o644)
    assert "others may read it" in refused_unwritten(lab, *LOT)


def test_idle_and_expired_sessions_are_refused(lab: Cli,
                                               monkeypatch: pytest.MonkeyPatch) -> None:
    from prepbook.lab import sessions

    login(lab, "ben", BEN)
    now = sessions.utc_now()
    monkeypatch.setattr(sessions, "utc_now", lambda: now + timedelta(minutes=16))
    assert "timed out after 0:15:00 without a write" in refused_unwritten(lab, *LOT)
    monkeypatch.setattr(sessions, "utc_now", lambda: now + timedelta(minutes=14))
    lab.ok(*LOT)  # a write restarts the idle clock ...
    monkeypatch.setattr(sessions, "utc_now", lambda: now + timedelta(minutes=28))
    lab.ok("instrument", "add", "BAL-1", "--kind", "balance", "--due", "2030-06-01")
    # ... but not the longest a session lasts (12 h by default)
    monkeypatch.setattr(sessions, "utc_now", lambda: now + timedelta(hours=12, minutes=1))
    assert "is over" in refused_unwritten(lab, *LOT)
    assert lab.json("whoami")[0]["state"] == "expired"


def test_the_lab_sets_the_idle_time(lab: Cli, monkeypatch: pytest.MonkeyPatch) -> None:
    from prepbook.lab import sessions

    login(lab, "ada", ADA)
    lab.ok("settings", "set", "session_idle_minutes", "60", "--reason", "long titrations",
           "--passphrase-stdin", input=f"{ADA}\n")
    now = sessions.utc_now()
    monkeypatch.setattr(sessions, "utc_now", lambda: now + timedelta(minutes=59))
    lab.ok(*LOT)


def test_reading_and_calc_need_no_session(lab: Cli) -> None:
    for args in (["status"], ["user", "list"], ["audit", "verify"], ["whoami"]):
        lab.ok(*args)
    lab.ok("calc", "normality", "--standard", "KHP", "--rep", "0.8085:39.16")


def test_login_and_logout_are_audited_with_the_account_and_token_hash(lab: Cli) -> None:
    import hashlib

    login(lab, "ben", BEN)
    token = json.loads(session_file("ben").read_text())["token"]
    lab.ok("logout")
    log = lab.json("audit", "log", "--actor", "ben")
    actions = [e["action"] for e in log]
    assert "user.login" in actions and "user.logout" in actions
    opened = next(e for e in log if e["action"] == "user.login")
    assert hashlib.sha256(token.encode()).hexdigest() in opened["reason"]
    assert token not in json.dumps(log)
    assert lab.json("audit", "verify")["ok"] is True


def test_wrong_login_passphrase_is_refused_and_counted(lab: Cli) -> None:
    before = row_counts(lab.db, sign_ins=True)
    err = lab.refused("login", "ben", "--passphrase-stdin", input="not-bens-passphrase\n")
    assert "wrong passphrase for ben" in err.stderr
    after = row_counts(lab.db, sign_ins=True)
    assert after["audit_events"] == before["audit_events"] + 1
    assert after["login_sessions"] == before["login_sessions"]
    assert lab.json("user", "list")[1]["failed_attempts"] == 1
