"""The terminal app's batch screen says where a run's readings came from and draws each
stored curve with its endpoint."""

from __future__ import annotations

from pathlib import Path

import pytest

from prepbook.lab.demo_readings import khp_curve
from tests.cli.test_bench_flow import _at, _make_batch, bench  # noqa: F401 (fixture)
from tests.conftest import Cli, is_url
from tests.tui.test_app import SIZE, make_app, shown

pytest.importorskip("textual")


@pytest.mark.asyncio
async def test_the_batch_screen_draws_the_stored_curve(bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    from prepbook.tui.screens.batch import BatchScreen

    if is_url(bench.db):
        pytest.skip("the app is opened on the SQLite file here")
    curve = tmp_path / "c1.csv"
    curve.write_bytes(khp_curve(0.8085, 0.9998, 0.1003, seed=1))
    batch = _make_batch(bench)
    bench.ok("standardize", batch, "--lot", "KHP-0001", "--at", _at(-1), "--rep",
             f"0.8085:@{curve}", user="ben")
    app = make_app(Path(bench.db), "ben")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        app.push_screen(BatchScreen(batch))
        await pilot.pause()
        text = shown(app.screen.query_one("#chain-body"))
    assert "1.1: mass typed; volume from its curve's endpoint" in text
    assert "curve of replicate 1: c1.csv" in text and "E" in text
