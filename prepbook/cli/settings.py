"""prepbook setting: lab-wide settings (admin, signed)."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import Passphrases, actor, database

app = typer.Typer(
    help="Show and change lab-wide settings (`prepbook settings` shows them).",
    invoke_without_command=True,
    rich_markup_mode=None,
)


@app.callback()
def _default(ctx: typer.Context,
             as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    if ctx.invoked_subcommand is None:
        show(ctx, as_json=as_json)


@app.command("show")
def show(ctx: typer.Context,
         as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """Show every setting, its value and what it does."""
    from prepbook.lab import settings

    db = database(ctx)
    rows = settings.show(db)
    if as_json:
        output.emit_json(rows)
        return
    clk = settings.lab_clock(db)
    output.console().print(output.table(
        "Settings", ["key", "value", "default", "what it does", "changed"],
        [(r.key, r.value, r.default, r.help,
          f"{clk.shown(r.changed_at)} by {r.changed_by}" if r.changed_at else "")
         for r in rows]))


@app.command("set")
def set_(
    ctx: typer.Context,
    key: str = typer.Argument(..., metavar="KEY", help="Setting name (see `prepbook settings`)."),
    value: str = typer.Argument(..., metavar="VALUE", help="New value."),
    reason: str = typer.Option(
        ..., "--reason", metavar="TEXT", help="Why it changes (kept in the audit trail)."
    ),
    passphrase_stdin: bool = typer.Option(
        False, "--passphrase-stdin", help="Read your passphrase from standard input."
    ),
) -> None:
    """Change a setting (admin; signed with your passphrase)."""
    from prepbook.lab import settings

    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {actor(ctx)}")
    res = settings.set_value(database(ctx), actor=actor(ctx), key=key, value=value,
                             reason=reason, passphrase=secret)
    output.console().print(f"{res.key} = {res.value} (by {res.changed_by})")
