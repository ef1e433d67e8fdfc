"""prepbook login, logout and whoami: sessions of this operating-system account."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.context import invocation
from prepbook.cli.session import Passphrases, database


def login(
    ctx: typer.Context,
    name: str = typer.Argument(None, metavar="[NAME]",
                               help="Who logs in (default: --user, else your login name)."),
    passphrase_stdin: bool = typer.Option(
        False, "--passphrase-stdin",
        help="Read the passphrase from standard input (line 1; line 2: a new one, after an "
             "admin's reset)."),
    as_json: bool = typer.Option(False, "--json", help="Print the session as JSON."),
) -> None:
    """Log in: open a session for this account on this database (asks the passphrase)."""
    from prepbook.cli import session_files
    from prepbook.lab import sessions

    who = name or invocation(ctx).user
    db = database(ctx)
    secrets = Passphrases(passphrase_stdin)
    passphrase = secrets.get(f"Passphrase of {who}")
    os_login, host = sessions.os_account()
    try:
        opened = sessions.login(db, name=who, passphrase=passphrase, os_login=os_login,
                                host=host)
    except sessions.MustChoose:
        new = secrets.get(f"An admin reset it: new passphrase for {who}", confirm=True)
        opened = sessions.login(db, name=who, passphrase=passphrase, os_login=os_login,
                                host=host, new_passphrase=new)
    session_files.save(db, who, opened.token)
    if as_json:
        output.emit_json(opened.session)
        return
    from prepbook.lab import settings

    s, clk = opened.session, settings.lab_clock(db)
    output.console().print(f"logged in as {s.user} ({s.role}) until {clk.shown(s.until)}, "
                           f"or after {clk.shown(s.idle_until)} without a write")


def logout(
    ctx: typer.Context,
    name: str = typer.Argument(None, metavar="[NAME]",
                               help="Whose session ends (default: --user, else the only one)."),
) -> None:
    """Log out: end a session of this account on this database."""
    from prepbook.cli import session_files
    from prepbook.errors import Refused
    from prepbook.lab import sessions

    db = database(ctx)
    held = session_files.held(db)
    who = name or invocation(ctx).user_given
    if who is None:
        if len(held) != 1:
            raise Refused("say whose session ends: prepbook logout NAME" if held
                          else "nobody is logged in to this database here")
        who = next(iter(held))
    token = held.get(who)
    if token is None:
        raise Refused(f"{who} is not logged in to this database here")
    ended = sessions.logout(db, name=who, token=token)
    session_files.forget(db, who)
    output.console().print(f"logged out {who}" if ended
                           else f"{who}'s session had already ended; its file is removed")


def whoami(
    ctx: typer.Context,
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """The sessions of this account on this database: person, role, until when."""
    from prepbook.cli import session_files
    from prepbook.lab import sessions

    db = database(ctx)
    found = []
    for who, token in sorted(session_files.held(db).items()):
        info = sessions.describe(db, name=who, token=token)
        if info is not None:
            found.append(info)
    if as_json:
        output.emit_json(found)
        return
    if not found:
        output.console().print("nobody is logged in to this database here "
                               "(`prepbook login NAME`)")
        return
    output.console().print(output.table(
        "Sessions", ["user", "role", "state", "since", "idle after", "until"],
        [(s.user, s.role, s.state, s.started_at, s.idle_until, s.until) for s in found]))
