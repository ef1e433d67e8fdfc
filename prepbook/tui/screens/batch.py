"""One batch: its whole chain, its factor trend and its audit events; actions."""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from rich.console import Group, RenderableType
from rich.text import Text
from textual.app import App, ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import DataTable, Static, TabbedContent, TabPane

from prepbook.errors import PrepbookError
from prepbook.render.curve_text import curve_chart, curve_heading, source_lines
from prepbook.tui import words
from prepbook.tui.screens.common import run_block, safety, small_table
from prepbook.tui.widgets import KeyLine, SafeTable, TrendChart, colour, shown, state_cell, when

if TYPE_CHECKING:
    from prepbook.lab.batch_records import BatchRecord
    from prepbook.lab.replicate_sources import RunReadings


def readings_block(app: App[Any], readings: RunReadings | None) -> list[RenderableType]:
    """Where a run's readings came from, and its stored curves as text charts."""
    if readings is None or not readings.from_instruments:
        return []
    lines = ["  " + line for line in source_lines(readings, lambda t: when(app, t))]
    for c in readings.curves:
        lines += ["  " + curve_heading(c), *("    " + line for line in curve_chart(c.curve))]
    return [Text("\n".join(lines))]


class BatchScreen(Screen[None]):
    BINDINGS = [
        Binding("escape", "app.pop_screen", "Back"),
        Binding("1", "tab('chain')", "Chain"),
        Binding("2", "tab('trend')", "Trend"),
        Binding("3", "tab('events')", "Audit events"),
        Binding("s", "standardize", "Standardize"),
        Binding("u", "use", "Use"),
        Binding("a", "assay", "Assay"),
        Binding("l", "label", "Label"),
        Binding("e", "report", "Report"),
        Binding("x", "retire", "Retire"),
    ]

    def __init__(self, code: str) -> None:
        super().__init__()
        self.code = code
        self.data: BatchRecord | None = None
        self.readings: dict[str, RunReadings] = {}
        self._events_loaded = False

    def compose(self) -> ComposeResult:
        yield Static("", id="topline", classes="topline")
        with TabbedContent(initial="chain", id="tabs"):
            with TabPane("1 chain", id="chain"), VerticalScroll():
                yield Static("", id="chain-body")
            with TabPane("2 trend", id="trend"), VerticalScroll():
                yield TrendChart(id="chart")
                yield Static("", id="trend-points")
            with TabPane("3 audit events", id="events"):
                yield SafeTable(id="batch-events", cursor_type="row", zebra_stripes=True)
        yield Static("", id="message", classes="message")
        yield KeyLine()

    def on_mount(self) -> None:
        self.reload()

    # -- data -------------------------------------------------------------------------------
    def reload(self) -> None:
        from prepbook.lab import batches, replicate_sources, watch

        db = self.app.db  # type: ignore[attr-defined]
        try:
            self.data = batches.show_batch(db, self.code)
        except PrepbookError as exc:
            self.say(str(exc), bad=True)
            return
        self.readings = replicate_sources.of_batch(db, self.code)
        d = self.data
        self.query_one("#topline", Static).update(Text.assemble(
            ("prepbook ", "bold"), "batch  ", (d.batch, "bold"), f"  {d.spec_name}  ",
            state_cell(self.app, d.state),
            f"  ·  acting as {self.app.who()}"))  # type: ignore[attr-defined]
        self.query_one("#chain-body", Static).update(self.chain(d))
        trend = watch.batch_trend(db, self.code)
        self.query_one("#chart", TrendChart).set_data(trend)
        pts = small_table("run", "date", "status", "factor", "change %", "",
                          right=(3, 4))
        limit = trend.trend.drift_limit_percent
        for p in trend.points:
            ch = p.change_percent
            pts.add_row(p.run, when(self.app, p.at), words.run_words(p.status),
                        words.fixed(p.factor, 5), "-" if ch is None else f"{ch:+.3f}",
                        f"beyond the drift limit {limit:g} %" if p.beyond_drift_limit
                        else "")
        self.query_one("#trend-points", Static).update(
            Group(Text(f"\nacceptance window {trend.window[0]:g} to "
                       f"{trend.window[1]:g} (spec {d.spec}); change % is between "
                       "consecutive accepted runs"), pts))
        if self._events_loaded:
            self.load_events()

    def chain(self, d: BatchRecord) -> RenderableType:
        parts: list[RenderableType] = []
        warn = colour(self.app, "warning")
        parts.append(Text.assemble(
            ("now  ", "bold"), f"N = {words.sig(d.normality)} eq/L (latest accepted run, at "
            "its temperature)  ·  factor "
            f"{words.fixed(d.factor)} to nominal {d.nominal:g} {d.unit}  ·  "
            f"restandardize by {d.restandardize_by or '-'}  ·  expires {d.expires}"))
        for w in d.warnings:
            parts.append(shown(f"  ! {w}", style=warn))
        if d.retired:
            r = d.retired
            parts.append(shown(f"  retired {when(self.app, r.at)} by {r.by}: {r.reason}"))
        p = d.preparation
        parts.append(Text("\npreparation", style="bold"))
        how = {"solid": f"{p.solute_mass_g} g of solute"
                        + (f" from lot {p.solute_lot}" if p.solute_lot else ""),
               "concentrate": f"{p.concentrate_volume_ml} mL of concentrated reagent",
               "dilution": f"{p.aliquot_ml} mL of batch {p.from_batch}"}[p.method]
        parts.append(Text(
            f"  {how}, made up to {p.volume_ml} mL in flask {p.flask or '-'}"
            f" (balance {p.balance or '-'})\n  made {when(self.app, p.made_at)} by "
            f"{p.made_by}, recorded {when(self.app, p.recorded_at)};  theoretical N "
            f"{words.sig(p.theoretical_normality)}"
            + (f"\n  notes: {p.notes}" if p.notes else "")))
        if d.diluted_into:
            parts.append(Text(f"  diluted into: {', '.join(d.diluted_into)}"))
        parts.append(Text("\nsafety and storage", style="bold"))
        parts.append(safety(self.app, d.hazard, [], d.storage))
        parts.append(Text(f"standardizations ({len(d.runs)})", style="bold"))
        if not d.runs:
            parts.append(Text("  none yet: press s to record one"))
        for run in reversed(d.runs):  # newest first
            parts.append(run_block(self.app, run, d.unit))
            parts.extend(readings_block(self.app, self.readings.get(run.run)))
            parts.append(Text(""))
        parts.append(Text(f"uses ({len(d.uses)})", style="bold"))
        if d.uses:
            t = small_table("when", "by", "mL", "purpose", right=(2,))
            for u in d.uses:
                t.add_row(when(self.app, u.at), u.by, u.volume_ml or "-",
                          u.purpose or "")
            parts.append(t)
        else:
            parts.append(Text("  none recorded"))
        return Group(*parts)

    def load_events(self) -> None:
        from prepbook.lab import watch

        table = self.query_one("#batch-events", DataTable)
        if not table.columns:
            for c in ("seq", "entered", "actor", "action", "record", "performed", "reason"):
                table.add_column(c)
        table.clear()
        for ev in watch.batch_events(self.app.db, self.code):  # type: ignore[attr-defined]
            table.add_row(str(ev.seq), when(self.app, ev.at), ev.actor, ev.action,
                          ev.record, when(self.app, ev.performed_at), ev.reason or "")
        self._events_loaded = True

    def on_tabbed_content_tab_activated(self, event: TabbedContent.TabActivated) -> None:
        if event.pane.id == "events" and not self._events_loaded:
            self.load_events()  # read only when first asked for

    # -- actions ------------------------------------------------------------------------------
    def say(self, text: str, *, bad: bool = False) -> None:
        msg = self.query_one("#message", Static)
        msg.set_class(bad, "refusal")
        msg.update(shown(text))

    def action_tab(self, tab: str) -> None:
        self.query_one("#tabs", TabbedContent).active = tab

    def action_standardize(self) -> None:
        from prepbook.tui.screens.record import RecordScreen

        self.app.push_screen(RecordScreen(self.code))

    def action_assay(self) -> None:
        from prepbook.tui.screens.assay import AssayScreen

        self.app.push_screen(AssayScreen(self.code))

    def action_use(self) -> None:
        from prepbook.tui.screens.dialogs import FieldsScreen

        def done(values: dict[str, str] | None) -> None:
            from prepbook.lab import batches

            if values is None:
                return
            try:
                batches.use_batch(self.app.db, actor=self.app.actor or "",  # type: ignore[attr-defined]
                                  code=self.code, volume=values["volume"].strip() or None,
                                  purpose=values["purpose"].strip() or None,
                                  at=values["at"] or None,
                                  late_reason=values["late_reason"] or None)
            except PrepbookError as exc:
                self.say(f"not recorded: {exc}", bad=True)
                return
            self.say(f"use of {self.code} recorded")
            self.app.wrote()  # type: ignore[attr-defined]

        self.app.push_screen(FieldsScreen(
            f"Record a use of {self.code}",
            [("volume", "volume taken (mL, optional)", "e.g. 50"),
             ("purpose", "purpose", "the sample or method it served")],
            required=("purpose",), when=("used", "time of use")), done)

    def _to_file(self, title: str, default: str, work: Callable[[str], str]) -> None:
        """Ask for a file name, then ``work(name)`` writes it and says where."""
        from prepbook.tui.screens.dialogs import FieldsScreen

        def done(values: dict[str, str] | None) -> None:
            if values is None:
                return
            try:
                res = work(values["file"].strip() or default)
            except PrepbookError as exc:
                self.say(f"not written: {exc}", bad=True)
                return
            self.say(f"written: {res}")
            self.app.wrote()  # type: ignore[attr-defined]

        self.app.push_screen(FieldsScreen(title, [("file", f"PDF file (blank: {default})",
                                                   default)],
                                          note="An existing file is never overwritten."), done)

    def action_label(self) -> None:
        from prepbook.lab import labels
        from prepbook.render.label_files import label_job

        self._to_file(f"Label for {self.code}", labels.default_file_name(self.code),
                      lambda out: self._print_label(labels, label_job(out, out)))

    def _print_label(self, labels: Any, job: Any) -> str:
        app: Any = self.app
        return labels.print_label(app.db, actor=app.actor or "", code=self.code,
                                  size=job.size.name, sheet=job.sheet_name, copies=job.copies,
                                  file=job.file, deliver=job.deliver).file

    def action_report(self) -> None:
        from prepbook.lab import reports
        from prepbook.render import report as drawn

        app: Any = self.app

        def write(out: str) -> str:
            target = drawn.checked_target(out, paper="a4", replace=False)
            return drawn.write_report(reports.gather(app.db, self.code), target).file

        self._to_file(f"Traceability report of {self.code}", f"{self.code}-report.pdf", write)

    def action_retire(self) -> None:
        from prepbook.tui.screens.dialogs import FieldsScreen, PassphraseScreen

        def with_reason(values: dict[str, str] | None) -> None:
            if values is None:
                return

            def signed(secret: str | None) -> None:
                if secret is not None:
                    finish(values["reason"], secret)

            self.app.push_screen(
                PassphraseScreen(self.app.actor or "",  # type: ignore[attr-defined]
                                 f"retire batch {self.code}: {values['reason']}"), signed)

        def finish(reason: str, secret: str) -> None:
            from prepbook.lab import history

            try:
                history.retire(self.app.db, actor=self.app.actor or "",  # type: ignore[attr-defined]
                               code=self.code, reason=reason, passphrase=secret)
            except PrepbookError as exc:
                self.say(f"not retired: {exc}", bad=True)
                return
            self.say(f"batch {self.code} retired")
            self.app.wrote()  # type: ignore[attr-defined]

        self.app.push_screen(FieldsScreen(f"Retire {self.code}",
                                          [("reason", "why it is retired", "reason")],
                                          required=("reason",)), with_reason)
