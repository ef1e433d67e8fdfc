"""Readings from instruments in ``batch show``: where each reading came from, and each
stored titration curve as a plain-text chart with its endpoint marked
(``prepbook.render.curve_text``)."""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from prepbook.render.curve_text import curve_chart, curve_heading, source_lines

if TYPE_CHECKING:
    from prepbook.lab.replicate_sources import RunReadings


def render_readings(out: Any, readings: RunReadings | None,
                    shown: Callable[[str | None], str]) -> None:
    """The lines ``batch show`` prints under a run's replicates (``shown``: a stored
    time in lab time)."""
    if readings is None or not readings.from_instruments:
        return
    for line in source_lines(readings, shown):
        out.print("  " + line, highlight=False, markup=False)
    for c in readings.curves:
        out.print("  " + curve_heading(c), highlight=False, markup=False)
        for line in curve_chart(c.curve):
            out.print("    " + line, highlight=False, markup=False)


BALANCE_WORDS = ("b", "@balance")


def amount_or_reading(db: Any, out: Any, typed: str, balance: str | None, position: int,
                      secondary: bool) -> Any:
    """What the prompt's amount answer stands for: the text as typed, or (for "b" or
    "@balance") the mass read now from the run's balance; None when the balance gave no
    reading (its one-line reason is shown, nothing is kept)."""
    from prepbook.errors import PrepbookError
    from prepbook.lab.replicate_sources import weighed

    if secondary or typed.lower() not in BALANCE_WORDS:
        return typed
    try:
        entry = weighed(db, balance, position)
    except PrepbookError as exc:
        out.print(f"[bold]not taken:[/bold] {exc}")
        return None
    w = entry.weighing
    assert w is not None, "weighed() returns a mass read from the balance"
    out.print(f"  read {w.mass_text} g from balance {w.balance} (printed as {w.raw!r})",
              highlight=False)
    return entry


def replicate_of(amount: Any, volume: str, position: int) -> Any:
    """The replicate for ``runs.standardize``: ``AMOUNT:VOLUME`` text, or the entry read
    from the balance with its volume (typed, ``@FILE`` or ``VOL@FILE``)."""
    from prepbook.lab.replicate_sources import with_volume

    return f"{amount}:{volume}" if isinstance(amount, str) else with_volume(amount, volume,
                                                                            position)
