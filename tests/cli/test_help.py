"""Every command and group has help text, and --help works everywhere."""

from __future__ import annotations

import typer
from typer.main import get_command
from typer.testing import CliRunner

from prepbook.cli.app import app


def _walk(command: typer.core.TyperGroup | typer.core.TyperCommand, path: list[str]):
    yield path, command
    for name, sub in getattr(command, "commands", {}).items():
        yield from _walk(sub, [*path, name])


def test_every_command_has_help_text() -> None:
    root = get_command(app)
    seen = 0
    for path, command in _walk(root, []):
        assert (command.help or "").strip(), f"prepbook {' '.join(path)} has no help text"
        for param in command.params:
            if param.name in ("help",):
                continue
            if isinstance(param, typer.core.TyperOption) or param.param_type_name == "option":
                assert getattr(param, "help", None), f"{' '.join(path)} {param.opts} has no help"
        seen += 1
    assert seen > 25


def test_help_runs_for_every_command() -> None:
    runner = CliRunner()
    root = get_command(app)
    for path, _command in _walk(root, []):
        result = runner.invoke(app, [*path, "--help"])
        assert result.exit_code == 0, (path, result.stdout, result.stderr)
        assert "Usage" in result.stdout


def test_usage_error_exits_2() -> None:
    result = CliRunner().invoke(app, ["calc", "normality", "--no-such-option"])
    assert result.exit_code == 2
