"""prepbook backup: a consistent copy of the database while benches keep working."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.context import invocation


def backup(
    ctx: typer.Context,
    to: str = typer.Option(..., "-o", "--output", metavar="FILE", help="The new file to write "
                           "the copy to (never overwritten).", show_default=False),
    as_json: bool = typer.Option(False, "--json", help="Print what was copied as JSON."),
) -> None:
    """Copy a SQLite database consistently, even while it is in use (on PostgreSQL:
    says how to use pg_dump)."""
    from prepbook.lab import maintenance

    report = maintenance.backup(invocation(ctx).db, to)
    if as_json:
        output.emit_json(report)
        return
    typer.echo(f"copied {report.database} to {report.backup} "
               f"({report.bytes} bytes, {report.events} audit events)")
    typer.echo(f"check the copy with: prepbook --db {report.backup} audit verify")
