"""The audit view's verify runs beside the screen, not in the middle of a key press."""

from __future__ import annotations

import threading
import time
from pathlib import Path

import pytest

from tests.tui.test_app import SIZE, demo_db, demo_lab, lab, make_app, shown  # noqa: F401

pytest.importorskip("textual")


@pytest.mark.asyncio
async def test_verify_runs_in_a_worker_and_the_screen_answers_keys_meanwhile(
        lab: Path, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    from prepbook.lab import auditing
    from prepbook.tui.screens.audit import AuditScreen

    real_verify = auditing.verify
    release = threading.Event()
    thread_of_verify: list[str] = []

    def slow_verify(db: object) -> object:
        # Stands for a verify of a large trail: holds until the test lets it finish.
        thread_of_verify.append(threading.current_thread().name)
        assert release.wait(30)
        return real_verify(db)  # type: ignore[arg-type]

    monkeypatch.setattr(auditing, "verify", slow_verify)
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("a")
        await pilot.pause()
        assert isinstance(app.screen, AuditScreen)
        screen = app.screen
        await pilot.press("v")
        await pilot.pause()
        assert "verifying" in shown(screen.query_one("#message"))
        # While verify is held, keys still reach the screen: type into the actor filter.
        screen.query_one("#f-actor").focus()
        started = time.monotonic()
        await pilot.press("i", "n", "e", "s")
        await pilot.pause()
        answered = time.monotonic() - started
        assert screen.query_one("#f-actor").value == "ines"
        assert answered < 2.0, answered
        assert screen.verifying is not None  # still running
        release.set()
        await app.workers.wait_for_complete()
        await pilot.pause()
        assert "verified" in shown(screen.query_one("#message"))
        assert screen.verifying is None
    assert thread_of_verify and thread_of_verify[0] != threading.main_thread().name
