"""Users and roles: technicians record, reviewers review, admins manage users.

Each change to an account is signed and audited with a reason. Only "user.add",
"user.passphrase" and "user.reset" change a passphrase hash. The last active admin
can be neither disabled nor demoted, and no lockout lasts for good
(``common.locked_until``).
"""

from __future__ import annotations

import msgspec
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from prepbook.errors import InvalidInput, Refused
from prepbook.inputs import parse_text, utc_now
from prepbook.lab.common import acting, locked_until, proven, signed, user_named, write
from prepbook.lab.security import (
    HashCost,
    check_new_passphrase,
    check_user_name,
    hash_passphrase,
)
from prepbook.lab.sessions import end_sessions
from prepbook.lab.settings import passphrase_policy
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import ROLES, User


class UserInfo(msgspec.Struct, frozen=True):
    """A user as the commands show them (the fields are the JSON keys)."""

    name: str
    role: str
    active: bool
    failed_attempts: int
    locked: bool
    created_at: str
    created_by: str


def _user_info(s: Session, u: User) -> UserInfo:
    return UserInfo(name=u.name, role=u.role, active=u.active,
                    failed_attempts=u.failed_attempts,
                    locked=locked_until(s, u) is not None,
                    created_at=u.created_at.isoformat(timespec="minutes"), created_by=u.created_by)


def _checked_new(db: Database, name: str, passphrase: str) -> None:
    with db.session(write=False) as s:
        check_new_passphrase(passphrase, name=name, policy=passphrase_policy(s))


def _reason(reason: str | None, doing: str) -> str:
    text = parse_text(reason, "reason", max_len=500)
    if not (text and text.strip()):
        raise InvalidInput(f"to {doing} needs a --reason")
    return text


def user_count(db: Database) -> int:
    with db.session(write=False) as s:
        return int(s.scalar(select(func.count()).select_from(User)) or 0)


@retry.on_conflict
def add_user(db: Database, *, actor: str, name: str, role: str, passphrase: str,
             actor_passphrase: str | None, hash_cost: HashCost | None = None) -> UserInfo:
    """Add a user. The first user must be an admin (they add themselves: ``actor`` is
    their own name); after that only an admin adds users (signed).

    ``hash_cost``: Argon2 parameters for an invented fixture user (see ``HashCost``)."""
    if role not in ROLES:
        raise InvalidInput(f"role {role!r} is not one of {', '.join(ROLES)}")
    with db.session(write=False) as s:
        check_user_name(name, list(s.scalars(select(User.name))))
    _checked_new(db, name, passphrase)
    first = user_count(db) == 0
    if not first:
        signed(db, actor, actor_passphrase, ("admin",), "add users",
               meaning="added a user", what=f"{name} ({role})")
    new_hash = hash_passphrase(passphrase, hash_cost)
    with db.session() as s:
        existing = list(s.scalars(select(User.name)))
        if not existing:
            if role != "admin":
                raise Refused("the first user of a database must be an admin")
            if actor != name:
                raise Refused(f"the first user adds themselves: run it as {name}")
            created_by = name
        elif first:
            raise Refused("another user was added meanwhile; sign as an admin and try again")
        else:
            created_by = acting(s, actor, ("admin",), "add users").name
        check_user_name(name, existing)
        user = User(name=name, role=role, passphrase_hash=new_hash, active=True,
                    failed_attempts=0, created_at=utc_now(), created_by=created_by)
        write(s, created_by, "user.add", user)
        return _user_info(s, user)


def list_users(db: Database) -> list[UserInfo]:
    with db.session(write=False) as s:
        return [_user_info(s, u) for u in s.scalars(select(User).order_by(User.name))]


def _other_active_admins(s: Session, user: User) -> int:
    return int(s.scalar(select(func.count()).select_from(User).where(
        User.role == "admin", User.active.is_(True), User.id != user.id)) or 0)


_MEANING = {"disable": "disabled a user", "enable": "enabled a user",
            "unlock": "unlocked a user", "role": "changed a role", "reset": "reset a passphrase"}


@retry.on_conflict
def _manage(db: Database, *, actor: str, name: str, passphrase: str | None, reason: str | None,
            action: str, role: str | None = None, new_passphrase: str | None = None) -> UserInfo:
    reason = _reason(reason, f"{action} a user")
    if action == "disable" and name == actor:
        raise Refused("an admin cannot disable themselves; ask another admin")
    if action == "role" and role not in ROLES:
        raise InvalidInput(f"role {role!r} is not one of {', '.join(ROLES)}")
    new_hash = None
    if new_passphrase is not None:
        _checked_new(db, name, new_passphrase)
        new_hash = hash_passphrase(new_passphrase)
    signed(db, actor, passphrase, ("admin",), "manage users", meaning=_MEANING[action],
           what=name + (f" to {role}" if role else ""))
    with db.session() as s:
        admin = acting(s, actor, ("admin",), "manage users")
        user = user_named(s, name)
        last_admin = user.role == "admin" and user.active and not _other_active_admins(s, user)
        if action == "disable":
            if not user.active:
                raise Refused(f"{name} is already disabled")
            if last_admin:
                raise Refused(f"{name} is the last active admin and cannot be disabled")
            user.active = False
            end_sessions(s, user, "disabled")
        elif action == "enable":
            if user.active:
                raise Refused(f"{name} is not disabled")
            user.active = True
        elif action == "role":
            if user.role == role:
                raise Refused(f"{name} is already a {role}")
            if last_admin:
                raise Refused(f"{name} is the last active admin and cannot stop being one")
            user.role = str(role)
        elif action == "reset":
            user.passphrase_hash = new_hash
            user.failed_attempts = 0
            end_sessions(s, user, "passphrase reset")
        else:  # unlock
            if user.failed_attempts == 0:
                raise Refused(f"{name} is not locked out")
            user.failed_attempts = 0
        write(s, admin.name, f"user.{action}", user, reason=reason)
        return _user_info(s, user)


def disable_user(db: Database, *, actor: str, name: str, passphrase: str | None,
                 reason: str | None) -> UserInfo:
    """A disabled user can do nothing (their records stay; their sessions end)."""
    return _manage(db, actor=actor, name=name, passphrase=passphrase, reason=reason,
                   action="disable")


def enable_user(db: Database, *, actor: str, name: str, passphrase: str | None,
                reason: str | None) -> UserInfo:
    return _manage(db, actor=actor, name=name, passphrase=passphrase, reason=reason,
                   action="enable")


def unlock_user(db: Database, *, actor: str, name: str, passphrase: str | None,
                reason: str | None) -> UserInfo:
    """Clear the count of wrong passphrases that locked a user out, ending the lock."""
    return _manage(db, actor=actor, name=name, passphrase=passphrase, reason=reason,
                   action="unlock")


def change_role(db: Database, *, actor: str, name: str, role: str, passphrase: str | None,
                reason: str | None) -> UserInfo:
    """Give a user another role (admin, signed); the last active admin stays one."""
    return _manage(db, actor=actor, name=name, passphrase=passphrase, reason=reason,
                   action="role", role=role)


def reset_passphrase(db: Database, *, actor: str, name: str, new_passphrase: str,
                     passphrase: str | None, reason: str | None) -> UserInfo:
    """An admin sets a one-time passphrase for ``name`` (signed): their sessions end, any
    lockout is cleared, and they must choose their own at their next login."""
    if name == actor:
        raise Refused("change your own passphrase with `prepbook user passphrase`")
    return _manage(db, actor=actor, name=name, passphrase=passphrase, reason=reason,
                   action="reset", new_passphrase=new_passphrase)


@retry.on_conflict
def change_passphrase(db: Database, *, name: str, old: str | None, new: str,
                      reason: str | None = None) -> UserInfo:
    """A user changes their own passphrase, signed with the old one."""
    reason = parse_text(reason, "reason", max_len=500) or "changed by the user"
    _checked_new(db, name, new)
    if old == new:
        raise InvalidInput("the new passphrase must differ from the old one")
    new_hash = hash_passphrase(new)
    signed(db, name, old, doing="change their passphrase", meaning="changed own passphrase",
           what=name)
    with db.session() as s:
        user = acting(s, name, doing="change their passphrase")
        user.passphrase_hash = new_hash
        write(s, name, "user.passphrase", user, reason=reason)
        return _user_info(s, user)


def check_signature(db: Database, *, name: str, passphrase: str | None) -> None:
    """Refuse unless ``passphrase`` is ``name``'s (each failure recorded): the terminal
    app's unlock after its idle time."""
    proven(db, name, passphrase, doing="unlock the screen")


def _owns_database(db: Database, s: Session) -> bool:
    """True when this process could change the database behind prepbook's back anyway:
    the SQLite file's owner, or the PostgreSQL database's owner."""
    import os

    if db.path is not None:
        return os.name != "posix" or db.path.stat().st_uid == os.getuid()
    from sqlalchemy import text

    return bool(s.scalar(text("SELECT pg_get_userbyid(datdba) = current_user FROM pg_database "
                              "WHERE datname = current_database()")))


@retry.on_conflict
def recover_admin(db: Database, *, name: str, new_passphrase: str, reason: str | None,
                  os_login: str, host: str) -> UserInfo:
    """When no admin can sign in: the database's owner sets a one-time passphrase for the
    admin ``name`` (audited as "user.reset" by "recovery by LOGIN@HOST", with the reason);
    the admin chooses their own at their next login. Anyone else is refused."""
    reason = _reason(reason, "recover an admin")
    _checked_new(db, name, new_passphrase)
    new_hash = hash_passphrase(new_passphrase)
    with db.session() as s:
        if not _owns_database(db, s):
            raise Refused("only the owner of the database (its file, or on PostgreSQL the "
                          "database) may recover an admin")
        user = user_named(s, name)
        if user.role != "admin" or not user.active:
            raise Refused(f"{name} is not an active admin; recover an admin, who then "
                          "manages the others")
        user.passphrase_hash = new_hash
        user.failed_attempts = 0
        end_sessions(s, user, "recovered")
        write(s, f"recovery by {os_login}@{host}", "user.reset", user, reason=reason)
        return _user_info(s, user)
