"""prepbook impact: the sample results a batch's changed titrant value puts in question."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import typer

from prepbook.cli import output
from prepbook.cli.session import database

if TYPE_CHECKING:
    from prepbook.lab.assays import ImpactedAssay


def new_value(row: ImpactedAssay) -> str:
    """The recomputed result, or its range, for reading."""
    if row.after is not None:
        return output.sig(row.after, 5)
    if row.after_low is not None and row.after_high is not None:
        return f"{output.sig(row.after_low, 5)} to {output.sig(row.after_high, 5)}"
    return "unknown"


def render(out: Any, batch: str, rows: tuple[ImpactedAssay, ...]) -> None:
    if not rows:
        out.print(f"no assay result of {batch} is impacted")
        return
    table = output.table(
        f"{len(rows)} assay result(s) of {batch} impacted",
        ["assay", "sample", "when", "before", "now", "unit", "change %", "limit"],
        [(r.assay, r.sample, r.performed_at, output.sig(r.before, 5), new_value(r), r.unit,
          "-" if r.change_percent is None else f"{r.change_percent:+.2f}",
          "-" if r.crosses_limit is None else ("CROSSES" if r.crosses_limit else "same side"))
         for r in rows], right=(3, 6))
    out.print(table)
    for r in rows:
        out.print(f"{r.assay}: {output.escape(r.reason)}")


def impact(
    ctx: typer.Context,
    batch: str = typer.Argument(..., metavar="BATCH", help="Batch code."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """The sample results a corrected, withdrawn or drifted titrant value changes, recomputed.

    Each result old -> new (or its range when the titrant's true value at the time of use
    is unknown), the change in % and whether it now crosses the sample's limit.
    """
    from prepbook.lab import assays

    rows = assays.impact(database(ctx), batch)
    if as_json:
        output.emit_json(list(rows))
    else:
        render(output.console(), batch, rows)
