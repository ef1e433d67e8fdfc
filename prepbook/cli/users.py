"""prepbook user: the people who record, review and manage."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import Passphrases, actor, database

app = typer.Typer(
    help="Add and list users (technician, reviewer, admin); passphrases, roles, lockouts.",
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
    # The first user (an admin) adds themselves: nobody can be logged in yet.
    first = people.user_count(db) == 0
    who = name if first else actor(ctx)
    secrets = Passphrases(passphrase_stdin)
    new = secrets.get(f"Passphrase for {name}", confirm=True)
    admin_pass = None if first else secrets.get(f"Passphrase of {who} (admin)")
    user = people.add_user(db, actor=who, name=name, role=role, passphrase=new,
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

    who = actor(ctx)
    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {who} (admin)")
    fn = {"disable": people.disable_user, "enable": people.enable_user,
          "unlock": people.unlock_user}[verb]
    user = fn(database(ctx), actor=who, name=name, passphrase=secret, reason=reason)
    _show(user, as_json, f"{verb}d {user.name}" if verb != "unlock" else f"unlocked {user.name}")


def _show(user: object, as_json: bool, line: str) -> None:
    if as_json:
        output.emit_json(user)
    else:
        output.console().print(line)


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


@app.command("role")
def role(ctx: typer.Context,
         name: str = typer.Argument(..., metavar="NAME", help="Whose role changes."),
         new_role: str = typer.Argument(..., metavar="ROLE", help="technician, reviewer or admin."),
         reason: str = _REASON, passphrase_stdin: bool = _STDIN, as_json: bool = _JSON) -> None:
    """Give a user another role (admin, signed); the last active admin stays one."""
    from prepbook.lab import people

    who = actor(ctx)
    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {who} (admin)")
    user = people.change_role(database(ctx), actor=who, name=name, role=new_role,
                              passphrase=secret, reason=reason)
    _show(user, as_json, f"{user.name} is now a {user.role}")


def _reset(ctx: typer.Context, name: str, reason: str | None, passphrase_stdin: bool,
           as_json: bool) -> None:
    from prepbook.lab import people

    who = actor(ctx)
    secrets = Passphrases(passphrase_stdin)
    secret = secrets.get(f"Passphrase of {who} (admin)")
    new = secrets.get(f"One-time passphrase for {name}", confirm=True)
    user = people.reset_passphrase(database(ctx), actor=who, name=name, new_passphrase=new,
                                   passphrase=secret, reason=reason)
    _show(user, as_json, f"reset the passphrase of {user.name}: they choose their own at "
                         "their next login")


@app.command("reset")
def reset(ctx: typer.Context,
          name: str = typer.Argument(..., metavar="NAME", help="Whose passphrase is reset."),
          reason: str = _REASON,
          passphrase_stdin: bool = typer.Option(
              False, "--passphrase-stdin",
              help="Read your (admin) passphrase (line 1) and the one-time passphrase "
                   "(line 2) from standard input."),
          as_json: bool = _JSON) -> None:
    """Set a one-time passphrase for a user (admin, signed); they choose their own at
    their next login, and their sessions end."""
    _reset(ctx, name, reason, passphrase_stdin, as_json)


@app.command("passphrase")
def passphrase(
    ctx: typer.Context,
    name: str = typer.Argument(None, metavar="[NAME]",
                               help="Whose (default: yours). An admin naming another user "
                                    "with --user resets theirs, as `user reset`."),
    reason: str = typer.Option(None, "--reason", metavar="TEXT",
                               help="Why (kept in the audit trail; needed for a reset)."),
    passphrase_stdin: bool = typer.Option(
        False, "--passphrase-stdin",
        help="Read the old passphrase (line 1) and the new one (line 2) from standard input."),
    as_json: bool = _JSON,
) -> None:
    """Change your own passphrase (signed with the old one; no session needed)."""
    from prepbook.cli.context import invocation
    from prepbook.lab import people

    inv = invocation(ctx)
    if name is not None and inv.user_given is not None and name != inv.user_given:
        _reset(ctx, name, reason, passphrase_stdin, as_json)
        return
    who = name or inv.user
    secrets = Passphrases(passphrase_stdin)
    old = secrets.get(f"Current passphrase of {who}")
    new = secrets.get(f"New passphrase for {who}", confirm=True)
    user = people.change_passphrase(database(ctx), name=who, old=old, new=new, reason=reason)
    _show(user, as_json, f"changed the passphrase of {user.name}")


@app.command("recover")
def recover(ctx: typer.Context,
            name: str = typer.Argument(..., metavar="NAME", help="The admin to recover."),
            reason: str = _REASON,
            passphrase_stdin: bool = typer.Option(
                False, "--passphrase-stdin",
                help="Read the one-time passphrase from standard input."),
            ) -> None:
    """When no admin can sign in: the database's owner sets a one-time passphrase for an
    admin (audited); they choose their own at their next login."""
    from prepbook.lab import people, sessions

    new = Passphrases(passphrase_stdin).get(f"One-time passphrase for {name}", confirm=True)
    os_login, host = sessions.os_account()
    user = people.recover_admin(database(ctx), name=name, new_passphrase=new, reason=reason,
                                os_login=os_login, host=host)
    output.console().print(f"recovered {user.name}: they choose their own passphrase at "
                           "their next login")
