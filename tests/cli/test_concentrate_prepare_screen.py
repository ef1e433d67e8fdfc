"""The terminal app's prepare screen for a titrant made from a concentrate (issue 17):
it says to measure the concentrate (never to weigh hydrochloric acid), computes from the
chosen lot's certified assay and density, and records the batch traced to that lot.

Expected volumes are worked by hand from V = N V_f M / (1000 n w rho) with the
conventional atomic weights (CIAAW 2021: H 1.008, Cl 35.45).
"""

from __future__ import annotations

import io
from datetime import UTC, datetime, timedelta

import pytest

from tests.conftest import Cli, passphrase_of

pytest.importorskip("textual")


def _days(n: int) -> str:
    return (datetime.now(UTC).date() + timedelta(days=n)).isoformat()


def _shown(widget) -> str:  # type: ignore[no-untyped-def]
    from rich.console import Console

    console = Console(width=200, file=io.StringIO(), record=True, color_system=None)
    console.print(widget.content)
    return console.export_text()


@pytest.mark.asyncio
async def test_prepare_screen_measures_the_concentrate_of_the_chosen_lot(cli: Cli) -> None:
    from prepbook.lab import sessions
    from prepbook.store.engine import open_database
    from prepbook.tui.app import PrepbookApp
    from prepbook.tui.screens.prepare import PrepareScreen

    cli.ok("init")
    cli.ok("user", "add", "ada", "--role", "admin", "--passphrase-stdin", user="ada",
           input="ada-passphrase\n")
    cli.ok("lot", "add", "HCl-conc", "--code", "HCL-37", "--assay", "37.2", "--density",
           "1.185", "--expires", _days(300), user="ada")
    db = open_database(str(cli.db))
    os_login, host = sessions.os_account()
    opened = sessions.login(db, name="ada", passphrase=passphrase_of(cli.db, "ada"),
                            os_login=os_login, host=host)
    app = PrepbookApp(db, user="ada", session=opened, poll_seconds=0)
    async with app.run_test(size=(140, 45)) as pilot:
        await pilot.pause()
        screen = PrepareScreen()
        app.push_screen(screen)
        await pilot.pause()
        from textual.widgets import Input, Select

        screen.query_one("#spec", Select).value = "HCl-1N"
        await pilot.pause()
        assert screen.query_one("#method", Select).value == "concentrate"
        text = _shown(screen.query_one("#live"))
        # typical values (OpenStax 36 %, 1.18 g/mL), by hand: 1 eq/L x 1 L x 36.458 g/mol
        # = 36.458 g HCl; / 0.36 / 1.18 = 85.82 mL
        assert "measure 85.82 mL of the concentrate" in text
        assert "weigh " not in text and "of hydrochloric acid, concentrated (" not in text
        screen.query_one("#lot", Select).value = "HCL-37"
        await pilot.pause()
        text = _shown(screen.query_one("#live"))
        # lot HCL-37, by hand: 36.458 / 0.372 / 1.185 = 36.458 / 0.44082 = 82.70 mL
        assert "measure 82.70 mL of the concentrate" in text
        assert "lot HCL-37's certificate" in text
        assert "safety data sheet" in text
        assert "the concentrate itself: Danger" in text and "H314" in text
        screen.query_one("#stock", Input).value = "82"
        await pilot.pause()
        screen.action_submit()
        await pilot.pause()
        assert screen.made is not None
    shown = cli.json("batch", "show", screen.made)
    assert shown["preparation"]["solute_lot"] == "HCL-37"
