"""prepbook status: the board of every batch in use."""

from __future__ import annotations

from typing import Any

import typer

from prepbook.cli import output
from prepbook.cli.session import database

STATE_WORDS = {
    "new": "new (not standardized)",
    "awaiting-review": "awaiting review",
    "in-service": "in service",
    "due": "DUE for restandardization",
    "expired": "EXPIRED",
    "retired": "retired",
}


def render_board(out: Any, items: list[dict[str, Any]]) -> None:
    if not items:
        out.print("no batches yet: make one with `prepbook batch make SPEC ...`")
        return
    rows = [(it["batch"], it["spec"], STATE_WORDS.get(it["state"], it["state"]),
             output.sig(it["normality"], 5), output.fixed(it["factor"], 4),
             it["restandardize_by"] or "-", it["expires"], "; ".join(it["warnings"]))
            for it in items]
    out.print(output.table("Board", ["batch", "spec", "state", "N (eq/L)", "factor",
                                     "restandardize by", "expires", "warnings"], rows,
                           right=(3, 4)))


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
