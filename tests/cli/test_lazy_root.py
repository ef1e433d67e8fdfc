"""The root's static command table (``prepbook.cli.app.COMMANDS``) agrees with the real
commands, so the lazy root lists and runs exactly what an eager one would."""

from __future__ import annotations

import importlib
import pkgutil
from collections.abc import Callable
from typing import Any

import pytest
import typer
from typer.core import TyperGroup
from typer.testing import CliRunner

import prepbook.cli
from prepbook.cli.app import COMMANDS, Entry, app, load


def _root() -> TyperGroup:
    root = typer.main.get_command(app)
    assert isinstance(root, TyperGroup)
    return root


@pytest.mark.parametrize("entry", COMMANDS, ids=[e.name for e in COMMANDS])
def test_every_entry_resolves_to_a_command_of_its_kind(entry: Entry) -> None:
    command = load(entry)
    assert command.name == entry.name
    assert isinstance(command, TyperGroup) == entry.group


@pytest.mark.parametrize("entry", COMMANDS, ids=[e.name for e in COMMANDS])
def test_listed_short_help_is_the_commands_own(entry: Entry) -> None:
    # Unshortened: the first sentence of the command's help, as Click takes it.
    assert load(entry).get_short_help_str(limit=10**6) == entry.short_help


def test_names_are_unique() -> None:
    names = [e.name for e in COMMANDS]
    assert len(set(names)) == len(names)


def test_no_command_group_module_is_left_out_of_the_table() -> None:
    in_table = {(e.module, e.attribute) for e in COMMANDS if e.group}
    for info in pkgutil.iter_modules(prepbook.cli.__path__):
        if info.name == "app":
            continue
        module = importlib.import_module(f"prepbook.cli.{info.name}")
        if isinstance(getattr(module, "app", None), typer.Typer):
            assert (info.name, "app") in in_table, f"prepbook.cli.{info.name}.app is not listed"


@pytest.mark.parametrize("width", [60, 80, 100, 200])
def test_root_help_lists_what_the_loaded_commands_would(width: int) -> None:
    """The listing drawn from the table equals the listing of the real commands' short
    help, whole (Click's own would cut it with "..."), wrapped to every width."""
    root = _root()

    def listing(draw: Callable[[Any, Any], None]) -> str:
        ctx = root.make_context("prepbook", [], resilient_parsing=True,
                                terminal_width=width, max_content_width=width)
        formatter = ctx.make_formatter()
        draw(ctx, formatter)
        return formatter.getvalue()

    def eager(ctx: Any, formatter: Any) -> None:
        with formatter.section("Commands"):
            formatter.write_dl([(name, root.commands[name].get_short_help_str(10**6))
                                for name in root.list_commands(ctx)])

    lazy = listing(root.format_commands)
    assert lazy == listing(eager)
    assert lazy.startswith("Commands:") and lazy.count("\n  ") >= len(COMMANDS)
    assert "..." not in lazy and "\u2026" not in lazy
    assert all(len(line) <= width for line in lazy.splitlines())


def test_root_help_shows_the_listing() -> None:
    result = CliRunner().invoke(app, ["--help"])
    assert result.exit_code == 0
    listed = [line.split()[0] for line in result.stdout.split("Commands:", 1)[1].splitlines()
              if line.strip() and not line.startswith("   ")]  # not a wrapped line
    assert listed == [e.name for e in COMMANDS]


def test_unknown_command_is_a_usage_error_with_a_suggestion() -> None:
    result = CliRunner().invoke(app, ["statu"])
    assert result.exit_code == 2
    assert "No such command 'statu'" in result.stderr
    assert "'status'" in result.stderr


def test_the_root_knows_every_name_without_loading() -> None:
    root = _root()
    assert list(root.commands) == [e.name for e in COMMANDS]
    assert "calc" in root.commands and "no-such" not in root.commands
    assert root.get_command(root.make_context("prepbook", [], resilient_parsing=True),
                            "no-such") is None


def test_two_commands_of_one_group_run_one_after_the_other_in_one_process() -> None:
    runner = CliRunner()
    first = runner.invoke(app, ["calc", "dilute", "--stock", "1", "--normality", "0.1",
                                "--volume", "1000", "--json"])
    second = runner.invoke(app, ["calc", "temperature", "--normality", "0.1", "--from", "25",
                                 "--to", "20", "--json"])
    assert first.exit_code == 0, first.output
    assert second.exit_code == 0, second.output
    typo = runner.invoke(app, ["calc", "dilut"])
    assert typo.exit_code == 2 and "'dilute'" in typo.stderr
