"""prepbook review: a second person's signed decision on a standardization."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import typer

from prepbook.cli import output
from prepbook.cli.session import Passphrases, actor, database
from prepbook.errors import InvalidInput

if TYPE_CHECKING:
    from prepbook.lab.reviews import QueuedRun


def show_what_is_signed(out: Any, run: QueuedRun, decision: str, reason: str | None) -> None:
    """The run, its result and every check, as the signature will cover them."""
    out.print(f"You are about to sign: {decision} run {run.run} of batch {run.batch} "
              f"(recorded by {run.analyst}, {run.performed_at})")
    out.print(f"  N = {output.sig(run.normality, 5)} eq/L at {run.temperature_c or '-'} C "
              f"({output.sig(run.normality_20c, 5)} at 20 C), factor "
              f"{output.fixed(run.factor, 4)}, RSD {output.fixed(run.rsd_percent, 3)} %, "
              f"U = {output.sig(run.U, 2)}; checks: {run.verdict or '-'}")
    for c in run.checks:
        mark = "ok  " if c["passed"] else ("FAIL" if c["severity"] == "fail" else "warn")
        out.print(f"  {mark} {c['name']}: {output.escape(c['message'])}")
    if reason:
        out.print(f"  reason: {output.escape(reason)}")


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
    db = database(ctx)
    # Every refusal comes before the passphrase; what is signed is shown before it is
    # asked at the terminal (with --passphrase-stdin the signer decided beforehand).
    shown = reviews.to_sign(db, actor=actor(ctx), run=run, accept=accept, reason=reason)
    if not passphrase_stdin:
        show_what_is_signed(output.console(stderr=as_json), shown,
                            "accept" if accept else "reject", reason)
    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {actor(ctx)}")
    res = reviews.review(db, actor=actor(ctx), run=run, accept=accept, reason=reason,
                         passphrase=secret, at=at)
    if as_json:
        output.emit_json(res)
    else:
        output.console().print(f"run [bold]{res.run}[/bold] of batch {res.batch} "
                               f"{res.status} by {actor(ctx)}")
