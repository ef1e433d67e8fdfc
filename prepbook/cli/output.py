"""Rendering helpers shared by the commands: JSON on stdout, Rich tables otherwise.

Rich is imported only when something is drawn, so ``--json`` and ``--help`` do
not pay for it.

Stored text is shown as text. Every value that came from the record (a note, a
reason, a name) goes into a printed line through :func:`text`, which shows control
and formatting characters visibly (``plain``) and escapes Rich markup; a table cell
is a Rich ``Text``, never read as markup. The console itself also shows any control
character visibly, so no escape sequence from the record reaches the terminal.
"""

from __future__ import annotations

import json
import math
import os
import sys
from collections.abc import Callable, Iterable, Iterator, Sequence
from contextlib import contextmanager
from datetime import date, datetime
from typing import Any

import msgspec

from prepbook.records import as_data
from prepbook.text import visible


def _default(value: Any) -> Any:
    if isinstance(value, datetime):
        return value.isoformat(timespec="seconds")
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, msgspec.Struct):
        return as_data(value)
    if isinstance(value, set | frozenset | tuple):
        return list(value)
    raise TypeError(f"cannot write {type(value).__name__} as JSON")


def _finite(value: Any) -> Any:
    """JSON has no NaN or infinity: write them as null rather than invalid JSON. A
    record is written as its ``to_json()`` when it has one, else field by field."""
    if isinstance(value, msgspec.Struct):
        to_json = getattr(value, "to_json", None)
        value = to_json() if to_json else msgspec.structs.asdict(value)
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_finite(v) for v in value]
    return value


def emit_json(data: Any) -> None:
    """Print a command's ``--json`` document on stdout and nothing else. A document that
    is an object begins with ``version``, the version of prepbook that wrote it (the
    version of its published schema); a list (``status``) is written as it is."""
    from prepbook import __version__

    document = _finite(data)
    if isinstance(document, dict):
        if "version" in document:  # a field of that name would be overwritten: rename it
            raise TypeError("a --json document has a key 'version' of its own")
        document = {"version": __version__, **document}
    _write(document)


def print_json(data: Any) -> None:
    """Print ``data`` as one JSON document on stdout and nothing else, as it is (no
    ``version`` added: a JSON Schema, which states its own version)."""
    _write(_finite(data))


def _write(document: Any) -> None:
    text = json.dumps(document, default=_default, indent=2, ensure_ascii=False)
    sys.stdout.write(text + "\n")


def console(stderr: bool = False) -> Any:
    from rich.console import Console
    from rich.errors import MarkupError

    class _Console(Console):
        """A console that shows control characters in printed strings visibly, and a
        line that is not valid markup as it is (Rich raises before it writes)."""

        def print(self, *objects: Any, **kwargs: Any) -> None:
            shown = [plain(o) if isinstance(o, str) else o for o in objects]
            try:
                super().print(*shown, **kwargs)
            except MarkupError:  # a stored text that missed `text`: printed as it is
                super().print(*shown, **(kwargs | {"markup": False}))

    width = None
    if os.environ.get("COLUMNS", "").isdigit():
        width = int(os.environ["COLUMNS"])
    return _Console(stderr=stderr, width=width, highlight=False, soft_wrap=False)


def quiet(ctx: Any) -> bool:
    """Whether the root was given ``-q`` (say nothing on stderr but errors)."""
    return bool(getattr(ctx.obj, "verbosity", 0) < 0)


@contextmanager
def progress(what: str, total: int | None, *,
             silent: bool = False) -> Iterator[Callable[[int], None]]:
    """A progress bar for a long command, on stderr, with ``advance(n)`` to move it; a
    spinner when ``total`` is None. Nothing is drawn when stderr is not a terminal or
    when ``silent`` (``-q``, ``--json``), and the bar is gone when the work is done, so
    stdout and the command's own lines stay as they are."""
    from rich.progress import (
        BarColumn,
        MofNCompleteColumn,
        Progress,
        SpinnerColumn,
        TextColumn,
        TimeElapsedColumn,
    )

    err = console(stderr=True)
    bar = Progress(SpinnerColumn(), TextColumn("{task.description}"), BarColumn(),
                   MofNCompleteColumn(), TimeElapsedColumn(), console=err, transient=True,
                   disable=silent or not err.is_terminal)
    with bar:
        task = bar.add_task(what, total=total)
        yield lambda n: bar.advance(task, n)


def plain(value: object) -> str:
    """``value`` with its control and format characters shown visibly (``\\x1b``)."""
    return visible(value)


def text(value: object) -> str:
    """Stored text for a line printed with Rich markup: shown exactly as stored, never
    read as markup (``[bold]`` in a note prints as ``[bold]``)."""
    return escape(plain(value))


def table(title: str | None, columns: Sequence[str], rows: Iterable[Sequence[Any]],
          *, right: Iterable[int] = (), no_wrap: Iterable[int] = ()) -> Any:
    """A table of ``rows``. A column in ``no_wrap`` (a code, a date, a number: what a
    user types or reads whole) is never broken; the others wrap at spaces and fold a
    word too long for them, so a narrow terminal cuts nothing off with "…". Print it
    with :func:`show`, which closes the columns up when the terminal is narrow."""
    from rich import box
    from rich.table import Table
    from rich.text import Text

    right_set = set(right)
    keep = set(no_wrap)
    tab = Table(title=title, title_justify="left", title_style="bold", header_style="bold",
                show_lines=False, box=box.SIMPLE_HEAD, pad_edge=False,
                collapse_padding=True)
    for i, name in enumerate(columns):
        tab.add_column(name, justify="right" if i in right_set else "left", no_wrap=i in keep,
                       overflow="fold")
    for row in rows:
        tab.add_row(*(Text("" if cell is None else plain(cell)) for cell in row))
    return tab


def too_wide(out: Any, tab: Any, *, wrapped: bool = False) -> bool:
    """Whether ``tab`` is wider than the console ``out`` with every cell on one line, or
    (``wrapped``) even with its wrapping columns at their narrowest (their longest word),
    when Rich would have to cut a column kept whole."""
    unbounded = out.options.update_width(10**6)  # the table's own width, not the console's
    needs = out.measure(tab, options=unbounded)
    return bool((needs.minimum if wrapped else needs.maximum) > out.width)


def show(out: Any, tab: Any) -> None:
    """Print ``tab``; when it does not fit the console on one line a row, with one space
    between columns instead of two and no margin at its edges, so that the columns kept
    whole (``no_wrap``) still fit and the others wrap as little as they can."""
    if too_wide(out, tab):
        tab.padding = (0, 0)
        tab.show_edge = False
    out.print(tab)


def whole(text: str, what: str, minimum: int = 0) -> int:
    """A whole-number option, typed as text and read here with the ASCII digits only
    (Typer's own integer options read "١٢" as 12); a bad value is one line, exit 1."""
    from prepbook.inputs import parse_whole

    return parse_whole(text, what, minimum=minimum)


def sig(value: float | None, digits: int = 5) -> str:
    """A value for reading by a person: fixed decimals, never used for storage."""
    if value is None:
        return "-"
    if value == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(value)))
    decimals = max(0, digits - 1 - magnitude)
    return f"{value:.{decimals}f}"


def fixed(value: float | None, decimals: int) -> str:
    return "-" if value is None else f"{value:.{decimals}f}"


def warn_lines(out: Any, warnings: Sequence[str]) -> None:
    for w in warnings:
        out.print(f"[bold]warning:[/bold] {text(w)}")


def caution_lines(out: Any, cautions: Sequence[str]) -> None:
    if not cautions:
        return
    out.print("[bold]Safety[/bold] (follow the safety data sheet, local regulations and "
              "your laboratory's procedures):")
    for c in cautions:
        out.print(f"  - {text(c)}")


def escape(text: str) -> str:
    from rich.markup import escape

    return escape(text)
