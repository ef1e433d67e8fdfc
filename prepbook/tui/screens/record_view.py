"""How the standardization form shows a result and what is wrong (Rich renderables)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from rich.console import Group
from rich.text import Text
from textual.app import App

from prepbook.records import as_data
from prepbook.tui import words
from prepbook.tui.screens.common import budget_table, small_table
from prepbook.tui.widgets import check_cell, colour

if TYPE_CHECKING:
    from prepbook.lab.runs import RunResult


def problems_text(app: App[Any], title: str, problems: list[str]) -> Text:
    out = Text.assemble((f"{title}\n", "bold"))
    for p in problems:
        out.append(f"  ✖ {p}\n", style=colour(app, "error"))
    return out


def short(app: App[Any], message: str) -> Text:
    """A refusal shortened to fit its row (the whole message is on the right)."""
    head, sep, rest = message.partition(": ")
    text = rest if sep and head.startswith("replicate") else message
    return Text(f"✖ {text}", style=colour(app, "error"), no_wrap=True, overflow="ellipsis")


def result_view(app: App[Any], res: RunResult, title: str) -> Group:
    """A run's result: normality, spread, uncertainty, verdict, checks and budget."""
    verdict = res.verdict
    v_style = colour(app, {"pass": "success", "fail": "error"}.get(verdict, "warning"))
    head = Text.assemble(
        (f"{title}\n", "bold"),
        f"  N = {words.sig(res.normality)} eq/L at {res.temperature_c:g} °C"
        + ("" if res.temperature_c == 20 else
           f";  {words.sig(res.normality_20c)} eq/L at 20 °C") + "\n",
        f"  factor {words.fixed(res.factor)}   SD {words.sig(res.sd, 2)}   "
        f"RSD {words.sig(res.rsd_percent, 3)} %   n = {len(res.replicates)}\n",
        f"  u = {words.sig(res.u, 2)}   U = {words.sig(res.U, 2)} eq/L "
        f"(k = {words.sig(res.k, 2)})\n",
        ("  verdict: ", "bold"), (verdict.upper(), f"bold {v_style}".strip()))
    checks = small_table("check", "outcome", "why")
    for c in res.checks:
        checks.add_row(c.name, check_cell(app, as_data(c)), c.message)
    extra = [n for n in res.warnings if n not in {c.message for c in res.checks}]
    notes = Text("".join(f"  note: {n}\n" for n in extra))
    return Group(head, Text(""), checks, notes, Text("uncertainty budget", style="bold"),
                 budget_table([as_data(line) for line in res.budget]))
