"""Regenerate the terminal app's screenshots on a fresh demo lab (SVG, Textual's own).

    python docs/tui/screenshots.py            # writes docs/tui/*.svg

Not part of the test suite; the headless tests in tests/tui drive the same screens.
"""

from __future__ import annotations

import asyncio
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
SIZE = (132, 42)
SPEC = "NaOH-0.1N"  # the demo's oldest sodium hydroxide batch in use: months of history
READINGS = [("0.8215", "40.41"), ("0.8302", "40.83"), ("0.8177", "40.22")]


def signed_in(db_path: Path, name: str):  # type: ignore[no-untyped-def]
    """The app with a demo person signed in (their passphrase is in the demo lab's file)."""
    from prepbook.lab import demo, sessions
    from prepbook.store.engine import open_database
    from prepbook.tui.app import PrepbookApp

    db = open_database(str(db_path))
    secret = next(u["passphrase"] for u in demo.scenario()["user"] if u["name"] == name)
    here = sessions.os_account()
    opened = sessions.login(db, name=name, passphrase=secret, os_login=here[0], host=here[1])
    return PrepbookApp(db, user=name, session=opened, poll_seconds=0)


def oldest_batch(db_path: Path) -> str:
    """The oldest batch of SPEC on the board (the demo's codes carry its build date)."""
    from prepbook.lab import board
    from prepbook.store.engine import open_database

    rows = board.board(open_database(str(db_path)))
    return min((r.batch for r in rows if r.batch.startswith(SPEC + "-")),
               key=lambda code: code.split("-")[-2])


async def shoot(db_path: Path) -> None:
    batch = oldest_batch(db_path)
    app = signed_in(db_path, "ines")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        app.save_screenshot("board.svg", str(HERE))
        table = app.screen.query_one("#board")
        table.move_cursor(row=table.get_row_index(batch))
        await pilot.press("enter")
        await pilot.pause(0.3)
        app.save_screenshot("batch.svg", str(HERE))
        await pilot.press("2")
        await pilot.pause(0.3)
        app.save_screenshot("batch-trend.svg", str(HERE))
        await pilot.press("s")
        await pilot.pause(0.3)
        for i, (mass, volume) in enumerate(READINGS, start=1):
            app.screen.query_one(f"#m{i}").focus()
            await pilot.press(*mass)
            app.screen.query_one(f"#v{i}").focus()
            await pilot.press(*volume)
        await pilot.pause(0.8)
        app.save_screenshot("record.svg", str(HERE))
        await pilot.press("ctrl+s")
        await pilot.pause(0.3)

    app = signed_in(db_path, "priya")
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        await pilot.press("r")
        await pilot.pause(0.3)
        app.save_screenshot("review.svg", str(HERE))
        await pilot.press("escape", "n")
        await pilot.pause(0.3)
        app.screen.query_one("#spec").value = "HCl-0.1N"
        app.screen.query_one("#method").value = "concentrate"
        await pilot.pause(0.3)
        app.save_screenshot("prepare.svg", str(HERE))
        await pilot.press("escape", "a")
        await pilot.pause(0.3)
        await pilot.press("v")
        for _ in range(300):  # the verify runs in a process of its own: its verdict
            if app.screen.verifying is None:  # type: ignore[attr-defined]
                break
            await pilot.pause(0.1)
        await pilot.pause(0.3)
        app.save_screenshot("audit.svg", str(HERE))


def main() -> int:
    from prepbook.lab import demo

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "demo-lab.db"
        demo.build(path)
        asyncio.run(shoot(path))
    for svg in sorted(HERE.glob("*.svg")):
        print(svg.relative_to(HERE.parent.parent))
    return 0


if __name__ == "__main__":
    sys.exit(main())
