"""prepbook review: a second person's signed decision on a standardization."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import Passphrases, actor, database
from prepbook.errors import InvalidInput


def review(
    ctx: typer.Context,
    run: str = typer.Argument(
        ..., metavar="RUN", help="Run code (or a batch code: its one run awaiting review)."
    ),
    accept: bool = typer.Option(False, "--accept", help="Accept the run."),
    reject: bool = typer.Option(False, "--reject", help="Reject the run (needs --reason)."),
    reason: str = typer.Option(None, "--reason", metavar="TEXT", help="Why (required to reject)."),
    passphrase_stdin: bool = typer.Option(
        False, "--passphrase-stdin", help="Read your passphrase from standard input."
    ),
    at: str = typer.Option(
        None, "--at", metavar="WHEN",
        help="When reviewed (YYYY-MM-DD[THH:MM], lab time), if not now."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the reviewed run as JSON."),
) -> None:
    """Accept or reject a run awaiting review, signed with your passphrase."""
    from prepbook.lab import reviews

    if accept == reject:
        raise InvalidInput("say --accept or --reject")
    if reject and not (reason and reason.strip()):
        raise InvalidInput("a rejection needs a --reason")
    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {actor(ctx)}")
    res = reviews.review(database(ctx), actor=actor(ctx), run=run, accept=accept, reason=reason,
                         passphrase=secret, at=at)
    if as_json:
        output.emit_json(res)
    else:
        output.console().print(f"run [bold]{res.run}[/bold] of batch {res.batch} "
                               f"{res.status} by {actor(ctx)}")
