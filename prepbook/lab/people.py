"""Users and roles: technicians record, reviewers review, admins manage users."""

from __future__ import annotations

import re
from typing import Any

from sqlalchemy import func, select

from prepbook.errors import InvalidInput, Refused
from prepbook.lab.common import acting, check_passphrase, iso, write
from prepbook.lab.security import check_new_passphrase, hash_passphrase
from prepbook.store.engine import Database
from prepbook.store.models import ROLES, User

_NAME = re.compile(r"^[A-Za-z][A-Za-z0-9._-]{0,39}$")


def _user_dict(u: User) -> dict[str, Any]:
    return {"name": u.name, "role": u.role, "active": u.active,
            "created_at": iso(u.created_at), "created_by": u.created_by}


def user_count(db: Database) -> int:
    with db.session(write=False) as s:
        return int(s.scalar(select(func.count()).select_from(User)) or 0)


def add_user(db: Database, *, actor: str, name: str, role: str, passphrase: str,
             actor_passphrase: str | None) -> dict[str, Any]:
    """Add a user. The first user must be an admin; after that only an admin adds users."""
    if not _NAME.match(name):
        raise InvalidInput(f"user name {name!r} must be 1-40 letters, digits or . _ -, "
                           "starting with a letter")
    if role not in ROLES:
        raise InvalidInput(f"role {role!r} is not one of {', '.join(ROLES)}")
    check_new_passphrase(passphrase)
    with db.session() as s:
        existing = int(s.scalar(select(func.count()).select_from(User)) or 0)
        if existing == 0:
            if role != "admin":
                raise Refused("the first user of a database must be an admin")
            created_by = actor
        else:
            admin = acting(s, actor, ("admin",), "add users")
            check_passphrase(admin, actor_passphrase)
            created_by = admin.name
        if s.scalars(select(User).where(User.name == name)).first() is not None:
            raise Refused(f"user {name!r} already exists")
        from prepbook.inputs import utc_now

        user = User(name=name, role=role, passphrase_hash=hash_passphrase(passphrase),
                    active=True, failed_attempts=0, created_at=utc_now(), created_by=created_by)
        write(s, created_by, "user.add", user)
        return _user_dict(user)


def list_users(db: Database) -> list[dict[str, Any]]:
    with db.session(write=False) as s:
        return [_user_dict(u) for u in s.scalars(select(User).order_by(User.name))]
