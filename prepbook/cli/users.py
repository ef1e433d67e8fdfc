"""prepbook user: the people who record, review and manage."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import Passphrases, actor, database

app = typer.Typer(
    help="Add and list users (technician, reviewer, admin).",
    no_args_is_help=True,
    rich_markup_mode=None,
)


@app.command("add")
def add(
    ctx: typer.Context,
    name: str = typer.Argument(..., metavar="NAME", help="Login name of the new user."),
    role: str = typer.Option(..., "--role", metavar="ROLE", help="technician, reviewer or admin."),
    passphrase_stdin: bool = typer.Option(
        False,
        "--passphrase-stdin",
        help="Read the new passphrase (line 1) and the acting admin's (line 2, not for the "
        "first user) from standard input.",
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the new user as JSON."),
) -> None:
    """Add a user. The first user must be an admin; then only an admin adds users (signed)."""
    from prepbook.lab import people

    db = database(ctx)
    first = people.user_count(db) == 0
    secrets = Passphrases(passphrase_stdin)
    new = secrets.get(f"Passphrase for {name}", confirm=True)
    admin_pass = None if first else secrets.get(f"Passphrase of {actor(ctx)} (admin)")
    user = people.add_user(db, actor=actor(ctx), name=name, role=role, passphrase=new,
                           actor_passphrase=admin_pass)
    if as_json:
        output.emit_json(user)
    else:
        output.console().print(f"added {user.role} [bold]{user.name}[/bold]")


@app.command("list")
def list_(
    ctx: typer.Context,
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """List the users and their roles."""
    from prepbook.lab import people

    users = people.list_users(database(ctx))
    if as_json:
        output.emit_json(users)
        return
    output.console().print(output.table(
        "Users", ["name", "role", "active", "added", "by"],
        [(u.name, u.role, "yes" if u.active else "no", u.created_at, u.created_by)
         for u in users]))


def _manage(ctx: typer.Context, name: str, reason: str, passphrase_stdin: bool, as_json: bool,
            verb: str) -> None:
    from prepbook.lab import people

    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {actor(ctx)} (admin)")
    fn = {"disable": people.disable_user, "enable": people.enable_user,
          "unlock": people.unlock_user}[verb]
    user = fn(database(ctx), actor=actor(ctx), name=name, passphrase=secret, reason=reason)
    if as_json:
        output.emit_json(user)
    else:
        output.console().print(f"{verb}d {user.name}" if verb != "unlock"
                               else f"unlocked {user.name}")


_REASON = typer.Option(..., "--reason", metavar="TEXT", help="Why (kept in the audit trail).")
_STDIN = typer.Option(False, "--passphrase-stdin",
                      help="Read your (admin) passphrase from standard input.")
_JSON = typer.Option(False, "--json", help="Print the user as JSON.")


@app.command("disable")
def disable(ctx: typer.Context, name: str = typer.Argument(..., metavar="NAME",
                                                           help="User to disable."),
            reason: str = _REASON, passphrase_stdin: bool = _STDIN,
            as_json: bool = _JSON) -> None:
    """Disable a user (admin, signed): they can do nothing; their records stay."""
    _manage(ctx, name, reason, passphrase_stdin, as_json, "disable")


@app.command("enable")
def enable(ctx: typer.Context, name: str = typer.Argument(..., metavar="NAME",
                                                          help="User to enable again."),
           reason: str = _REASON, passphrase_stdin: bool = _STDIN,
           as_json: bool = _JSON) -> None:
    """Enable a disabled user again (admin, signed)."""
    _manage(ctx, name, reason, passphrase_stdin, as_json, "enable")


@app.command("unlock")
def unlock(ctx: typer.Context, name: str = typer.Argument(..., metavar="NAME",
                                                          help="User to unlock."),
           reason: str = _REASON, passphrase_stdin: bool = _STDIN,
           as_json: bool = _JSON) -> None:
    """Unlock a user locked out by wrong passphrases (admin, signed)."""
    _manage(ctx, name, reason, passphrase_stdin, as_json, "unlock")
