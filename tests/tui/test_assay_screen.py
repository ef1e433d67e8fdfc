"""The assay form on a batch: the live result is the service's own (``record=False``),
Ctrl+S records it, and a malformed volume is refused with nothing written."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.conftest import row_counts
from tests.tui.test_app import SIZE, demo_db, demo_lab, lab, make_app, type_into  # noqa: F401

pytest.importorskip("textual")


def _in_service_naoh(path: Path) -> str:
    from prepbook.lab import board
    from prepbook.store.engine import open_database

    return next(b.batch for b in board.board(open_database(str(path)))
                if b.spec == "NaOH-0.1N" and b.state == "in-service")


async def _open_form(pilot, batch: str) -> None:
    table = pilot.app.screen.query_one("#board")
    table.move_cursor(row=table.get_row_index(batch))
    await pilot.press("enter")
    await pilot.pause()
    await pilot.press("a")
    await pilot.pause()


@pytest.mark.asyncio
async def test_the_live_result_is_what_gets_recorded(lab: Path) -> None:  # noqa: F811
    from prepbook.lab import assays
    from prepbook.store.engine import open_database

    batch = _in_service_naoh(lab)
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await _open_form(pilot, batch)
        for wid, text in (("sample", "VIN-TEST-1"), ("analyte", "acetic-acid"),
                          ("amount", "2"), ("limit", "4.5:5.5"), ("v1", "16.50"),
                          ("v2", "16.58")):
            await type_into(pilot, wid, text)
        await pilot.pause(0.6)
        form = app.screen
        assert form.last is not None and form.last.sample == "VIN-TEST-1"
        preview = form.last.result
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert form.recorded is not None
    made = {a.assay: a for a in assays.assays_of(open_database(str(lab)), batch)}
    assert made[form.recorded].result == preview
    assert made[form.recorded].volumes_ml == ("16.50", "16.58")


@pytest.mark.asyncio
async def test_a_malformed_volume_is_refused_and_nothing_written(lab: Path) -> None:  # noqa: F811
    batch = _in_service_naoh(lab)
    before = row_counts(lab)
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await _open_form(pilot, batch)
        for wid, text in (("sample", "VIN-TEST-2"), ("analyte", "acetic-acid"),
                          ("amount", "2"), ("v1", "16,50")):
            await type_into(pilot, wid, text)
        await pilot.pause(0.6)
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert app.screen.recorded is None
        assert app.screen.query_one("#v1").has_class("bad")
    assert row_counts(lab) == before
