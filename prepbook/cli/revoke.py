"""prepbook revoke: withdraw an accepted standardization, signed, with a reason."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import Passphrases, actor, database


def revoke(
    ctx: typer.Context,
    run: str = typer.Argument(..., metavar="RUN", help="Code of the accepted run."),
    reason: str = typer.Option(None, "--reason", metavar="TEXT", help="Why (required)."),
    passphrase_stdin: bool = typer.Option(
        False, "--passphrase-stdin", help="Read your passphrase from standard input."
    ),
    at: str = typer.Option(
        None, "--at", metavar="WHEN", help="When revoked (YYYY-MM-DD[THH:MM], UTC), if not now."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the result as JSON."),
) -> None:
    """Withdraw an accepted result (reviewer or admin, signed): the batch falls back to its
    previous accepted standardization, or out of service; uses since are flagged."""
    from prepbook.lab import revoking

    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {actor(ctx)}")
    res = revoking.revoke(database(ctx), actor=actor(ctx), run=run, reason=reason,
                          passphrase=secret, at=at)
    if as_json:
        output.emit_json(res)
        return
    out = output.console()
    out.print(f"run [bold]{res.run}[/bold] of batch {res.batch} revoked by {res.revoked_by}: "
              f"{output.escape(res.reason)}")
    if res.falls_back_to:
        out.print(f"batch {res.batch} falls back to run {res.falls_back_to}: factor "
                  f"{output.fixed(res.factor, 4)} ({res.state})")
    else:
        out.print(f"batch {res.batch} has no other accepted standardization: it is "
                  f"{res.state}, out of service until one is accepted")
    if res.uses_flagged:
        out.print(f"{res.uses_flagged} use(s) made while it stood need review "
                  f"(prepbook trace {res.batch})")
