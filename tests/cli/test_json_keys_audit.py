"""The JSON keys of `audit verify`, `audit log` and `demo --json` are a contract, and
every command that takes `--json` has its keys pinned in one of the
`test_json_keys_*.py` files beside this one.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from typer.main import get_command
from typer.testing import CliRunner

from prepbook.cli.app import app
from tests.cli.test_bench_flow import _make_batch, bench  # noqa: F401
from tests.conftest import Cli

# The commands whose --json keys this file pins.
PINNED = {"audit verify", "audit log", "demo", "config show"}
VERIFY = ["ok", "events", "head_hash", "problems"]
LOG = ["seq", "at", "actor", "action", "record", "record_type", "record_id", "reason",
       "performed_at"]
BOARD_ITEM = ["batch", "spec", "state", "normality", "factor", "restandardize_by", "expires",
              "warnings"]


def test_audit_verify_and_log_keys(bench: Cli) -> None:  # noqa: F811
    _make_batch(bench)
    verified = bench.json("audit", "verify")
    # more keys in test_json_keys_checkpoints
    assert list(verified)[:len(VERIFY) + 1] == ["version", *VERIFY]
    assert verified["ok"] is True and verified["problems"] == []
    events = bench.json("audit", "log")
    assert events and all(list(e)[:len(LOG)] == LOG for e in events)  # + checkpoints file
    assert events[-1]["action"] == "batch.make"


def test_demo_json_is_the_board(tmp_path: Path) -> None:
    result = CliRunner().invoke(app, ["demo", "--db", str(tmp_path / "d.db"), "--json"],
                                env={"COLUMNS": "120"})
    assert result.exit_code == 0, result.output
    import json

    board = json.loads(result.stdout)
    assert isinstance(board, list) and board
    # DESIGN contract: status (and the demo's board) carry at least these keys.
    assert all(set(BOARD_ITEM) <= set(item) for item in board)


def test_config_show_keys(tmp_path: Path) -> None:
    import json

    env = {"COLUMNS": "120", "PREPBOOK_CONFIG": str(tmp_path / "config.toml")}
    result = CliRunner().invoke(app, ["config", "show", "--json"], env=env)
    assert result.exit_code == 0, result.output
    shown = json.loads(result.stdout)
    assert list(shown) == ["version", "file", "file_exists", "settings"]
    assert shown["settings"] and all(list(s) == ["name", "value", "source", "origin"]
                                     for s in shown["settings"])


def _json_commands() -> list[str]:
    """Every command path that takes --json, as 'group command'."""
    found: list[str] = []

    def walk(command: Any, path: list[str]) -> None:
        if any("--json" in getattr(p, "opts", ()) for p in command.params):
            found.append(" ".join(path))
        for name, sub in getattr(command, "commands", {}).items():
            walk(sub, [*path, name])

    walk(get_command(app), [])
    return found


def test_every_json_command_has_its_keys_pinned() -> None:
    import importlib

    # Every test_json_keys_*.py beside this one pins the keys of its own commands.
    pinned: set[str] = set()
    for path in sorted(Path(__file__).parent.glob("test_json_keys_*.py")):
        pinned |= importlib.import_module(f"tests.cli.{path.stem}").PINNED
    commands = set(_json_commands())
    assert commands - pinned == set(), "--json commands whose keys no test pins"
    assert pinned - commands == set(), "pinned commands that no longer take --json"
