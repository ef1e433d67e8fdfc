"""Users and roles: technicians record, reviewers review, admins manage users."""

from __future__ import annotations

import re
from dataclasses import dataclass

from sqlalchemy import func, select

from prepbook.errors import InvalidInput, Refused
from prepbook.lab.common import acting, lockout_after, signed, user_named, write
from prepbook.lab.security import HashCost, check_new_passphrase, hash_passphrase
from prepbook.store import retry
from prepbook.store.engine import Database
from prepbook.store.models import ROLES, User

_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9._-]{0,39}$")


@dataclass(frozen=True)
class UserInfo:
    """A user as the commands show them (the fields are the JSON keys)."""

    name: str
    role: str
    active: bool
    failed_attempts: int
    locked: bool
    created_at: str
    created_by: str


def _user_info(u: User, limit: int | None = None) -> UserInfo:
    return UserInfo(name=u.name, role=u.role, active=u.active,
                    failed_attempts=u.failed_attempts,
                    locked=limit is not None and u.failed_attempts >= limit,
                    created_at=u.created_at.isoformat(timespec="minutes"), created_by=u.created_by)


def user_count(db: Database) -> int:
    with db.session(write=False) as s:
        return int(s.scalar(select(func.count()).select_from(User)) or 0)


@retry.on_conflict
def add_user(db: Database, *, actor: str, name: str, role: str, passphrase: str,
             actor_passphrase: str | None, hash_cost: HashCost | None = None) -> UserInfo:
    """Add a user. The first user must be an admin; after that only an admin adds users.

    ``hash_cost``: Argon2 parameters for an invented fixture user (see ``HashCost``)."""
    if not _NAME.match(name):
        raise InvalidInput(f"user name {name!r} must be 1-40 letters, digits or . _ -, "
                           "starting with a letter")
    if role not in ROLES:
        raise InvalidInput(f"role {role!r} is not one of {', '.join(ROLES)}")
    check_new_passphrase(passphrase)
    if user_count(db) > 0:
        signed(db, actor, actor_passphrase, ("admin",), "add users")
    with db.session() as s:
        existing = int(s.scalar(select(func.count()).select_from(User)) or 0)
        if existing == 0:
            if role != "admin":
                raise Refused("the first user of a database must be an admin")
            created_by = actor
        else:
            admin = acting(s, actor, ("admin",), "add users")
            created_by = admin.name
        if s.scalars(select(User).where(User.name == name)).first() is not None:
            raise Refused(f"user {name!r} already exists")
        from prepbook.inputs import utc_now

        user = User(name=name, role=role, passphrase_hash=hash_passphrase(passphrase, hash_cost),
                    active=True, failed_attempts=0, created_at=utc_now(), created_by=created_by)
        write(s, created_by, "user.add", user)
        return _user_info(user)


def list_users(db: Database) -> list[UserInfo]:
    with db.session(write=False) as s:
        limit = lockout_after(s)
        return [_user_info(u, limit) for u in s.scalars(select(User).order_by(User.name))]


@retry.on_conflict
def _manage(db: Database, *, actor: str, name: str, passphrase: str | None, reason: str | None,
            action: str) -> UserInfo:
    from prepbook.inputs import parse_text

    reason = parse_text(reason, "reason", max_len=500)
    if not (reason and reason.strip()):
        raise InvalidInput(f"to {action} a user needs a --reason")
    if action == "disable" and name == actor:
        raise Refused("an admin cannot disable themselves; ask another admin")
    signed(db, actor, passphrase, ("admin",), "manage users")
    with db.session() as s:
        admin = acting(s, actor, ("admin",), "manage users")
        user = user_named(s, name)
        if action == "disable":
            if not user.active:
                raise Refused(f"{name} is already disabled")
            user.active = False
        elif action == "enable":
            if user.active:
                raise Refused(f"{name} is not disabled")
            user.active = True
        else:  # unlock
            if user.failed_attempts == 0:
                raise Refused(f"{name} is not locked out")
            user.failed_attempts = 0
        write(s, admin.name, f"user.{action}", user, reason=reason)
        return _user_info(user, lockout_after(s))


def disable_user(db: Database, *, actor: str, name: str, passphrase: str | None,
                 reason: str | None) -> UserInfo:
    """A disabled user can do nothing (their records stay)."""
    return _manage(db, actor=actor, name=name, passphrase=passphrase, reason=reason,
                   action="disable")


def enable_user(db: Database, *, actor: str, name: str, passphrase: str | None,
                reason: str | None) -> UserInfo:
    return _manage(db, actor=actor, name=name, passphrase=passphrase, reason=reason,
                   action="enable")


def unlock_user(db: Database, *, actor: str, name: str, passphrase: str | None,
                reason: str | None) -> UserInfo:
    """Clear the count of wrong passphrases that locked a user out."""
    return _manage(db, actor=actor, name=name, passphrase=passphrase, reason=reason,
                   action="unlock")
