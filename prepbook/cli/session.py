"""Opening the database named by the root options, and reading passphrases."""

from __future__ import annotations

import sys
from typing import Any

import typer

from prepbook.cli.context import invocation
from prepbook.errors import InvalidInput


def database(ctx: typer.Context) -> Any:
    """The database of this run, which must exist and be current."""
    from prepbook.lab.database import open_database

    return open_database(invocation(ctx).db)


def actor(ctx: typer.Context) -> str:
    return invocation(ctx).user


class Passphrases:
    """Passphrases for one command: from standard input (one per line) or prompted.

    With ``--passphrase-stdin`` the lines are read once, in the order the command
    documents; otherwise each is asked for at the terminal without echo.
    """

    def __init__(self, from_stdin: bool) -> None:
        self._lines: list[str] | None = None
        if from_stdin:
            data = sys.stdin.read()
            self._lines = data.splitlines()
        self._next = 0

    def get(self, prompt: str, *, confirm: bool = False) -> str:
        if self._lines is not None:
            if self._next >= len(self._lines):
                raise InvalidInput(f"standard input has no line for: {prompt.lower()}")
            value = self._lines[self._next]
            self._next += 1
            return value
        if not sys.stdin.isatty():
            raise InvalidInput(f"{prompt.lower()} is needed: type it at a terminal "
                               "or pass --passphrase-stdin")
        return typer.prompt(prompt, hide_input=True, confirmation_prompt=confirm)
