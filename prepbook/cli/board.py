"""prepbook status: the board of every batch in use."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import typer

from prepbook.cli import output
from prepbook.cli.session import database

if TYPE_CHECKING:
    from prepbook.lab.board import BatchLife

# States told in words (never colour alone), in capitals where action is needed.
STATE_WORDS = {
    "new": "new",
    "awaiting-review": "to review",
    "in-service": "in service",
    "due": "DUE",
    "expired": "EXPIRED",
    "retired": "retired",
}


def render_board(out: Any, items: list[BatchLife]) -> None:
    if not items:
        out.print("no batches yet: make one with `prepbook batch make SPEC ...`")
        return
    rows = [(it.batch, STATE_WORDS.get(it.state, it.state),
             output.sig(it.normality, 5), output.fixed(it.factor, 4),
             it.restandardize_by or "-", it.expires,
             "-" if it.remaining_ml is None else f"{it.remaining_ml:g}",
             str(len(it.warnings)) if it.warnings else "")
            for it in items]
    # Every column but the state (words) is kept whole: codes, values and dates.
    output.show(out, output.table(f"Board: {len(items)} batches in use",
                                  ["batch", "state", "N 20 C", "factor", "restd. by",
                                   "expires", "left mL", "!"],
                                  rows, right=(2, 3, 6, 7), no_wrap=(0, 2, 3, 4, 5, 6, 7)))
    flagged = [it for it in items if it.warnings]
    if flagged:
        out.print("[bold]Warnings[/bold]")
        for it in flagged:
            for w in it.warnings:
                out.print(f"  {it.batch}: {output.escape(w)}")


def status(
    ctx: typer.Context,
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """The board: every batch not retired, the ones needing action first."""
    from prepbook.lab import board

    items = board.board(database(ctx))
    if as_json:
        output.emit_json(items)
    else:
        render_board(output.console(), items)
