"""prepbook demo: build the invented demo lab and show its board."""

from __future__ import annotations

from pathlib import Path

import typer

from prepbook.cli import output


def demo(
    db: str = typer.Option(
        "demo-lab.db", "--db", metavar="FILE",
        help="The new SQLite file for the demo lab."
    ),
    replace: bool = typer.Option(
        False, "--replace", help="Move an existing file at --db aside first (kept as .old-*)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the board as JSON."),
    years: int | None = typer.Option(
        None, "--years", metavar="YEARS", min=1, max=50,
        help="Instead of the small demo, generate YEARS of a busy lab's synthetic history "
             "(thousands of batches, runs and uses, all invented) through the same services.",
    ),
) -> None:
    """Build the demo lab (an invented scenario) in a fresh database and print its board."""
    from prepbook.cli.board import render_board
    from prepbook.lab import demo as demo_lab

    if years is not None:
        res = demo_lab.build_history(Path(db), years=years, replace=replace)
    else:
        res = demo_lab.build(Path(db), replace=replace)
    if as_json:
        output.emit_json(res["board"])
        return
    out = output.console()
    out.print(f"[bold]{res['lab']}[/bold]: demo lab built in {res['database']} "
              f"({res['batches']} batches, {res['runs']} standardizations, "
              f"{res['events']} audit events"
              + (f", {res['uses']} uses" if "uses" in res else "") + ")")
    for line in res["story"]:
        out.print(f"  {line}")
    render_board(out, res["board"])
    out.print(f"\nTry: prepbook --db {res['database']} batch show {res['example_batch']}")
