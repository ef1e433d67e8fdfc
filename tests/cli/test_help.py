"""Every command and group has help text, and --help works everywhere."""

from __future__ import annotations

import re

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


# Typer's own placeholders, which say nothing of what to type: a type name in angle
# brackets for an option's value (<str>, <int range>, ...), and an argument's parameter
# name in lowercase, in braces or brackets, in the Usage line ({code}, [code]).
_TYPE_PLACEHOLDER = re.compile(r"<[a-z][a-z ]*>")
_LOWERCASE_ARGUMENT = re.compile(r"[{\[][a-z][a-z0-9_]*(?:\.\.\.)?[}\]]")


def _name(path: list[str]) -> str:
    return " ".join(["prepbook", *path])


def test_no_help_screen_shows_a_typer_placeholder() -> None:
    runner = CliRunner()
    root = get_command(app)
    for path, _command in _walk(root, []):
        result = runner.invoke(app, [*path, "--help"])
        assert result.exit_code == 0, (path, result.stdout, result.stderr)
        screen = result.stdout
        assert not _TYPE_PLACEHOLDER.search(screen), (
            f"{_name(path)} --help: {_TYPE_PLACEHOLDER.findall(screen)}\n{screen}")
        usage = screen.split("\n\n", 1)[0]  # the Usage line, however it wraps
        assert usage.startswith(f"Usage: {_name(path)} "), usage
        assert not _LOWERCASE_ARGUMENT.search(usage), f"{_name(path)} --help: {usage}"


def test_every_argument_and_option_value_has_a_metavar_in_capitals() -> None:
    root = get_command(app)
    seen = 0
    for path, command in _walk(root, []):
        for param in command.params:
            if getattr(param, "is_flag", False) or param.name == "help":
                continue
            where = f"{_name(path)} {'/'.join(param.opts)}"
            assert param.metavar, f"{where} has no metavar"
            assert param.metavar == param.metavar.upper(), f"{where}: {param.metavar!r}"
            seen += 1
    assert seen > 100
