"""prepbook instrument: balances, burettes and glassware with calibration dates."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import actor, database

app = typer.Typer(
    help="Add and list instruments and record their calibration.",
    no_args_is_help=True,
    rich_markup_mode=None,
)


@app.command("add")
def add(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="CODE", help="Instrument code, as on its tag."),
    kind: str = typer.Option(
        ..., "--kind", metavar="KIND",
        help="balance, burette, flask, pipette, thermometer or meter."
    ),
    due: str = typer.Option(..., "--due", metavar="DATE", help="Calibration due date, YYYY-MM-DD."),
    capacity: str = typer.Option(None, "--capacity", metavar="G|ML", help="Capacity (g or mL)."),
    tolerance: str = typer.Option(
        None, "--tolerance", metavar="G|ML", help="Tolerance, +/- (g or mL)."
    ),
    readability: str = typer.Option(
        None, "--readability", metavar="G|ML", help="Readability (g or mL)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the instrument as JSON."),
) -> None:
    """Record an instrument."""
    from prepbook.lab import instruments

    ins = instruments.add_instrument(database(ctx), actor=actor(ctx), code=code, kind=kind,
                                     due=due, capacity=capacity, tolerance=tolerance,
                                     readability=readability)
    if as_json:
        output.emit_json(ins)
        return
    out = output.console()
    out.print(f"{ins.kind} [bold]{ins.code}[/bold], calibration due {ins.due}")
    if ins.overdue:
        out.print("[bold]warning:[/bold] its calibration is already overdue")


@app.command("list")
def list_(ctx: typer.Context,
          as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """List instruments with capacity, tolerance and calibration due date."""
    from prepbook.lab import instruments

    rows = instruments.list_instruments(database(ctx))
    if as_json:
        output.emit_json(rows)
        return
    output.console().print(output.table(
        "Instruments", ["code", "kind", "capacity", "tolerance", "readability", "due"],
        [(r.code, r.kind, r.capacity, r.tolerance, r.readability,
          r.due + (" (overdue)" if r.overdue else "")) for r in rows]))


@app.command("calibrate")
def calibrate(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="CODE", help="Instrument code, as on its tag."),
    calibrated: str = typer.Option(
        ..., "--calibrated", metavar="DATE",
        help="When it was calibrated, YYYY-MM-DD (not in the future)."
    ),
    due: str = typer.Option(
        ..., "--due", metavar="DATE", help="Next calibration due date, YYYY-MM-DD."
    ),
    certificate: str = typer.Option(
        None, "--certificate", metavar="TEXT",
        help="The calibration certificate's number or reference."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the instrument as JSON."),
) -> None:
    """Record a recalibration: the new due date (the old one stays in the audit trail)."""
    from prepbook.lab import instruments

    ins = instruments.calibrate_instrument(database(ctx), actor=actor(ctx), code=code,
                                           calibrated=calibrated, due=due,
                                           certificate=certificate)
    if as_json:
        output.emit_json(ins)
        return
    output.console().print(
        f"{ins.kind} [bold]{ins.code}[/bold] calibrated {ins.calibrated}, "
        f"now due {ins.due} (was due {ins.previous_due})")
