"""prepbook export: one tidy table of the record as CSV or XLSX."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import database


def export(
    ctx: typer.Context,
    kind: str = typer.Argument(..., metavar="TABLE", help="What to export: batches, runs, "
                               "replicates, uses or audit."),
    fmt: str = typer.Option(..., "--format", metavar="FORMAT", help="csv or xlsx."),
    out_file: str = typer.Option(..., "-o", "--output", metavar="FILE", help="File to write."),
    since: str = typer.Option(None, "--since", metavar="DATE",
                              help="Only records from this date, YYYY-MM-DD.",
                              show_default=False),
    replace: bool = typer.Option(False, "--replace", help="Overwrite the file if it exists."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """Export one table (units in the column names, ISO 8601 dates, formulas made inert)."""
    from prepbook.lab import exports

    res = exports.export(database(ctx), kind=kind, fmt=fmt, output=out_file, since=since,
                         replace=replace)
    if as_json:
        output.emit_json(res)
        return
    out = output.console()
    out.print(f"{res['rows']} {res['export']} row{'s' if res['rows'] != 1 else ''} written to "
              f"{output.escape(res['file'])}")
    if res["neutralised_cells"]:
        out.print(f"note: {res['neutralised_cells']} text cell(s) that a spreadsheet would read "
                  "as a formula were written with a leading apostrophe")
