"""Login sessions: a person proves who they are once, then writes for a while.

A login checks the passphrase (as a signature does: each failure recorded, lockouts
included) and opens a session for one operating-system account and host on this
database. The session is a random token: its holder keeps it (the command line in a
file only its owner can read, the terminal app in memory); the database keeps only
its SHA-256, in a ``login_sessions`` row and in the reason of the login's audit event.

A token proves nothing on its own: ``live`` refuses it unless its hash is recorded
for a session of that very person, opened from this operating-system account and
host, not ended, within the lab's maximum time since the login and its idle time since
the last write. So a session file copied to another account or machine, edited (for
another name, or to live longer: the times are only in the database) or forged is
useless.
"""

from __future__ import annotations

import hashlib
import secrets
from datetime import datetime, timedelta

import msgspec
from sqlalchemy import select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import utc_now
from prepbook.lab.common import (
    RECORDERS,
    acting,
    iso,
    proven,
    user_named,
    whole_setting,
    write,
)
from prepbook.lab.database import Database
from prepbook.lab.security import check_new_passphrase, hash_passphrase
from prepbook.lab.settings import passphrase_policy
from prepbook.store import retry
from prepbook.store.models import AuditEvent, LoginSession, User

DEFAULT_IDLE_MINUTES = 15  # common practice, no source
DEFAULT_MAX_HOURS = 12  # a working day and a half-shift: common practice, no source
# The actions that may change a user's passphrase hash (nothing else may).
PASSPHRASE_ACTIONS = ("user.add", "user.passphrase", "user.reset")


def os_account() -> tuple[str, str]:
    """(operating-system login, host name) of this process."""
    import getpass
    import os
    import socket

    try:
        login = getpass.getuser()
    except (KeyError, OSError):  # no login name (some containers, Windows services)
        login = os.environ.get("USERNAME") or os.environ.get("USER") or "unknown"
    return login, socket.gethostname() or "unknown"


def database_identity(url: str) -> str:
    """What names a database (its URL) in session files: the URL without a password."""
    from sqlalchemy import make_url

    return make_url(url).render_as_string(hide_password=True)


def token_hash(token: str) -> str:
    return "sha256:" + hashlib.sha256(token.encode("utf-8")).hexdigest()


class MustChoose(Refused):
    """The user's passphrase was reset by an admin: a new one is needed to log in."""


class SessionInfo(msgspec.Struct, frozen=True):
    """A session as `prepbook whoami` shows it (the fields are the JSON keys)."""

    user: str
    role: str
    os_login: str
    host: str
    started_at: str
    last_seen_at: str
    idle_until: str
    until: str
    live: bool
    state: str  # live, idle, expired, ended


class Opened(msgspec.Struct, frozen=True):
    """A session just opened: the token its holder keeps, and the session."""

    token: str
    session: SessionInfo


def _limits(s: Session) -> tuple[timedelta, timedelta]:
    """(idle time, maximum time) the lab sets."""
    return (timedelta(minutes=whole_setting(s, "session_idle_minutes", DEFAULT_IDLE_MINUTES)),
            timedelta(hours=whole_setting(s, "session_max_hours", DEFAULT_MAX_HOURS)))


def _state(row: LoginSession, now: datetime, idle: timedelta, longest: timedelta) -> str:
    if row.ended_at is not None:
        return "ended"
    if now > row.started_at + longest:
        return "expired"
    if now > row.last_seen_at + idle:
        return "idle"
    return "live"


def _info(row: LoginSession, user: User, s: Session) -> SessionInfo:
    idle, longest = _limits(s)
    state = _state(row, utc_now(), idle, longest)
    return SessionInfo(user=user.name, role=user.role, os_login=row.os_login, host=row.host,
                       started_at=iso(row.started_at) or "",
                       last_seen_at=iso(row.last_seen_at) or "",
                       idle_until=iso(min(row.last_seen_at + idle,
                                          row.started_at + longest)) or "",
                       until=iso(row.started_at + longest) or "", live=state == "live",
                       state=state)


def must_choose_passphrase(s: Session, user: User) -> bool:
    """True when the user's passphrase was last set by an admin's reset: they must choose
    their own before they work again."""
    last = s.scalars(select(AuditEvent.action).where(
        AuditEvent.record_type == "users", AuditEvent.record_id == user.id,
        AuditEvent.action.in_(PASSPHRASE_ACTIONS)).order_by(AuditEvent.seq.desc())
        .limit(1)).first()
    return last == "user.reset"


@retry.on_conflict
def login(db: Database, *, name: str, passphrase: str | None, os_login: str, host: str,
          new_passphrase: str | None = None) -> Opened:
    """Open a session for ``name`` after checking their passphrase.

    A wrong passphrase is refused and recorded (``proven``). A user whose passphrase an
    admin reset must give a new one (``new_passphrase``), set in the same transaction
    as the login. A new login from the same account and host ends the earlier one.
    """
    stored = proven(db, name, passphrase, RECORDERS, "sign in")
    with db.session(write=False) as s:
        user = user_named(s, name)
        must_change = must_choose_passphrase(s, user)
        policy = passphrase_policy(s)
    new_hash = None
    if must_change:
        if new_passphrase is None:
            raise MustChoose(f"an admin reset the passphrase of {name}: choose a new one to sign "
                          "in (`prepbook login` asks for it; with --passphrase-stdin give it "
                          "on line 2)")
        if new_passphrase == passphrase:
            raise InvalidInput("the new passphrase must differ from the one an admin set")
        check_new_passphrase(new_passphrase, name=name, policy=policy)
        new_hash = hash_passphrase(new_passphrase)
    token = secrets.token_urlsafe(32)
    hashed = token_hash(token)
    with db.session() as s:
        user = acting(s, name, RECORDERS, "sign in")
        if user.passphrase_hash != stored:
            raise Refused(f"the passphrase of {name} changed while signing in; try again")
        if new_hash is not None:
            user.passphrase_hash = new_hash
            write(s, name, "user.passphrase", user, reason="chosen at sign-in after a reset")
        now = utc_now()
        for old in s.scalars(select(LoginSession).where(
                LoginSession.user_id == user.id, LoginSession.os_login == os_login,
                LoginSession.host == host, LoginSession.ended_at.is_(None))):
            old.ended_at, old.ended_reason = now, "replaced by a new login"
        write(s, name, "user.login", user,
              reason=f"session opened for {os_login} on {host}; token {hashed}")
        seq = s.scalar(select(AuditEvent.seq).where(
            AuditEvent.record_type == "users", AuditEvent.record_id == user.id,
            AuditEvent.action == "user.login").order_by(AuditEvent.seq.desc()).limit(1))
        row = LoginSession(user_id=user.id, token_sha256=hashed, os_login=os_login, host=host,
                           login_seq=int(seq or 0), started_at=now, last_seen_at=now)
        s.add(row)
        s.flush()
        return Opened(token=token, session=_info(row, user, s))


def _session_of(s: Session, name: str, token: str) -> tuple[LoginSession, User] | None:
    row = s.scalars(select(LoginSession).where(
        LoginSession.token_sha256 == token_hash(token))).first()
    if row is None:
        return None
    user = s.get(User, row.user_id)
    if user is None or user.name != name:
        return None
    return row, user


def _login_recorded(s: Session, row: LoginSession) -> bool:
    """The session's login event exists and names its token's hash (a row inserted
    behind prepbook's back has none)."""
    event = s.get(AuditEvent, row.login_seq)
    return (event is not None and event.action == "user.login"
            and event.record_type == "users" and event.record_id == row.user_id
            and row.token_sha256 in (event.reason or ""))


def live(db: Database, *, name: str, token: str, os_login: str, host: str) -> SessionInfo:
    """The live session ``token`` holds for ``name`` here, its idle clock restarted; or
    Refused saying how to log in. Refused, it writes nothing."""
    hint = f"run `prepbook login {name}`"
    # It writes only this session's idle clock: beside uses, not beside other writes.
    with db.session(shared=True) as s:
        found = _session_of(s, name, token)
        if found is None or not _login_recorded(s, found[0]):
            raise Refused(f"the session of {name} here is not one this database opened; {hint}")
        row, user = found
        if (row.os_login, row.host) != (os_login, host):
            raise Refused(f"the session of {name} was opened by {row.os_login} on {row.host}, "
                          f"not by {os_login} on {host}; {hint}")
        idle, longest = _limits(s)
        state = _state(row, utc_now(), idle, longest)
        if state != "live":
            why = {"ended": "has ended", "expired": f"is over (longest {longest})",
                   "idle": f"timed out after {idle} without a write"}[state]
            raise Refused(f"the session of {name} {why}; {hint}")
        row.last_seen_at = max(utc_now(), row.last_seen_at)
        s.flush()
        return _info(row, user, s)


def describe(db: Database, *, name: str, token: str) -> SessionInfo | None:
    """The session ``token`` holds for ``name`` (live or not), read only; None if this
    database has no such session."""
    with db.session(write=False) as s:
        found = _session_of(s, name, token)
        return None if found is None else _info(found[0], found[1], s)


@retry.on_conflict
def logout(db: Database, *, name: str, token: str) -> bool:
    """End the session ``token`` holds for ``name``; False if it was not open."""
    with db.session() as s:
        found = _session_of(s, name, token)
        if found is None or found[0].ended_at is not None:
            return False
        row, user = found
        row.ended_at, row.ended_reason = utc_now(), "logout"
        write(s, name, "user.logout", user,
              reason=f"session opened {iso(row.started_at)} for {row.os_login} on {row.host}")
        return True


def end_sessions(s: Session, user: User, why: str) -> None:
    """End every open session of ``user`` (their passphrase was reset, they were
    disabled), in the caller's transaction."""
    now = utc_now()
    for row in s.scalars(select(LoginSession).where(LoginSession.user_id == user.id,
                                                    LoginSession.ended_at.is_(None))):
        row.ended_at, row.ended_reason = now, why


def check_person(db: Database, name: str) -> None:
    """Refuse, read only, a person who may not act at all: unknown, disabled, locked out."""
    with db.session(write=False) as s:
        acting(s, name, RECORDERS, "write")
