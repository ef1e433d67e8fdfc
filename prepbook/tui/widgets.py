"""Widgets of our own: a labelled text chart of a batch's factor, state cells, and the
tables and message text that show stored text as text.

Textual reads a ``str`` given to a DataTable cell, a Rich table cell or
``Static.update`` as markup, so a note holding ``[/]`` would crash the screen and
``[link=...]`` would make a link. Stored text therefore reaches the screen as a Rich
``Text`` (never markup) made by :func:`shown`, with its control characters visible;
:class:`SafeTable` and :func:`safe_table` do that for every string cell.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from datetime import datetime
from typing import TYPE_CHECKING, Any
from weakref import WeakKeyDictionary

from rich.table import Table
from rich.text import Text
from textual.app import App
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from prepbook.clock import LabClock
from prepbook.text import visible
from prepbook.tui import words

if TYPE_CHECKING:
    from prepbook.lab.watch import BatchTrend, FactorPoint

MARKS = {"accepted": "●", "awaiting-review": "◇", "rejected": "×"}


def shown(value: object, style: str = "") -> Text:
    """Stored (or typed) text for the screen: never read as markup, control characters
    shown visibly."""
    return value if isinstance(value, Text) else Text(visible(value), style=style)


_CLOCKS: WeakKeyDictionary[App[Any], LabClock] = WeakKeyDictionary()


def lab_clock(app: App[Any]) -> LabClock:
    """The lab's zone and late-entry limit, read once per running app (no database, a
    screen drawn alone: UTC and the default limit)."""
    clk = _CLOCKS.get(app)
    if clk is None:
        db = getattr(app, "db", None)
        if db is None:
            return LabClock()
        from prepbook.lab import settings

        clk = _CLOCKS[app] = settings.lab_clock(db)
    return clk


def when(app: App[Any], value: str | None) -> str:
    """A stored time in the lab's wall-clock time with its offset."""
    return lab_clock(app).shown(value)


def _cells(cells: Sequence[Any]) -> list[Any]:
    return [shown(c) if isinstance(c, str) else c for c in cells]


class SafeTable(DataTable[Any]):
    """A DataTable whose string cells are shown as text, never read as markup."""

    def add_row(self, *cells: Any, **kwargs: Any) -> Any:
        return super().add_row(*_cells(cells), **kwargs)


class _SafeRichTable(Table):
    def add_row(self, *renderables: Any, **kwargs: Any) -> None:
        super().add_row(*_cells(renderables), **kwargs)


def safe_table(**kwargs: Any) -> Table:
    """A Rich table whose string cells are shown as text, never read as markup."""
    return _SafeRichTable(**kwargs)


def colour(app: App, name: str) -> str:
    """A colour of the current theme by its variable name (for Rich text in cells)."""
    try:
        return app.get_css_variables().get(name) or ""
    except Exception:  # before the app runs (no theme yet)
        return ""


def state_cell(app: App, state: str | None) -> Text:
    """A state in words and mark, coloured by the theme; bold where action is needed."""
    style = colour(app, words.STATE_COLOUR.get(state or "", "foreground"))
    if state in ("expired", "due"):
        style = f"bold {style}".strip()
    return Text(words.state_words(state), style=style)


def status_cell(app: App, status: str | None) -> Text:
    name = {"accepted": "success", "rejected": "error", "awaiting-review": "accent"}
    return Text(words.run_words(status), style=colour(app, name.get(status or "", "foreground")))


def check_cell(app: App, check: Mapping[str, Any]) -> Text:
    if check.get("passed"):
        name = "success"
    else:
        name = "error" if check.get("severity") == "fail" else "warning"
    return Text(words.check_words(dict(check)), style=f"bold {colour(app, name)}".strip())


def _t(iso: str) -> datetime:
    return datetime.fromisoformat(iso)


def draw_trend(points: Sequence[FactorPoint], window: tuple[float, float], *, width: int,
               height: int = 9) -> Text:
    """A scatter of factor against date with the acceptance window, axes labelled.

    The vertical range fits the points (so a drift of a few tenths of a percent is
    visible); a window limit is drawn when it falls in that range and otherwise
    named above or below the chart, with how far it is from the points.
    """
    out = Text()
    if not points:
        out.append("no standardization yet: nothing to chart")
        return out
    low, high = window
    values = [p.factor for p in points]
    vmin, vmax = min(values), max(values)
    span = vmax - vmin or max(abs(vmax) * 0.002, 1e-6)
    lo, hi = vmin - span * 0.15, vmax + span * 0.15
    # A window limit close to the points (or crossed by them) is brought into view.
    for limit in (low, high):
        if vmin <= limit <= vmax or abs(limit - (vmin + vmax) / 2) <= 2 * span:
            lo, hi = min(lo, limit - span * 0.05), max(hi, limit + span * 0.05)
    label_w = 8
    plot_w = max(width - label_w - 3, 10)
    times = [_t(p.at) for p in points]
    t0, t1 = min(times), max(times)
    total = (t1 - t0).total_seconds() or 1.0

    def row_of(v: float) -> int:
        return round((hi - v) / (hi - lo) * (height - 1))

    grid = [[" "] * plot_w for _ in range(height)]
    styles: dict[tuple[int, int], str] = {}
    drawn_limits = []
    for limit, name in ((high, "upper"), (low, "lower")):
        if lo <= limit <= hi:
            r = row_of(limit)
            for c in range(plot_w):
                grid[r][c] = "┄"
                styles[(r, c)] = "dim"
            drawn_limits.append((r, f"{name} limit {limit:g}"))
    for p, t in zip(points, times, strict=True):
        c = round((t - t0).total_seconds() / total * (plot_w - 1)) if len(points) > 1 else 0
        r = row_of(p.factor)
        grid[r][c] = MARKS.get(p.status, "·")
        styles.pop((r, c), None)
    out.append("factor = N / N nominal, by date of standardization\n", style="bold")
    if high > hi:
        out.append(f"  upper window limit {high:g} is above the chart "
                   f"({(high - vmax) * 100:.2g} % of nominal above the highest point)\n",
                   style="dim")
    labels = {0: hi, height - 1: lo, (height - 1) // 2: (hi + lo) / 2}
    for r in range(height):
        lab = f"{labels[r]:.4f}" if r in labels else ""
        out.append(f"{lab:>{label_w}} ┤" if lab else f"{'':>{label_w}} │")
        for c, ch in enumerate(grid[r]):
            out.append(ch, style=styles.get((r, c), "bold" if ch in MARKS.values() else ""))
        for lr, text in drawn_limits:
            if lr == r:
                out.append(f" {text}", style="dim")
        out.append("\n")
    out.append(f"{'':>{label_w}} └" + "─" * (plot_w + 1) + "\n")
    first, last = t0.date().isoformat(), t1.date().isoformat()
    gap = plot_w - len(first) - len(last)
    out.append(f"{'':>{label_w}}  {first}" + (" " * gap + last if t1 != t0 and gap > 0 else ""))
    out.append("\n")
    if low < lo:
        out.append(f"  lower window limit {low:g} is below the chart "
                   f"({(vmin - low) * 100:.2g} % of nominal below the lowest point)\n",
                   style="dim")
    out.append("  ● accepted   ◇ awaiting review   × rejected   ┄ acceptance window limit",
               style="dim")
    return out


class TrendChart(Static):
    """The factor of every run of a batch over time, redrawn at the width it is given."""

    def __init__(self, data: BatchTrend | None = None, **kw: Any) -> None:
        super().__init__("", **kw)
        self.data = data

    def set_data(self, data: BatchTrend) -> None:
        self.data = data
        self._draw()

    def on_resize(self) -> None:
        self._draw()

    def _draw(self) -> None:
        if self.data is None:
            return
        width = self.size.width or 72
        chart = draw_trend(self.data.points, self.data.window, width=width)
        t = self.data.trend
        chart.append("\n")
        if t.slope_percent_per_30d is not None and t.slope_ci_percent_per_30d is not None:
            low, high = t.slope_ci_percent_per_30d
            chart.append(
                f"  least-squares trend of the {len(t.history)} accepted runs: "
                f"{t.slope_percent_per_30d:+.3f} % of nominal per 30 days "
                f"(95 % CI {low:+.3f} to {high:+.3f})")
            if t.forecast_leaves_window:
                chart.append(f"; the fitted line leaves the window on "
                             f"{t.forecast_leaves_window}")
        if t.note:
            chart.append(f"\n  {t.note}")
        self.update(chart)


class KeyLine(Footer):
    """Textual's footer of keys, rebuilt once per burst of changes to the keys in force.

    Why: the footer rebuilds its row of keys (about a dozen widgets, each styled) after
    every change of the bindings in force, and opening a screen makes several in a row
    (the screen shown, then each change of focus). Changes that come before the queued
    rebuild has run share it: it reads the keys in force when it runs, the last ones.
    Opening a batch then rebuilds the footer twice instead of three times and takes
    190 ms instead of 220 ms on the ten-year database (tests/benchmarks/tui_bench.py).
    Only the footer's public hook is overridden."""

    def __init__(self) -> None:
        super().__init__()
        self._queued = False

    def bindings_changed(self, screen: Screen[Any]) -> None:
        if self._queued:
            return  # the rebuild already queued will read the keys in force then
        self._queued = True
        super().bindings_changed(screen)  # queues the rebuild after the next refresh
        self.call_after_refresh(self._unqueue)

    def _unqueue(self) -> None:
        self._queued = False
