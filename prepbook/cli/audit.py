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
    limit: str = typer.Option(
        None, "--limit", metavar="N", help="At most this many events (newest)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """List audit events."""
    from prepbook import clock
    from prepbook.lab import auditing, settings

    db = database(ctx)
    events = auditing.log(db, record=record, actor=actor_name, since=since,
                          until=until,
                          limit=None if limit is None else output.whole(limit, "--limit", 1))
    if as_json:
        output.emit_json(events)
        return
    clk = settings.lab_clock(db)
    output.console().print(output.table(
        f"Audit trail (lab time, {clock.zone_name(clk.zone)})",
        ["seq", "entered", "work done", "actor", "action", "record", "reason"],
        [(e.seq, clk.shown(e.at),
          (clk.shown(e.performed_at) + (" LATE" if clk.late(e.performed_at, e.at) else ""))
          if e.performed_at else "", e.actor, e.action, e.record, e.reason or "")
         for e in events], right=(0,)))


@app.command("verify")
def verify(
    ctx: typer.Context,
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """Check the hash chain and that every row matches its last audited state."""
    from prepbook.lab import auditing

    rep = auditing.verify(database(ctx))
    if as_json:
        output.emit_json(rep)
    else:
        out = output.console()
        if rep.ok:
            out.print(f"audit trail verified: {rep.events} events, every record matches")
        else:
            out.print(f"[bold]audit trail NOT verified[/bold] ({rep.events} events):")
            for p in rep.problems:
                out.print(f"  - {output.text(p)}")
    if not rep.ok:
        raise typer.Exit(1)
