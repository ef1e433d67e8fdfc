"""What the root options give every command: the database target and the acting user."""

from __future__ import annotations

import getpass
import os
from dataclasses import dataclass

import typer

DEFAULT_DB = "prepbook.db"


@dataclass(frozen=True)
class Invocation:
    db: str
    user: str


def current_user() -> str:
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
                      user=os.environ.get("PREPBOOK_USER") or current_user())
