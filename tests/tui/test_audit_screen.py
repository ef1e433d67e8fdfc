"""The audit view's verify runs in a process of its own, not in the middle of a key press."""

from __future__ import annotations

import os
import sqlite3
import time
from pathlib import Path
from typing import Any

import pytest

from tests.tui.held_verify import FOLDER_ENV
from tests.tui.test_app import SIZE, demo_db, demo_lab, lab, make_app, shown  # noqa: F401

pytest.importorskip("textual")


def _alive(pid: int) -> bool:
    import psutil

    try:
        return psutil.Process(pid).status() != psutil.STATUS_ZOMBIE
    except psutil.NoSuchProcess:
        return False


@pytest.fixture
def held_app(lab: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Any:  # noqa: F811
    """The app on the demo lab, its audit view's verify held until ``release`` appears in
    ``tmp_path`` (tests/tui/held_verify.py, run as the verify's own process)."""
    from prepbook.tui.screens.audit import AuditScreen

    monkeypatch.setenv(FOLDER_ENV, str(tmp_path))
    # The child finds the tests package where this one is.
    monkeypatch.setenv("PYTHONPATH", str(Path(__file__).resolve().parents[2]))
    monkeypatch.setattr(AuditScreen, "verifier", "tests.tui.held_verify")
    return make_app(lab, "ines")


async def _wait(pilot: object, test: object, seconds: float = 60) -> None:
    deadline = time.monotonic() + seconds
    while not test():  # type: ignore[operator]
        assert time.monotonic() < deadline, "timed out"
        await pilot.pause(0.05)  # type: ignore[attr-defined]


async def _start_held_verify(pilot: Any, folder: Path) -> tuple[Any, int]:
    """The audit view opened and ``v`` pressed: the screen, and the verify's process."""
    from prepbook.tui.screens.audit import AuditScreen

    await pilot.press("a")
    await pilot.pause()
    screen = pilot.app.screen
    assert isinstance(screen, AuditScreen)
    await pilot.press("v")
    await _wait(pilot, lambda: (folder / "started").exists())
    return screen, int((folder / "started").read_text())


@pytest.mark.asyncio
async def test_verify_runs_in_another_process_and_the_screen_answers_keys_meanwhile(
        held_app: Any, tmp_path: Path) -> None:
    async with held_app.run_test(size=SIZE) as pilot:
        screen, child = await _start_held_verify(pilot, tmp_path)
        assert child != os.getpid() and _alive(child)
        assert "verifying" in shown(screen.query_one("#message"))
        # While the verify is held, keys still reach the screen: type into a filter.
        screen.query_one("#f-actor").focus()
        started = time.monotonic()
        await pilot.press("i", "n", "e", "s")
        assert screen.query_one("#f-actor").value == "ines"
        assert time.monotonic() - started < 2.0
        assert screen.verifying is not None  # still running
        (tmp_path / "release").touch()
        await _wait(pilot, lambda: screen.verifying is None)
        assert "verified: the chain of" in shown(screen.query_one("#message"))
    await _wait_gone(child)


async def _wait_gone(pid: int) -> None:
    deadline = time.monotonic() + 10
    while _alive(pid):
        assert time.monotonic() < deadline, f"process {pid} still running"
        time.sleep(0.05)


@pytest.mark.asyncio
async def test_leaving_the_audit_view_ends_a_verify_in_progress(
        held_app: Any, tmp_path: Path) -> None:
    async with held_app.run_test(size=SIZE) as pilot:
        screen, child = await _start_held_verify(pilot, tmp_path)
        await pilot.press("escape")
        await pilot.pause()
        assert held_app.screen is not screen
        await _wait_gone(child)  # ended, though never released


@pytest.mark.asyncio
async def test_the_other_process_reports_an_altered_row(lab: Path) -> None:  # noqa: F811
    # The real verifier, in its own process, on a database changed behind prepbook's
    # back (sqlite3, as someone with the file would): the verdict names the failure.
    from prepbook.tui.screens.audit import AuditScreen

    con = sqlite3.connect(lab)
    with con:
        con.execute("UPDATE batches SET retired_reason = 'spilled on the bench' "
                    "WHERE id = (SELECT min(id) FROM batches)")
    con.close()
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("a")
        await pilot.pause()
        screen = app.screen
        assert isinstance(screen, AuditScreen)
        await pilot.press("v")
        await _wait(pilot, lambda: screen.verifying is None)
        message = shown(screen.query_one("#message"))
        assert "VERIFY FAILED" in message
        assert "batches" in message


@pytest.mark.asyncio
async def test_a_verify_process_that_cannot_start_is_one_line(
        lab: Path, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    import subprocess

    from prepbook.tui.screens.audit import AuditScreen

    def no_process(*args: object, **kwargs: object) -> None:
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(subprocess, "Popen", no_process)
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("a")
        await pilot.pause()
        screen = app.screen
        assert isinstance(screen, AuditScreen)
        await pilot.press("v")
        await pilot.pause()
        assert screen.verifying is None
        message = shown(screen.query_one("#message"))
        assert "verify refused: the verify process could not start" in message
        assert "Traceback" not in message
