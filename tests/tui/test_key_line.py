"""The footer of keys is rebuilt once per burst of changes, and shows the keys in force."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.tui.test_app import SIZE, demo_db, demo_lab, due_naoh, lab, make_app  # noqa: F401

pytest.importorskip("textual")


def _keys(screen: object) -> list[str]:
    return [k.description for k in screen.query("FooterKey")]  # type: ignore[attr-defined]


@pytest.mark.asyncio
async def test_opening_a_batch_rebuilds_its_footer_at_most_twice_with_the_batch_keys(
        lab: Path, due_naoh: str, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    from textual.widgets import Footer

    from prepbook.tui.screens.batch import BatchScreen

    rebuilds: list[str] = []
    real = Footer.recompose

    async def counted(self: Footer) -> None:
        rebuilds.append(type(self.screen).__name__)
        await real(self)

    monkeypatch.setattr(Footer, "recompose", counted)
    app = make_app(lab, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        board = app.screen
        board_keys = _keys(board)
        assert "Leave" in board_keys
        rebuilds.clear()
        app.push_screen(BatchScreen(due_naoh))
        await pilot.pause()
        await pilot.pause()
        assert isinstance(app.screen, BatchScreen)
        # Textual's own footer rebuilt itself three times here, once for each change of
        # the keys in force that opening makes; coalesced, changes that come before the
        # queued rebuild has run share it.
        assert rebuilds.count("BatchScreen") <= 2, rebuilds
        keys = _keys(app.screen)
        assert {"Back", "Chain", "Trend", "Audit events", "Standardize", "Use",
                "Retire"} <= set(keys)
        await pilot.press("3")  # a change of tab and focus: the keys stay the batch's
        await pilot.pause()
        assert _keys(app.screen) == keys
        await pilot.press("escape")
        await pilot.pause()
        assert app.screen is board and _keys(board) == board_keys
