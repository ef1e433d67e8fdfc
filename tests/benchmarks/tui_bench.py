"""The terminal app on a large history, driven by Textual's test pilot, timed per action.

    python tests/benchmarks/tui_bench.py [--db PATH] [--cache DIR] [--years 10]

Without ``--db`` it uses the synthetic decade (tests/benchmarks/synthetic.py, built once
per schema into ``--cache``). Each figure is the wall time from the key (or the screen
being pushed) until the app is idle again with the result on screen; "keys while verify
runs" is the slowest of ten key presses answered while a verify of the whole trail runs.
Printed beside the figures measured before this work and the targets (every action at
most 300 ms, start-up at most 600 ms, keys within 50 ms during verify). The database is
a copy; nothing is recorded. Not part of the test suite.
"""

from __future__ import annotations

import argparse
import asyncio
import shutil
import sqlite3
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

if __name__ == "__main__":  # run as a script: the repository's own prepbook
    sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

SIZE = (160, 50)
BEFORE = {"open a batch (first)": "about 1000 ms (scipy.stats for the trend)",
          "first live result": "about 420 ms more (scipy.optimize) + 250 ms wait",
          "verify from the audit view": "2500-2900 ms, app frozen",
          "audit tab of the largest batch": "38 sessions (one per record)"}


async def _idle(pilot: Any) -> None:
    await pilot.pause()
    await pilot.pause()


async def _until(pilot: Any, test: Any, limit: float = 30.0) -> float:
    start = time.perf_counter()
    while not test():
        if time.perf_counter() - start > limit:
            raise TimeoutError("the screen did not show the result in time")
        await pilot.pause(0.005)
    return time.perf_counter() - start


def _text(widget: Any) -> str:
    import io

    from rich.console import Console

    out = io.StringIO()
    Console(file=out, width=200, no_color=True).print(widget.render())
    return out.getvalue()


async def measure(db_path: Path, user: str, passphrase: str) -> dict[str, float]:
    from prepbook.lab import sessions
    from prepbook.store.engine import open_database
    from prepbook.tui.app import PrepbookApp
    from prepbook.tui.screens.audit import AuditScreen
    from prepbook.tui.screens.batch import BatchScreen
    from prepbook.tui.screens.board import BoardScreen
    from prepbook.tui.screens.record import RecordScreen

    figures: dict[str, float] = {}
    # Signed in before the clock starts, as after the sign-in screen (the app asks for
    # it; without it every screen would wait behind that one).
    db = open_database(str(db_path))
    os_login, host = sessions.os_account()
    opened = sessions.login(db, name=user, passphrase=passphrase, os_login=os_login, host=host)
    started = time.perf_counter()
    app = PrepbookApp(db, user=user, session=opened, poll_seconds=0)
    async with app.run_test(size=SIZE) as pilot:
        board = None
        while board is None or not board.query_one("#board").row_count:
            await pilot.pause(0.005)
            board = next((s for s in app.screen_stack if isinstance(s, BoardScreen)), None)
        figures["start to the board's first row"] = time.perf_counter() - started
        table = board.query_one("#board")
        states = {str(k.value): str(table.get_cell(k, "state")) for k in table.rows}
        in_service = [c for c, st in states.items() if "in service" in st]
        codes = (in_service + [c for c in states if c not in in_service])[:3]

        async def open_batch(code: str) -> float:
            t0 = time.perf_counter()
            app.push_screen(BatchScreen(code))
            await _idle(pilot)
            await _until(pilot, lambda: isinstance(app.screen, BatchScreen)
                         and app.screen.data is not None)
            return time.perf_counter() - t0

        # The batch with the most runs is the heaviest to open: the largest on the board.
        figures["open a batch (first)"] = await open_batch(codes[0])
        for key, name in (("2", "trend tab"), ("3", "audit tab of the batch")):
            t0 = time.perf_counter()
            await pilot.press(key)
            await _idle(pilot)
            figures[name] = time.perf_counter() - t0
        app.pop_screen()
        await _idle(pilot)
        figures["open a batch (later)"] = await open_batch(codes[1])
        app.pop_screen()
        await _idle(pilot)

        t0 = time.perf_counter()
        app.push_screen(RecordScreen(codes[0]))
        await _idle(pilot)
        figures["open the recording form"] = time.perf_counter() - t0
        form = app.screen
        form.query_one("#m1").focus()
        slowest = 0.0
        for ch in "0.8215":
            k0 = time.perf_counter()
            await pilot.press(ch)
            slowest = max(slowest, time.perf_counter() - k0)
        form.query_one("#v1").focus()
        for ch in "40.41":
            k0 = time.perf_counter()
            await pilot.press(ch)
            slowest = max(slowest, time.perf_counter() - k0)
        figures["slowest keystroke on the form"] = slowest
        figures["first live result after the last key"] = await _until(
            pilot, lambda: getattr(form, "last", None) is not None
            or "cannot compute" in _text(form.query_one("#live")))
        if getattr(form, "last", None) is None:
            shown = _text(form.query_one("#live"))[:80]
            print(f"  (the form of {codes[0]} shows no result: {shown})")
        app.pop_screen()
        await _idle(pilot)

        app.push_screen(AuditScreen())
        await _idle(pilot)
        audit = app.screen
        t0 = time.perf_counter()
        await pilot.press("v")
        await _idle(pilot)
        figures["verify: the key answered"] = time.perf_counter() - t0
        audit.query_one("#f-actor").focus()
        slowest = 0.0
        for ch in "abcdefghij":
            k0 = time.perf_counter()
            await pilot.press(ch)
            slowest = max(slowest, time.perf_counter() - k0)
        figures["slowest key while verify runs"] = slowest
        await _until(pilot, lambda: getattr(audit, "verifying", None) is None, limit=600)
        figures["verify from the audit view (in the background)"] = time.perf_counter() - t0
        assert isinstance(audit, AuditScreen)
    return figures


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--db", type=Path)
    parser.add_argument("--cache", type=Path, default=Path(".bench-cache"))
    parser.add_argument("--years", type=float, default=10)
    parser.add_argument("--user", default=None)
    parser.add_argument("--passphrase", default=None,
                        help="the user's (default: the synthetic history's, or the demo's ines)")
    args = parser.parse_args()
    if args.db is None:
        from tests.benchmarks import synthetic

        source, _ = synthetic.cached(args.cache, years=args.years)
        user = args.user or "edda"
        passphrase = args.passphrase or synthetic.passphrase(user)
    else:
        source, user = args.db, args.user or "ines"
        passphrase = args.passphrase or "burette-zero-4417"  # the demo lab's (demo_lab/)
    work = Path(tempfile.mkdtemp(prefix="prepbook-tui-bench-"))
    copy = work / "copy.db"
    src, dst = sqlite3.connect(source), sqlite3.connect(copy)
    try:
        src.backup(dst)
    finally:
        src.close()
        dst.close()
    try:
        figures = asyncio.run(measure(copy, user, passphrase))
    finally:
        shutil.rmtree(work, ignore_errors=True)
    print(f"terminal app on {source}")
    for name, seconds in figures.items():
        before = BEFORE.get(name, "")
        print(f"  {name:<48} {seconds * 1000:8.0f} ms   {before}")


if __name__ == "__main__":
    main()
