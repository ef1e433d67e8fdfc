"""The terminal app signs people in at start and locks itself when left idle (headless,
with Textual's test pilot)."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.conftest import row_counts
from tests.lab.test_accounts import ADA, BEN, ada_and_ben

pytest.importorskip("textual")

SIZE = (120, 40)


@pytest.fixture
def lab(tmp_path: Path, no_auto_login: None) -> Path:
    path = tmp_path / "lab.db"
    ada_and_ben(path)
    return path


def app_on(path: Path, **kw: object):  # type: ignore[no-untyped-def]
    from prepbook.store.engine import open_database
    from prepbook.tui.app import PrepbookApp

    return PrepbookApp(open_database(str(path)), poll_seconds=0, **kw)


async def type_into(pilot, widget_id: str, text: str) -> None:  # type: ignore[no-untyped-def]
    pilot.app.screen.query_one(f"#{widget_id}").focus()
    await pilot.press(*text)


def message(app, widget_id: str) -> str:  # type: ignore[no-untyped-def]
    return str(app.screen.query_one(f"#{widget_id}").render())


@pytest.mark.asyncio
async def test_the_app_asks_name_and_passphrase_and_counts_a_wrong_one(lab: Path) -> None:
    from prepbook.lab import people
    from prepbook.store.engine import open_database
    from prepbook.tui.screens.board import BoardScreen
    from prepbook.tui.screens.login import LoginScreen

    app = app_on(lab)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, LoginScreen) and app.actor is None
        await type_into(pilot, "login-name", "ben")
        await pilot.press("enter", *"not-his-passphrase", "enter")
        await pilot.pause()
        assert isinstance(app.screen, LoginScreen) and app.actor is None
        assert "wrong passphrase for ben" in message(app, "login-message")
        assert "not-his-passphrase" not in app.export_screenshot()
        users = {u.name: u for u in people.list_users(open_database(str(lab)))}
        assert users["ben"].failed_attempts == 1
        await pilot.press(*BEN, "enter")
        await pilot.pause()
        assert isinstance(app.screen, BoardScreen)
        assert (app.actor, app.role) == ("ben", "technician")
        assert "acting as ben (technician)" in message(app, "topline")


@pytest.mark.asyncio
async def test_the_app_locks_after_the_idle_time_until_the_passphrase(lab: Path) -> None:
    from prepbook.lab import sessions
    from prepbook.tui.screens.board import BoardScreen
    from prepbook.tui.screens.login import LockScreen

    here = sessions.os_account()
    opened = sessions.login(app_on(lab).db, name="ben", passphrase=BEN, os_login=here[0],
                            host=here[1])
    app = app_on(lab, session=opened, idle_seconds=60)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        assert isinstance(app.screen, BoardScreen)
        assert app.idle_seconds == 60
        assert app.lock_when_idle() is False  # just signed in
        app._last_input -= 61  # a minute without a key or a click
        assert app.lock_when_idle() is True
        await pilot.pause()
        assert isinstance(app.screen, LockScreen)
        shot = app.export_screenshot()
        assert "acting" not in shot and "Locked" in shot  # the board is hidden
        before = row_counts(lab, sign_ins=True)
        await pilot.press(*"not-his-passphrase", "enter")
        await pilot.pause()
        assert isinstance(app.screen, LockScreen)
        assert "wrong passphrase" in message(app, "lock-message")
        recorded = row_counts(lab, sign_ins=True)["audit_events"]
        assert recorded == before["audit_events"] + 1  # the failure is recorded
        await pilot.press(*BEN, "enter")
        await pilot.pause()
        assert isinstance(app.screen, BoardScreen) and app.actor == "ben"


def test_the_lab_idle_time_is_the_apps_default(lab: Path) -> None:
    from prepbook.lab import sessions

    here = sessions.os_account()
    opened = sessions.login(app_on(lab).db, name="ada", passphrase=ADA, os_login=here[0],
                            host=here[1])
    app = app_on(lab, session=opened)
    app._take(opened)
    assert app.idle_seconds == 15 * 60
