"""prepbook assay: titrate a sample with a batch in service and record its result."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import typer

from prepbook.cli import output
from prepbook.cli.session import actor, database

if TYPE_CHECKING:
    from prepbook.lab.assays import AssayResult


def render_result(out: Any, res: AssayResult) -> None:
    """The result, its uncertainty and the limit, for a person to read."""
    c = res.computed
    line = f"[bold]{output.sig(res.result, 5)} {output.escape(res.unit)}[/bold]"
    if c.reported_as:
        line += f" as {output.escape(c.reported_as)}"
    line += f", U = {output.sig(c.U, 2)} (k = {c.k:g})"
    if c.rsd_percent is not None:
        line += f", RSD {output.fixed(c.rsd_percent, 3)} %"
    out.print(line + f", n = {len(c.replicates)}")
    out.print(f"titrant {res.batch}: {output.sig(res.titrant_normality, 5)} eq/L at "
              f"{res.temperature_c:g} C (standardization {res.run})")
    if res.within_limit is not None:
        low = "-" if res.limit_low is None else f"{res.limit_low:g}"
        high = "-" if res.limit_high is None else f"{res.limit_high:g}"
        verdict = "within" if res.within_limit else "[bold]OUTSIDE[/bold]"
        out.print(f"limit {low} to {high} {output.escape(res.unit)}: {verdict}")
    output.warn_lines(out, c.warnings)
    for note in c.uncertainty_notes:
        out.print(f"note: {output.escape(note)}")


def assay(
    ctx: typer.Context,
    batch: str = typer.Argument(..., metavar="BATCH", help="Batch of titrant used."),
    sample: str = typer.Option(..., "--sample", metavar="ID", help="The sample's ID."),
    analyte: str = typer.Option(
        ..., "--analyte", metavar="NAME", help="What is determined (an analyte of the catalog)."
    ),
    aliquot: str = typer.Option(
        None, "--aliquot", metavar="ML", help="Volume of sample titrated, mL."
    ),
    mass: str = typer.Option(None, "--mass", metavar="G", help="Mass of sample titrated, g."),
    rep: list[str] = typer.Option(
        None, "--rep", metavar="VOL", help="Titrant volume at the endpoint, mL. Repeat."
    ),
    method: str = typer.Option(
        None, "--method", metavar="NAME",
        help="The analyte's method (reaction) in the catalog, if not its first."
    ),
    blank: str = typer.Option("0", "--blank", metavar="ML", help="Blank titration volume, mL."),
    temp: str = typer.Option("20", "--temp", metavar="C", help="Temperature of the titrant, C."),
    limit: str = typer.Option(
        None, "--limit", metavar="LOW:HIGH",
        help="The sample's specification limit in the reported unit (LOW:, :HIGH or both)."
    ),
    at: str = typer.Option(
        None, "--at", metavar="WHEN",
        help="When titrated (YYYY-MM-DD[THH:MM], lab time), if not now."
    ),
    late_reason: str = typer.Option(
        None, "--reason", metavar="TEXT",
        help="Why it is entered late (needed when --at is more than the lab's "
        "late_entry_hours ago)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the result as JSON."),
) -> None:
    """Titrate a sample with a batch in service and record its result (and the use)."""
    from prepbook.lab import assays

    res = assays.assay(database(ctx), actor=actor(ctx), batch=batch, sample=sample,
                       analyte=analyte, replicates=list(rep or []), aliquot=aliquot, mass=mass,
                       reaction=method, blank=blank, temperature=temp, limit=limit, at=at,
                       late_reason=late_reason)
    if as_json:
        output.emit_json(res)
        return
    out = output.console()
    out.print(f"assay [bold]{res.assay}[/bold]: sample {output.escape(res.sample)} with "
              f"{res.batch}")
    render_result(out, res)
