"""prepbook export: one tidy table of the record as CSV or XLSX."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

import typer

from prepbook.cli import output
from prepbook.cli.session import database

if TYPE_CHECKING:
    from prepbook.lab.database import Database
    from prepbook.lab.exports import Exported


def export_table(db: Database, *, kind: str, fmt: str, output: str, since: str | None = None,
                 replace: bool = False,
                 advance: Callable[[int], None] | None = None) -> Exported:
    """Write one export to ``output`` whole (never over a file unless ``replace``);
    ``advance(1)`` once the table is read and once it is written."""
    from prepbook.lab import exports
    from prepbook.render import exports as writing
    from prepbook.render import files

    fmt = fmt.lower()
    target = Path(output)
    writing.check_format(target, fmt)
    files.check_target(target, replace=replace)  # before reading: a refusal reads nothing
    step = advance or (lambda _n: None)
    tab = exports.table(db, kind, since=since)
    step(1)
    neutralised = sum(1 for row in tab.rows for v in row if writing.neutralise(v) is not v)
    path = writing.write_table(target, fmt, kind, tab.columns, tab.rows, replace=replace)
    step(1)
    return exports.Exported(export=kind, format=fmt, file=str(path), rows=len(tab.rows),
                            columns=tab.columns, neutralised_cells=neutralised, since=since)


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
    with output.progress(f"exporting {kind} (read, then write)", 2,
                         silent=as_json or output.quiet(ctx)) as step:
        res = export_table(database(ctx), kind=kind, fmt=fmt, output=out_file, since=since,
                           replace=replace, advance=step)
    if as_json:
        output.emit_json(res)
        return
    out = output.console()
    out.print(f"{res.rows} {res.export} row{'s' if res.rows != 1 else ''} written to "
              f"{output.escape(res.file)}")
    if res.neutralised_cells:
        out.print(f"note: {res.neutralised_cells} text cell(s) that a spreadsheet would read "
                  "as a formula were written with a leading apostrophe")
