"""prepbook status: the board of every batch in use."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import typer

from prepbook.cli import output
from prepbook.cli.session import database

if TYPE_CHECKING:
    from prepbook.lab.board import BatchLife, InstrumentWarning

# States told in words (never colour alone), in capitals where action is needed.
STATE_WORDS = {
    "new": "new",
    "awaiting-review": "to review",
    "in-service": "in service",
    "due": "DUE",
    "expired": "EXPIRED",
    "retired": "retired",
}


def render_board(out: Any, items: list[BatchLife],
                 instruments: Sequence[InstrumentWarning] = ()) -> None:
    """The board's table, then each batch's own warnings, then each instrument's
    calibration warning once, with the batches that depend on the instrument."""
    if not items:
        out.print("no batches yet: make one with `prepbook batch make SPEC ...`")
        return
    rows = [(it.batch, STATE_WORDS.get(it.state, it.state),
             output.sig(it.normality, 5), output.fixed(it.factor, 4),
             it.restandardize_by or "-", it.expires,
             "-" if it.remaining_ml is None else f"{it.remaining_ml:g}",
             str(len(it.warnings) + len(it.instruments))
             if it.warnings or it.instruments else "")
            for it in items]
    # Every column but the state (words) is kept whole: codes, values and dates.
    output.show(out, output.table(f"Board: {len(items)} batches in use",
                                  ["batch", "state", "N 20 C", "factor", "restd. by",
                                   "expires", "left mL", "!"],
                                  rows, right=(2, 3, 6, 7), no_wrap=(0, 2, 3, 4, 5, 6, 7)))
    from rich.padding import Padding
    from rich.table import Table
    from rich.text import Text

    flagged = [it for it in items if it.warnings]
    if flagged:  # a grid: a warning too long for the line wraps beside its batch
        out.print("[bold]Warnings[/bold]")
        grid = Table.grid(padding=(0, 1))
        grid.add_column(no_wrap=True)
        grid.add_column(overflow="fold")
        for it in flagged:
            for w in it.warnings:
                grid.add_row(Text(it.batch + ":"), Text(output.plain(w)))
        out.print(Padding(grid, (0, 0, 0, 2)))
    if instruments:
        out.print("[bold]Instruments[/bold] (each warned of once, with the batches that "
                  "depend on it)")
        for ins in instruments:
            out.print(Padding(Text(output.plain(ins.warning)), (0, 0, 0, 2)))
            out.print(Padding(Text("batches: " + ", ".join(ins.batches)), (0, 0, 0, 6)))


def status(
    ctx: typer.Context,
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """The board: every batch not retired, the ones needing action first."""
    from prepbook.lab import board

    view = board.board_view(database(ctx))
    if as_json:  # a list, one object per batch; its instruments named by code
        output.emit_json(list(view.batches))
    else:
        render_board(output.console(), list(view.batches), view.instruments)
