"""prepbook demo: build the invented demo lab and show its board."""

from __future__ import annotations

from pathlib import Path

import typer

from prepbook.cli import output

DEMO_DB = "demo-lab.db"


def _target(ctx: typer.Context, own: str | None) -> str:
    """The demo's own --db; else a --db typed before the command; else demo-lab.db.

    Only a root --db typed on the command line counts, not PREPBOOK_DB: that names
    the lab's working database, which a demo must never be aimed at by accident.
    """
    from prepbook.errors import InvalidInput

    root = ctx.find_root()
    target = own
    source = root.get_parameter_source("db")  # typed, from the environment, or default
    if target is None and getattr(source, "name", None) == "COMMANDLINE":
        target = root.params.get("db")
    target = target or DEMO_DB
    if "://" in target:
        raise InvalidInput(f"the demo builds a new SQLite file; {target.split('://')[0]}:// "
                           "is a server URL (give a file path with --db)")
    return str(target)


def demo(
    ctx: typer.Context,
    db: str = typer.Option(
        None, "--db", metavar="FILE",
        help=f"The new SQLite file for the demo lab (default: a --db given before "
             f"`demo`, else {DEMO_DB}).", show_default=False,
    ),
    replace: bool = typer.Option(
        False, "--replace", help="Move an existing file at --db aside first (kept as .old-*)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the board as JSON."),
) -> None:
    """Build the demo lab (an invented scenario) in a fresh database and print its board."""
    from prepbook.cli.board import render_board
    from prepbook.lab import demo as demo_lab

    target = Path(_target(ctx, db))
    with output.progress("building the demo lab", demo_lab.steps(),
                         silent=as_json or output.quiet(ctx)) as advance:
        res = demo_lab.build(target, replace=replace, advance=advance)
    if as_json:
        output.emit_json(list(res.board))
        return
    out = output.console()
    out.print(f"[bold]{res.lab}[/bold]: demo lab built in {res.database} "
              f"({res.batches} batches, {res.runs} standardizations, "
              f"{res.events} audit events)")
    for line in res.story:
        out.print(f"  {line}")
    render_board(out, list(res.board), res.instruments)
    out.print(f"\nTry: prepbook --db {res.database} batch show {res.example_batch}")
