"""prepbook init: create or upgrade the database and load the built-in catalog."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.context import invocation


def init(
    ctx: typer.Context,
    as_json: bool = typer.Option(False, "--json", help="Print what was done as JSON."),
) -> None:
    """Create or upgrade the database and load the built-in catalog (safe to repeat)."""
    from prepbook.lab import setup

    inv = invocation(ctx)
    report = setup.initialize(inv.db, actor=inv.user)
    if as_json:
        output.emit_json(report)
        return
    out = output.console()
    if report.created:
        out.print(f"created database {inv.db} (schema {report.to_revision})")
    elif report.from_revision != report.to_revision:
        out.print(f"upgraded {inv.db} from {report.from_revision} to {report.to_revision}")
        if report.backup:
            out.print(f"backup of the previous file: {report.backup}")
    else:
        out.print(f"{inv.db} is up to date (schema {report.to_revision})")
    added = len(report.materials_added) + len(report.specs_added)
    if added:
        out.print(f"catalog: added {len(report.materials_added)} materials and "
                  f"{len(report.specs_added)} solution specs")
    else:
        out.print("catalog: nothing to add")
