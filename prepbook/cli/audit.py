"""prepbook audit: the append-only trail and its verification."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import database

app = typer.Typer(
    help="Read and verify the audit trail.",
    no_args_is_help=True,
    rich_markup_mode=None,
)


@app.command("log")
def log(
    ctx: typer.Context,
    record: str = typer.Option(None, "--record", metavar="RECORD",
                               help="Only this record, e.g. batches or batches#3."),
    actor_name: str = typer.Option(None, "--actor", metavar="NAME", help="Only this actor."),
    since: str = typer.Option(None, "--since", metavar="DATE", help="From this date, YYYY-MM-DD."),
    until: str = typer.Option(None, "--until", metavar="DATE", help="Up to this date, YYYY-MM-DD."),
    limit: int = typer.Option(
        None, "--limit", metavar="N", help="At most this many events (newest)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """List audit events."""
    from prepbook.lab import auditing

    events = auditing.log(database(ctx), record=record, actor=actor_name, since=since,
                          until=until, limit=limit)
    if as_json:
        output.emit_json(events)
        return
    output.console().print(output.table(
        "Audit trail", ["seq", "at (UTC)", "actor", "action", "record", "reason"],
        [(e.seq, e.at, e.actor, e.action, e.record, e.reason or "")
         for e in events], right=(0,)))


@app.command("verify")
def verify(
    ctx: typer.Context,
    thorough: bool = typer.Option(False, "--thorough",
                                  help="Read every page of the file (SQLite integrity_check)."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """Check the hash chain and that every row matches its last audited state."""
    from prepbook.lab import auditing

    rep = auditing.verify(database(ctx), thorough=thorough)
    if as_json:
        output.emit_json(rep)
    else:
        out = output.console()
        if rep.ok:
            out.print(f"audit trail verified: {rep.events} events, every record matches")
        else:
            out.print(f"[bold]audit trail NOT verified[/bold] ({rep.events} events):")
            for p in rep.problems:
                out.print(f"  - {p}")
    if not rep.ok:
        raise typer.Exit(1)
