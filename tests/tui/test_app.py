"""The terminal app driven headless with Textual's test pilot on the demo lab.

Each test copies one demo database built once for the module, so the tests stay
few and bounded. What the app shows is compared with what the services return,
never with numbers pasted from the app itself.
"""

from __future__ import annotations

import json
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest

from tests.conftest import row_counts

pytest.importorskip("textual")

SIZE = (140, 45)
# Three invented KHP replicates near 0.0996 N (mass g : titrant mL), as typed at a bench.
READINGS = [("0.8215", "40.41"), ("0.8302", "40.83"), ("0.8177", "40.22")]


@pytest.fixture(scope="module")
def demo_lab(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, str]:
    from prepbook.lab import demo

    path = tmp_path_factory.mktemp("demo") / "d.db"
    story = demo.build(path)
    return path, story.example_batch


@pytest.fixture(scope="module")
def demo_db(demo_lab: tuple[Path, str]) -> Path:
    return demo_lab[0]


@pytest.fixture(scope="module")
def due_naoh(demo_lab: tuple[Path, str]) -> str:
    """The demo's NaOH batch due for restandardization (its code carries the date it
    was made, counted back from today, so it is read from the demo, never typed)."""
    return demo_lab[1]


@pytest.fixture
def lab(demo_db: Path, tmp_path: Path) -> Path:
    path = tmp_path / "d.db"
    # SQLite's backup copies what is still in the write-ahead log too (a file copy would not)
    src, dst = sqlite3.connect(demo_db), sqlite3.connect(path)
    try:
        src.backup(dst)
    finally:
        src.close()
        dst.close()
    return path


def make_app(path: Path, user: str | None):
    """The app on ``path``, ``user`` signed in (with the passphrase the demo gave them)."""
    from prepbook.lab import sessions
    from prepbook.store.engine import open_database
    from prepbook.tui.app import PrepbookApp
    from tests.conftest import passphrase_of

    db = open_database(str(path))
    opened = None
    if user is not None:
        os_login, host = sessions.os_account()
        opened = sessions.login(db, name=user, passphrase=passphrase_of(path, user),
                                os_login=os_login, host=host)
    return PrepbookApp(db, user=user, session=opened, poll_seconds=0)


def board_states(app) -> dict[str, str]:
    """Batch code -> state cell as shown on the board."""
    from prepbook.tui.screens.board import BoardScreen

    screen = next(s for s in app.screen_stack if isinstance(s, BoardScreen))
    table = screen.query_one("#board")
    return {str(key.value): str(table.get_cell(key, "state")) for key in table.rows}


def shown(widget) -> str:
    """What a Static shows, as plain text."""
    import io

    from rich.console import Console

    console = Console(width=200, file=io.StringIO(), record=True, color_system=None)
    console.print(widget.content)
    return console.export_text()


async def on_board(pilot, batch: str, key: str) -> None:
    """Put the board's cursor on ``batch`` and press ``key`` (s: standardize, enter: open)."""
    table = pilot.app.screen.query_one("#board")
    table.move_cursor(row=table.get_row_index(batch))
    await pilot.press(key)
    await pilot.pause()


async def record_confirmed(pilot) -> str | None:
    """Ctrl+S on a recording form, then yes to its question: the run recorded, if any."""
    await pilot.press("ctrl+s")
    await pilot.pause()
    await pilot.press("y")
    await pilot.pause()
    return pilot.app.screen.recorded


async def type_into(pilot, widget_id: str, text: str) -> None:
    pilot.app.screen.query_one(f"#{widget_id}").focus()
    await pilot.press(*text)


@pytest.mark.asyncio
async def test_board_shows_every_demo_batch_and_filters_by_code(lab: Path) -> None:
    from prepbook.lab import board
    from prepbook.store.engine import open_database

    expected = board.board(open_database(str(lab)))
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        shown = board_states(app)
        assert list(shown) == [it.batch for it in expected]  # same batches, same order
        for it in expected:  # states in words, as the service names them
            word = {"in-service": "in service", "awaiting-review": "to review",
                    "due": "DUE", "expired": "EXPIRED", "new": "new"}[it.state]
            assert word in shown[it.batch]
        await pilot.press("slash", *"naoh")
        await pilot.pause(0.4)  # the board filters once typing pauses
        assert sorted(board_states(app)) == sorted(it.batch for it in expected
                                                   if "naoh" in it.batch.lower())


@pytest.mark.asyncio
async def test_recorded_run_awaits_review_then_a_reviewer_signs_it_into_service(
        lab: Path, due_naoh: str) -> None:
    from prepbook.lab import runs
    from prepbook.store.engine import open_database

    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        table = app.screen.query_one("#board")
        table.move_cursor(row=table.get_row_index(due_naoh))
        await pilot.press("s")
        await pilot.pause()
        for i, (mass, volume) in enumerate(READINGS, start=1):
            await type_into(pilot, f"m{i}", mass)
            await type_into(pilot, f"v{i}", volume)
        await pilot.pause(0.5)  # the live preview (same service, record=False)
        form = app.screen
        assert form.last is not None and len(form.last.replicates) == 3
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert form.recorded is None  # recorded only after the confirmation
        await pilot.press("y")
        await pilot.pause()
        code = form.recorded
        assert code is not None and code in shown(form.query_one("#live"))
        await pilot.press("escape")
        await pilot.pause()
        assert "to review" in board_states(app)[due_naoh]

    queued = {r.run: r for r in runs.runs_awaiting_review(open_database(str(lab)))}
    assert queued[code].analyst == "ines" and queued[code].batch == due_naoh

    app = make_app(lab, "priya")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("r")
        await pilot.pause()
        queue = app.screen.query_one("#queue")
        queue.move_cursor(row=queue.get_row_index(code))
        await pilot.pause()
        # a wrong passphrase is refused and nothing is signed (the failed attempt itself
        # is recorded, for the lockout)
        before = row_counts(lab)
        await pilot.press("a", "enter")
        await pilot.pause()
        await pilot.press(*"not-her-pass", "enter")
        await pilot.pause()
        assert "wrong passphrase" in shown(app.screen.query_one("#message"))
        after = row_counts(lab)
        assert after["reviews"] == before["reviews"]
        assert code in {r.run for r in runs.runs_awaiting_review(open_database(str(lab)))}
        # the right one, typed into a field that never shows it
        await pilot.press("a", "enter")
        await pilot.pause()
        secret = app.screen.query_one("#secret")
        assert secret.password is True
        await pilot.press(*"second-look-7731")
        assert "second-look-7731" not in app.export_screenshot()
        await pilot.press("enter")
        await pilot.pause()
        assert "accepted" in shown(app.screen.query_one("#message"))
        await pilot.press("escape")
        await pilot.pause()
        assert "in service" in board_states(app)[due_naoh]


@pytest.mark.asyncio
async def test_malformed_reading_is_refused_with_a_message_and_nothing_written(
        lab: Path, due_naoh: str) -> None:
    app = make_app(lab, "ines")
    before = row_counts(lab)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        table = app.screen.query_one("#board")
        table.move_cursor(row=table.get_row_index(due_naoh))
        await pilot.press("s")
        await pilot.pause()
        await type_into(pilot, "m1", "0.82,15")
        await type_into(pilot, "v1", "40.41")
        await pilot.pause()
        assert "not a plain decimal number" in shown(app.screen.query_one("#note1"))
        assert app.screen.query_one("#m1").has_class("bad")
        await pilot.press("ctrl+s")
        await pilot.pause()
        live = shown(app.screen.query_one("#live"))
        assert "not recorded" in live and "'0.82,15' is not a plain decimal number" in live
        assert app.screen.recorded is None
    assert row_counts(lab) == before


@pytest.mark.asyncio
async def test_asks_who_is_acting_and_notices_writes_from_another_bench(lab: Path) -> None:
    from prepbook.lab import batches
    from prepbook.store.engine import open_database
    from prepbook.tui.screens.login import LoginScreen

    app = make_app(lab, None)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, LoginScreen)
        await type_into(pilot, "login-name", "tomas")
        await pilot.press("enter")
        await pilot.press(*"drying-oven-1053", "enter")
        await pilot.pause()
        assert (app.actor, app.role) == ("tomas", "technician")
        assert app.check_for_changes() is False  # nothing written: no reload
        made = batches.make_batch(open_database(str(lab)), actor="ines", spec="NaOH-0.1N",
                                  volume="1000", solute_mass="4.10")
        assert app.check_for_changes() is True
        await pilot.pause()
        assert "new" in board_states(app)[made.batch]


def test_command_line_start_up_does_not_import_textual() -> None:
    code = ("import json, sys; import prepbook.cli.app; "
            "print(json.dumps('textual' in sys.modules))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True, timeout=120)
    assert json.loads(proc.stdout.strip().splitlines()[-1]) is False


@pytest.mark.asyncio
async def test_the_idle_lock_check_after_the_app_has_closed_is_quiet(lab: Path) -> None:
    # Its timer can tick once more while the app closes, when no screen is left: that
    # tick must not end in a traceback (it did, on a slow machine, at the end of a test).
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert app.idle_seconds is not None and app.actor == "ines"
    assert not app.screen_stack
    assert app.lock_when_idle() is False
