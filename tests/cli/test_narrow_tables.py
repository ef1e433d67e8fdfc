"""At 80 columns no table cuts what a user types or reads whole: every code, name,
date and time that a command's --json gives appears whole in its text, and no line
is longer than the terminal (the suite runs at 160 columns; these tests at 80)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from tests.conftest import Cli
from tests.lab.test_demo import demo_db  # noqa: F401  (the demo lab, built once here)

WIDTH = 80

# command -> the --json keys whose values must appear whole in the text.
WHOLE: dict[tuple[str, ...], tuple[str, ...]] = {
    ("spec", "list"): ("code", "standard"),
    ("lot", "list"): ("code", "material", "expires"),
    ("instrument", "list"): ("code", "due"),
    ("user", "list"): ("name",),
    ("status",): ("batch", "restandardize_by", "expires", "instruments"),
    ("audit", "log"): ("code", "actor", "action"),
}


@pytest.fixture
def narrow(demo_db: Path, monkeypatch: pytest.MonkeyPatch) -> Cli:  # noqa: F811
    monkeypatch.setenv("COLUMNS", str(WIDTH))
    return Cli(demo_db)


def _values(doc: Any, keys: tuple[str, ...]) -> set[str]:
    """Every non-empty value under ``keys`` in a --json document (lists flattened)."""
    found: set[str] = set()
    items = doc if isinstance(doc, list) else [doc]
    for item in items:
        for key in keys:
            value = item.get(key)
            for v in value if isinstance(value, list) else [value]:
                if v not in (None, ""):
                    found.add(str(v))
    return found


def _fits(text: str) -> None:
    assert "\u2026" not in text and "..." not in text, "something was cut short"
    assert max(len(line.rstrip()) for line in text.splitlines()) <= WIDTH


@pytest.mark.parametrize("command", list(WHOLE), ids=" ".join)
def test_what_a_user_types_is_whole_at_80_columns(narrow: Cli, command: tuple[str, ...]) -> None:
    wanted = _values(narrow.json(*command), WHOLE[command])
    assert wanted, "the demo lab gives this command something to show"
    text = narrow.ok(*command).stdout
    _fits(text)
    assert sorted(v for v in wanted if v not in text) == []


def test_trend_keeps_its_run_codes_whole_at_80_columns(narrow: Cli) -> None:
    batch = max(narrow.json("status"), key=lambda b: b["standardized_on"] or "")["batch"]
    runs = [h["run"] for h in narrow.json("trend", batch)["history"]]
    assert runs
    text = narrow.ok("trend", batch).stdout
    _fits(text)
    assert [r for r in runs if r not in text] == []


def test_audit_log_times_are_whole_at_80_columns(narrow: Cli,
                                                 demo_db: Path) -> None:  # noqa: F811
    from prepbook.lab import settings
    from prepbook.store.engine import open_database

    db = open_database(str(demo_db))
    try:
        clk = settings.lab_clock(db)
    finally:
        db.dispose()
    events = narrow.json("audit", "log", "--limit", "60")
    text = narrow.ok("audit", "log", "--limit", "60").stdout
    _fits(text)
    # In the narrow form a time is its date over its hour and offset, neither cut.
    for e in events:
        for at in (e["at"], e["performed_at"]):
            if at:
                day, hour = clk.shown(at).split(" ", 1)
                assert day in text and hour in text, (at, clk.shown(at))
    # and each record by its code above its row id
    assert all(f"({e['record']})" in text for e in events)


def test_the_board_and_the_log_keep_one_line_a_row_when_wide(
        demo_db: Path, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    """At 160 columns nothing is folded: the narrow forms are for narrow terminals."""
    monkeypatch.setenv("COLUMNS", "160")
    cli = Cli(demo_db)
    log = cli.ok("audit", "log", "--limit", "5").stdout
    for e in cli.json("audit", "log", "--limit", "5"):
        assert f"{e['code']} ({e['record']})" in log
    board = cli.ok("status").stdout
    for item in cli.json("status"):
        row = next(line for line in board.splitlines() if line.strip().startswith(item["batch"]))
        assert item["expires"] in row


def test_root_help_lists_every_description_whole_at_80_columns(
        monkeypatch: pytest.MonkeyPatch) -> None:
    from typer.testing import CliRunner

    from prepbook.cli.app import COMMANDS, app

    monkeypatch.setenv("COLUMNS", str(WIDTH))
    text = CliRunner().invoke(app, ["--help"]).stdout
    commands = text.split("Commands:", 1)[1]
    _fits(commands)  # (the usage line above ends in "[ARGS]...", as Click writes it)
    listing = " ".join(commands.split())
    for entry in COMMANDS:
        assert " ".join(entry.short_help.split()) in listing, entry.name
