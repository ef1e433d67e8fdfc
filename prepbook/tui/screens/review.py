"""The review desk: runs awaiting a second person's signed decision."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from rich.console import Group
from rich.markup import escape
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.coordinate import Coordinate
from textual.screen import Screen
from textual.widgets import DataTable, Static

from prepbook.errors import PrepbookError
from prepbook.tui import words
from prepbook.tui.screens.common import budget_table, run_block
from prepbook.tui.widgets import KeyLine, SafeTable, colour, shown, when

if TYPE_CHECKING:
    from prepbook.lab.reviews import QueuedRun

REVIEWER_ROLES = ("reviewer", "admin")


class ReviewScreen(Screen[None]):
    BINDINGS = [
        Binding("escape", "app.pop_screen", "Back"),
        Binding("a", "decide(True)", "Accept"),
        Binding("x", "decide(False)", "Reject"),
        Binding("o", "open_batch", "Open batch"),
    ]

    def __init__(self) -> None:
        super().__init__()
        self.queue: tuple[QueuedRun, ...] = ()
        self._details: dict[str, dict[str, Any]] = {}

    def compose(self) -> ComposeResult:
        yield Static("", id="topline", classes="topline")
        yield SafeTable(id="queue", cursor_type="row", zebra_stripes=True)
        with VerticalScroll(id="review-detail"):
            yield Static("", id="review-body")
        yield Static("", id="message", classes="message")
        yield KeyLine()

    def on_mount(self) -> None:
        table = self.query_one("#queue", DataTable)
        for c in ("run", "batch", "analyst", "performed", "N (eq/L)", "factor",
                  "RSD %", "verdict"):
            table.add_column(c, key=c)
        self.reload()
        table.focus()

    def reload(self) -> None:
        from prepbook.lab import reviews

        self.queue = reviews.runs_awaiting_review(self.app.db)  # type: ignore[attr-defined]
        self._details.clear()
        table = self.query_one("#queue", DataTable)
        keep = self.selected()
        table.clear()
        for r in self.queue:
            v_style = colour(self.app, {"pass": "success", "fail": "error"}.get(
                r.verdict or "", "warning"))
            table.add_row(r.run, r.batch, r.analyst, when(self.app, r.performed_at),
                          Text(words.sig(r.normality), justify="right"),
                          Text(words.fixed(r.factor), justify="right"),
                          Text(words.sig(r.rsd_percent, 3), justify="right"),
                          Text((r.verdict or "-").upper(), style=v_style), key=r.run)
        if keep in {r.run for r in self.queue}:
            table.move_cursor(row=table.get_row_index(keep))
        role = self.app.role  # type: ignore[attr-defined]
        note = "" if role in REVIEWER_ROLES else \
            "  ·  only a reviewer or an admin may sign"
        self.query_one("#topline", Static).update(Text.assemble(
            ("prepbook ", "bold"), "review desk  ·  ",
            f"{len(self.queue)} run(s) awaiting review  ·  acting as ",
            self.app.who(), note))  # type: ignore[attr-defined]
        self.show()

    def selected(self) -> str | None:
        table = self.query_one("#queue", DataTable)
        if not self.queue or table.row_count == 0:
            return None
        try:
            return str(table.coordinate_to_cell_key(Coordinate(table.cursor_row, 0)).row_key.value)
        except Exception:
            return None

    def detail(self, code: str) -> dict[str, Any] | None:
        """The run with its replicates (from the batch's chain), read once per visit."""
        from prepbook.lab import batches

        if code not in self._details:
            r = self._queued(code)
            if r is None:
                return None
            chain = batches.show_batch(self.app.db, r.batch)  # type: ignore[attr-defined]
            full = next((x for x in chain.runs if x.run == code), None)
            if full is None:
                return None
            self._details[code] = {"run": full, "batch": chain}
        return self._details[code]

    def _queued(self, code: str | None) -> QueuedRun | None:
        return next((q for q in self.queue if q.run == code), None)

    def show(self) -> None:
        body = self.query_one("#review-body", Static)
        code = self.selected()
        if code is None:
            body.update(Text("Nothing awaits review.", style="italic"))
            return
        d = self.detail(code)
        if d is None:
            return
        run, chain = d["run"], d["batch"]
        head = Text.assemble(
            ("batch ", "bold"), f"{chain.batch}  {chain.spec_name}  ·  nominal "
            f"{chain.nominal:g} {chain.unit}  ·  latest accepted factor "
            f"{words.fixed(chain.factor) if chain.factor is not None else 'none yet'}\n")
        body.update(Group(head, run_block(self.app, run, chain.unit), Text(""),
                          Text("uncertainty budget", style="bold"),
                          budget_table(run.budget)))

    def on_data_table_row_highlighted(self, event: DataTable.RowHighlighted) -> None:
        self.show()

    def say(self, text: str, *, bad: bool = False) -> None:
        msg = self.query_one("#message", Static)
        msg.set_class(bad, "refusal")
        msg.update(shown(text))

    def action_open_batch(self) -> None:
        from prepbook.tui.screens.batch import BatchScreen

        r = self._queued(self.selected())
        if r:
            self.app.push_screen(BatchScreen(r.batch))

    def action_decide(self, accept: bool) -> None:
        from prepbook.tui.screens.dialogs import FieldsScreen, PassphraseScreen

        r = self._queued(self.selected())
        app: Any = self.app
        if r is None:
            self.say("nothing selected to review", bad=True)
            return
        if app.role not in REVIEWER_ROLES:
            self.say(f"{app.who()} may not review: only a reviewer or an admin signs", bad=True)
            return
        if r.analyst == app.actor:
            self.say(f"{app.actor} recorded run {r.run} and cannot review it; a second "
                     "person must", bad=True)
            return
        queued = r
        verb = "accept" if accept else "reject"
        from prepbook.lab import reviews

        if accept:  # a run that failed a check is refused before anything is asked
            try:
                reviews.to_sign(app.db, actor=app.actor, run=queued.run, accept=True,
                                reason=None)
            except PrepbookError as exc:
                self.say(f"not signed: {exc}", bad=True)
                return

        def sign(reason: str | None) -> None:
            try:  # what is signed, shown with the passphrase request
                run = reviews.to_sign(app.db, actor=app.actor, run=queued.run, accept=accept,
                                      reason=reason)
            except PrepbookError as exc:
                self.say(f"not signed: {exc}", bad=True)
                return
            # Shown as markup by the dialog: escaped, so no stored text can style it.
            doing = escape("\n".join([
                f"{verb} run {run.run} of batch {run.batch}",
                f"N = {words.sig(run.normality)} eq/L (at 20 °C {words.sig(run.normality_20c)})"
                f", factor {words.fixed(run.factor)}, RSD {words.sig(run.rsd_percent, 3)} %, "
                f"checks {(run.verdict or '-').upper()}",
                *(("ok   " if c["passed"] else "FAIL " if c["severity"] == "fail"
                   else "warn ") + f"{c['name']}: {c['message']}" for c in run.checks),
                *([f"reason: {reason}"] if reason else [])]))

            def signed(secret: str | None) -> None:
                if secret is not None:
                    finish(reason, secret)

            app.push_screen(PassphraseScreen(app.actor, doing), signed)

        def finish(reason: str | None, secret: str) -> None:
            try:
                res = reviews.review(app.db, actor=app.actor, run=queued.run, accept=accept,
                                     reason=reason, passphrase=secret)
            except PrepbookError as exc:
                self.say(f"not signed: {exc}", bad=True)
                return
            self.say(f"run {res.run} of batch {res.batch} {res.status} by {app.actor}")
            app.wrote()

        def with_reason(values: dict[str, str] | None) -> None:
            if values is not None:
                sign(values["reason"].strip() or None)

        self.app.push_screen(FieldsScreen(
            f"{verb.capitalize()} run {r.run}",
            [("reason", "reason" + (" (required)" if not accept else " (optional)"),
              "why")], required=() if accept else ("reason",)), with_reason)
