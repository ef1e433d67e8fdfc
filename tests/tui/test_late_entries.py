"""Late entries in the terminal app's forms, as the command line's ``--at``/``--reason``.

A time typed in lab time more than the lab's ``late_entry_hours`` (72 h unless set;
common practice, no source) before it is entered needs a reason: the reason field
appears, a record without it is refused in one line with nothing written, and with it
the event keeps the reason and the time the work was done.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest

from tests.conftest import row_counts
from tests.tui.test_app import (
    READINGS,
    SIZE,
    make_app,
    on_board,
    record_confirmed,
    shown,
    type_into,
)
from tests.tui.test_assay_screen import _in_service_naoh

pytest.importorskip("textual")

REASON = "paper bench sheet transcribed after the instrument room was reopened"


def _lab_time(path: Path, hours_ago: float) -> tuple[str, str]:
    """A time ``hours_ago`` in the lab's zone as typed, and as the record stores it."""
    from prepbook.lab import settings
    from prepbook.store.engine import open_database

    zone = settings.lab_clock(open_database(str(path))).zone
    moment = (datetime.now(zone) - timedelta(hours=hours_ago)).replace(second=0,
                                                                        microsecond=0)
    utc = moment.astimezone(UTC).replace(tzinfo=None).isoformat(timespec="minutes")
    return moment.strftime("%Y-%m-%dT%H:%M"), utc


def _events(path: Path, batch: str, action: str) -> list:
    from prepbook.lab import watch
    from prepbook.store.engine import open_database

    return [e for e in watch.batch_events(open_database(str(path)), batch)
            if e.action == action]


def _reason_shown(screen, wid: str = "at") -> bool:
    return bool(screen.query_one(f"#{wid}-when").has_class("late")
                and screen.query_one(f"#{wid}-reason").parent.display)


@pytest.mark.asyncio
async def test_a_late_run_needs_a_reason_and_keeps_it(lab: Path, due_naoh: str) -> None:
    typed, stored = _lab_time(lab, 24 * 5)
    app = make_app(lab, "ines")
    before = row_counts(lab)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await on_board(pilot, due_naoh, "s")
        form = app.screen
        await type_into(pilot, "temp", "21.0")
        for i, (mass, volume) in enumerate(READINGS, start=1):
            await type_into(pilot, f"m{i}", mass)
            await type_into(pilot, f"v{i}", volume)
        await type_into(pilot, "at", _lab_time(lab, 2)[0])  # timely: no reason asked
        await pilot.pause(0.3)
        assert not _reason_shown(form) and form.last is not None
        form.query_one("#at").value = ""
        await type_into(pilot, "at", typed)
        await pilot.pause(0.3)
        assert _reason_shown(form)
        assert "a late entry" in shown(form.query_one("#at-note"))
        await pilot.press("ctrl+s")
        await pilot.pause()
        live = shown(form.query_one("#live"))
        assert "not recorded" in live and "late entry needs a reason" in live, live
        assert form.recorded is None and len(app.screen_stack) and app.screen is form
        assert row_counts(lab) == before
        await type_into(pilot, "at-reason", REASON)
        await pilot.pause(0.3)
        run = await record_confirmed(pilot)
        assert run is not None
    made = [e for e in _events(lab, due_naoh, "run.record") if e.reason == REASON]
    assert len(made) == 1
    assert made[0].performed_at is not None and made[0].performed_at.startswith(stored)


@pytest.mark.asyncio
async def test_a_late_batch_is_refused_without_a_reason(lab: Path) -> None:
    typed, stored = _lab_time(lab, 24 * 4)
    app = make_app(lab, "ines")
    before = row_counts(lab)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("n")
        await pilot.pause()
        form = app.screen
        form.query_one("#spec").value = "NaOH-0.1N"
        await pilot.pause()
        await type_into(pilot, "mass", "4.0")
        await type_into(pilot, "at", typed)
        await pilot.pause()
        assert _reason_shown(form)
        await pilot.press("ctrl+s")
        await pilot.pause()
        line = shown(form.query_one("#live"))
        assert "not recorded, nothing was written" in line and "needs a reason" in line
        assert form.made is None and row_counts(lab) == before
        await type_into(pilot, "at-reason", REASON)
        await pilot.press("ctrl+s")
        await pilot.pause()
        batch = form.made
        assert batch is not None, shown(form.query_one("#live"))
    made = _events(lab, batch, "batch.make")
    assert len(made) == 1 and made[0].reason == REASON
    assert made[0].performed_at is not None and made[0].performed_at.startswith(stored)


@pytest.mark.asyncio
async def test_a_late_use_is_refused_in_its_dialog_without_a_reason(lab: Path) -> None:
    from prepbook.tui.screens.batch import BatchScreen
    from prepbook.tui.screens.dialogs import FieldsScreen

    batch = _in_service_naoh(lab)
    typed, stored = _lab_time(lab, 24 * 6)
    app = make_app(lab, "ines")
    before = row_counts(lab)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        app.push_screen(BatchScreen(batch))
        await pilot.pause()
        await pilot.press("u")
        await pilot.pause()
        dialog = app.screen
        assert isinstance(dialog, FieldsScreen)
        await type_into(pilot, "f-volume", "25")
        await type_into(pilot, "f-purpose", "chloride in well water, sample W-17")
        await type_into(pilot, "f-at", typed)
        await pilot.pause()
        assert _reason_shown(dialog, "f-at")
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert app.screen is dialog
        assert "needs a reason" in shown(dialog.query_one("#fields-message"))
        assert row_counts(lab) == before
        await type_into(pilot, "f-at-reason", REASON)
        await pilot.press("enter")  # Enter in the last field shown: done
        await pilot.pause()
        assert app.screen is not dialog
    used = _events(lab, batch, "batch.use")
    late = [e for e in used if e.reason == REASON]
    assert len(late) == 1 and late[0].performed_at is not None
    assert late[0].performed_at.startswith(stored)


@pytest.mark.asyncio
async def test_a_late_assay_is_refused_without_a_reason(lab: Path) -> None:
    batch = _in_service_naoh(lab)
    typed, _ = _lab_time(lab, 24 * 10)
    app = make_app(lab, "ines")
    before = row_counts(lab)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await on_board(pilot, batch, "enter")
        await pilot.press("a")
        await pilot.pause()
        for wid, text in (("sample", "VIN-LATE-1"), ("analyte", "acetic-acid"),
                          ("amount", "2"), ("v1", "16.50"), ("at", typed)):
            await type_into(pilot, wid, text)
        await pilot.pause(0.4)
        form = app.screen
        assert _reason_shown(form) and form.last is None
        await pilot.press("ctrl+s")
        await pilot.pause()
        live = shown(form.query_one("#live"))
        assert "not recorded" in live and "needs a reason" in live
        assert form.recorded is None
    assert row_counts(lab) == before
