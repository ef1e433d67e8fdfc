"""What the root options give every command: the database target and the acting user."""

from __future__ import annotations

import os
from typing import NamedTuple

import typer

DEFAULT_DB = "prepbook.db"


class Invocation(NamedTuple):
    """The root options of one run. ``user_given`` is as given (``--user`` or PREPBOOK_USER);
    ``user`` falls back to the login name, looked up only when a command needs
    it (a NamedTuple rather than a dataclass: every command builds one at start-up)."""

    db: str
    user_given: str | None = None

    @property
    def user(self) -> str:
        return self.user_given or current_user()


def current_user() -> str:
    import getpass  # only when no user was named

    try:
        return getpass.getuser()
    except (KeyError, OSError):  # no login name (some containers, Windows services)
        return os.environ.get("USERNAME") or os.environ.get("USER") or "unknown"


def invocation(ctx: typer.Context) -> Invocation:
    """The root options of this run, wherever in the command tree we are."""
    root = ctx.find_root()
    obj = root.obj
    if isinstance(obj, Invocation):
        return obj
    return Invocation(db=os.environ.get("PREPBOOK_DB") or DEFAULT_DB,
                      user_given=os.environ.get("PREPBOOK_USER") or None)
