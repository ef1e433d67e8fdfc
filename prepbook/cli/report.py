"""prepbook report: the batch's traceability report for an auditor, as PDF."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import database


def report(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="BATCH", help="Batch code."),
    out_file: str = typer.Option(..., "-o", "--output", metavar="FILE", help="PDF file to write."),
    paper: str = typer.Option("a4", "--paper", metavar="PAPER", help="Paper size: a4 or letter."),
    replace: bool = typer.Option(False, "--replace", help="Overwrite the PDF if it exists."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """Write a batch's traceability report: preparation, every standardization, chart,
    reviews, corrections, uses, labels and the audit chain's head hash."""
    from prepbook.lab import reports, settings
    from prepbook.render import report as drawn

    paper = paper.lower()
    target = drawn.checked_target(out_file, paper=paper, replace=replace)
    db = database(ctx)
    with output.progress(f"report for {code} (gather, then draw)", 2,
                         silent=as_json or output.quiet(ctx)) as step:
        gathered = reports.gather(db, code)
        step(1)
        res = drawn.write_report(gathered, target, paper=paper, replace=replace,
                                 clk=settings.lab_clock(db))
        step(1)
    if as_json:
        output.emit_json(res)
        return
    out = output.console()
    out.print(f"report for [bold]{res.batch}[/bold] ({res.pages} page"
              f"{'s' if res.pages != 1 else ''}, {res.runs} standardization"
              f"{'s' if res.runs != 1 else ''}) written to {output.escape(res.file)}")
    if not res.audit_ok:
        out.print("[bold]warning:[/bold] the audit trail did not verify; the report says so "
                  "(run `prepbook audit verify`)")
