"""Opening the database named by the root options, who is acting, and reading
passphrases.

A command that writes names its actor through :func:`actor`: the person of a live
login session of this operating-system account on this database (``prepbook login``).
``--user`` (or PREPBOOK_USER) only chooses among the live sessions here; without it
the one live session is taken. Without a live session the command is refused in one
line saying how to log in, before anything is written.
"""

from __future__ import annotations

import sys
from typing import Any

import typer

from prepbook.cli.context import invocation
from prepbook.errors import InvalidInput, Refused


def database(ctx: typer.Context) -> Any:
    """The database of this run, which must exist and be current.

    Opened once per run and closed when the run ends, so a long-lived process that
    runs many commands (the tests, a shell's completion) keeps no server
    connections open after each one.
    """
    from prepbook.lab.database import open_database

    root = ctx.find_root()
    db = root.meta.get("prepbook.database")
    if db is None:
        db = open_database(invocation(ctx).db)
        root.meta["prepbook.database"] = db
        root.call_on_close(db.dispose)
    return db


def actor(ctx: typer.Context) -> str:
    """The person acting in this command: their live session here, or Refused.

    The user's own state speaks first (unknown, disabled, locked out), then the
    session (missing, of another account, ended, idle, expired). The session's idle
    clock restarts.
    """
    meta = ctx.find_root().meta
    if "prepbook.actor" in meta:
        return str(meta["prepbook.actor"])
    from prepbook.cli import session_files
    from prepbook.lab import sessions

    db = database(ctx)
    named = invocation(ctx).user_given
    held = session_files.held(db)
    if named is None:
        if not held:
            raise Refused("nobody is logged in to this database here: run "
                          "`prepbook login NAME` first (a write needs a live session)")
        if len(held) > 1:
            raise Refused(f"several people are logged in here ({', '.join(sorted(held))}): "
                          "say which with --user NAME")
        named = next(iter(held))
    sessions.check_person(db, named)
    token = held.get(named)
    if token is None:
        raise Refused(f"{named} is not logged in to this database here: run "
                      f"`prepbook login {named}` first (a write needs a live session)")
    os_login, host = sessions.os_account()
    sessions.live(db, name=named, token=token, os_login=os_login, host=host)
    meta["prepbook.actor"] = named
    return named


class Passphrases:
    """Passphrases for one command: from standard input (one per line) or prompted.

    With ``--passphrase-stdin`` the lines are read once, in the order the command
    documents; otherwise each is asked for at the terminal without echo.
    """

    def __init__(self, from_stdin: bool) -> None:
        self._lines: list[str] | None = None
        if from_stdin:
            data = sys.stdin.read()
            self._lines = data.splitlines()
        self._next = 0

    def get(self, prompt: str, *, confirm: bool = False) -> str:
        if self._lines is not None:
            if self._next >= len(self._lines):
                raise InvalidInput(f"standard input has no line for: {prompt.lower()}")
            value = self._lines[self._next]
            self._next += 1
            return value
        if not sys.stdin.isatty():
            raise InvalidInput(f"{prompt.lower()} is needed: type it at a terminal "
                               "or pass --passphrase-stdin")
        return typer.prompt(prompt, hide_input=True, confirmation_prompt=confirm)
