"""prepbook tui: the full-screen terminal app (Textual, imported only here)."""

from __future__ import annotations

import typer


def tui(
    ctx: typer.Context,
    poll_text: str = typer.Option(
        "3", "--poll", metavar="SECONDS",
        help="Seconds between checks for writes by others (0: never; Ctrl+R reloads)."),
) -> None:
    """Open the full-screen app: board, batches, recording, review desk and audit trail."""
    from prepbook.cli.context import invocation
    from prepbook.inputs import parse_number
    from prepbook.lab.database import open_database

    poll = parse_number(poll_text, "--poll", non_negative=True, maximum=86400).value
    inv = invocation(ctx)
    # Only a --user (or PREPBOOK_USER) actually given is taken; otherwise the app asks.
    given = ctx.find_root().params.get("user")
    db = open_database(inv.db)  # a missing or old database is refused before the screen opens
    from prepbook.tui.app import PrepbookApp

    PrepbookApp(db, user=given, poll_seconds=poll).run()
