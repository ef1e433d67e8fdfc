"""The board: every batch in use, those needing action first (one service call)."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal
from textual.coordinate import Coordinate
from textual.screen import Screen
from textual.widgets import DataTable, Input, Select, Static

from prepbook.tui import words
from prepbook.tui.widgets import KeyLine, SafeTable, colour, state_cell

if TYPE_CHECKING:
    from prepbook.lab.board import BatchLife, Board

ALL = "*"


class BoardScreen(Screen[None]):
    BINDINGS = [
        Binding("enter", "open", "Open", show=True, priority=False),
        Binding("slash", "find", "Find"),
        Binding("s", "standardize", "Standardize"),
        Binding("n", "prepare", "New batch"),
        Binding("r", "review", "Review desk"),
        Binding("a", "audit", "Audit"),
        Binding("ctrl+r", "reload", "Reload"),
        Binding("escape", "clear", "Clear filters", show=False),
    ]

    def __init__(self) -> None:
        super().__init__()
        self.view: Board | None = None  # the board as last read: batches, instruments
        self.items: list[BatchLife] = []
        self.shown: list[BatchLife] = []
        self._typing: Any = None

    def compose(self) -> ComposeResult:
        yield Static("", id="topline", classes="topline")
        with Horizontal(id="filters"):
            yield Input(placeholder="find a batch code  ( / )", id="search")
            yield Select([], prompt="every spec", id="spec")
            yield Select([(words.state_words(s), s) for s in words.STATES],
                         prompt="every state", id="state")
        yield SafeTable(id="board", cursor_type="row", zebra_stripes=True)
        yield Static("", id="board-detail", classes="detail")
        yield KeyLine()

    def on_mount(self) -> None:
        table = self.query_one("#board", DataTable)
        table.add_column("batch", key="batch")
        table.add_column("state", key="state")
        table.add_column(Text("N at 20 °C (eq/L)", justify="right"), key="n")
        table.add_column(Text("factor", justify="right"), key="factor")
        table.add_column("restd. by", key="restd")
        table.add_column("expires", key="expires")
        table.add_column("warnings (in full below)", key="warnings", width=48)
        self.reload()
        table.focus()

    # -- data -----------------------------------------------------------------------------
    def reload(self) -> None:
        from prepbook.lab import board

        self.view = board.board_view(self.app.db)  # type: ignore[attr-defined]
        self.items = list(self.view.batches)
        spec = self.query_one("#spec", Select)
        specs = sorted({it.spec for it in self.items})
        current = spec.value
        spec.set_options([(s, s) for s in specs])
        if isinstance(current, str) and current in specs:
            spec.value = current
        self.apply_filter()

    def apply_filter(self) -> None:
        needle = self.query_one("#search", Input).value.strip().lower()
        spec = self.query_one("#spec", Select).value
        state = self.query_one("#state", Select).value
        self.shown = [it for it in self.items
                      if (not needle or needle in it.batch.lower())
                      and (not isinstance(spec, str) or it.spec == spec)
                      and (not isinstance(state, str) or it.state == state)]
        table = self.query_one("#board", DataTable)
        keep = self.selected()
        table.clear()
        warn = colour(self.app, "warning")
        for it in self.shown:
            ws = self.warnings_of(it)
            note = Text(ws[0] + (f"  (+{len(ws) - 1} more)" if len(ws) > 1 else ""),
                        style=warn) if ws else Text("")
            table.add_row(it.batch, state_cell(self.app, it.state),
                          Text(words.sig(it.normality), justify="right"),
                          Text(words.fixed(it.factor), justify="right"),
                          it.restandardize_by or "-", it.expires, note, key=it.batch)
        if keep and keep in {it.batch for it in self.shown}:
            table.move_cursor(row=table.get_row_index(keep))
        act = sum(1 for it in self.items if it.state in ("expired", "due", "awaiting-review"))
        filt = "" if len(self.shown) == len(self.items) else f" · {len(self.shown)} shown"
        self.query_one("#topline", Static).update(Text.assemble(
            ("prepbook ", "bold"), "board  ·  ",
            f"{len(self.items)} batches in use, {act} need action{filt}  ·  ",
            f"acting as {self.app.who()}"))  # type: ignore[attr-defined]
        self.show_detail()

    def warnings_of(self, it: BatchLife) -> tuple[str, ...]:
        """A batch's warnings, the calibration of its instruments included."""
        return self.view.warnings_of(it) if self.view is not None else it.warnings

    def selected(self) -> str | None:
        table = self.query_one("#board", DataTable)
        if not self.shown or table.row_count == 0:
            return None
        try:
            row = table.coordinate_to_cell_key(Coordinate(table.cursor_row, 0)).row_key
        except Exception:
            return None
        return str(row.value) if row is not None else None

    def show_detail(self) -> None:
        code = self.selected()
        it = next((i for i in self.shown if i.batch == code), None)
        detail = self.query_one("#board-detail", Static)
        if it is None:
            detail.update("no batch matches the filters" if self.items else
                          "no batches yet: press n to prepare one")
            return
        lines = Text.assemble((it.batch, "bold"), f"  {it.spec}  ",
                              state_cell(self.app, it.state),
                              f"  last standardized {it.standardized_on or 'never'}")
        for w in self.warnings_of(it):
            lines.append(f"\n  ! {w}")
        detail.update(lines)

    # -- events -----------------------------------------------------------------------------
    def on_input_changed(self, event: Input.Changed) -> None:
        if event.input.id == "search":  # filter once typing pauses (a long board redraws)
            if self._typing is not None:
                self._typing.stop()
            self._typing = self.set_timer(0.15, self.apply_filter)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        self.query_one("#board", DataTable).focus()

    def on_select_changed(self, event: Select.Changed) -> None:
        self.apply_filter()

    def on_data_table_row_highlighted(self, event: DataTable.RowHighlighted) -> None:
        self.show_detail()

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        self.action_open()

    # -- actions ------------------------------------------------------------------------------
    def action_open(self) -> None:
        from prepbook.tui.screens.batch import BatchScreen

        code = self.selected()
        if code:
            self.app.push_screen(BatchScreen(code))

    def action_find(self) -> None:
        self.query_one("#search", Input).focus()

    def action_clear(self) -> None:
        self.query_one("#search", Input).value = ""
        self.query_one("#spec", Select).clear()
        self.query_one("#state", Select).clear()
        self.query_one("#board", DataTable).focus()

    def action_standardize(self) -> None:
        from prepbook.tui.screens.record import RecordScreen

        code = self.selected()
        if code:
            self.app.push_screen(RecordScreen(code))

    def action_prepare(self) -> None:
        from prepbook.tui.screens.prepare import PrepareScreen

        self.app.push_screen(PrepareScreen())

    def action_review(self) -> None:
        from prepbook.tui.screens.review import ReviewScreen

        self.app.push_screen(ReviewScreen())

    def action_audit(self) -> None:
        from prepbook.tui.screens.audit import AuditScreen

        self.app.push_screen(AuditScreen())

    def action_reload(self) -> None:
        self.reload()
