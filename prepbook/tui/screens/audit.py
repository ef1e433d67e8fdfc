"""The audit trail: events filtered by record, actor and dates, and verification."""

from __future__ import annotations

import time
from typing import TYPE_CHECKING

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal
from textual.message import Message
from textual.screen import Screen
from textual.widgets import DataTable, Input, Static

from prepbook.errors import PrepbookError
from prepbook.tui.apart import VERIFY, Apart, Outcome
from prepbook.tui.widgets import KeyLine, SafeTable, colour, shown, when

if TYPE_CHECKING:
    from textual.timer import Timer

    from prepbook.store.audit import VerifyReport

PAGE = 200  # newest events first shown; m shows older ones page by page


class AuditScreen(Screen[None]):
    verifier = VERIFY
    """The module ``v`` runs in another process (a test puts a held one in its place)."""

    BINDINGS = [
        Binding("escape", "app.pop_screen", "Back"),
        Binding("m", "more", "Older events"),
        Binding("v", "verify", "Verify"),
        Binding("ctrl+r", "reload", "Reload"),
    ]

    def __init__(self, record: str | None = None) -> None:
        super().__init__()
        self.record = record
        self.limit = PAGE
        self.verifying: float | None = None  # when the running verify started
        self._ticker: Timer | None = None
        self._apart: Apart | None = None

    def compose(self) -> ComposeResult:
        yield Static("", id="topline", classes="topline")
        with Horizontal(id="filters"):
            yield Input(value=self.record or "", placeholder="record: batches#3, runs ...",
                        id="f-record")
            yield Input(placeholder="actor", id="f-actor")
            yield Input(placeholder="since YYYY-MM-DD", id="f-since")
            yield Input(placeholder="until YYYY-MM-DD", id="f-until")
        yield SafeTable(id="events", cursor_type="row", zebra_stripes=True)
        yield Static("", id="message", classes="message")
        yield KeyLine()

    def on_mount(self) -> None:
        table = self.query_one("#events", DataTable)
        for c in ("seq", "entered", "actor", "action", "record", "performed", "reason"):
            table.add_column(c)
        self.reload()
        table.focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        self.limit = PAGE
        self.reload()

    def reload(self) -> None:
        from prepbook.lab import auditing

        def val(wid: str) -> str | None:
            return self.query_one(wid, Input).value.strip() or None

        msg = self.query_one("#message", Static)
        try:
            events = auditing.log(self.app.db, record=val("#f-record"),  # type: ignore[attr-defined]
                                  actor=val("#f-actor"), since=val("#f-since"),
                                  until=val("#f-until"), limit=self.limit + 1)
        except PrepbookError as exc:
            msg.set_class(True, "refusal")
            msg.update(shown(f"filter refused: {exc}"))
            return
        more = len(events) > self.limit
        events = events[-self.limit:]
        table = self.query_one("#events", DataTable)
        table.clear()
        for ev in reversed(events):  # newest first
            table.add_row(str(ev.seq), when(self.app, ev.at), ev.actor, ev.action,
                          ev.record, when(self.app, ev.performed_at), ev.reason or "")
        msg.set_class(False, "refusal")
        msg.update(f"{len(events)} event(s), newest first"
                   + ("; m shows older ones" if more else "; that is all of them"))
        self.query_one("#topline", Static).update(Text.assemble(
            ("prepbook ", "bold"), "audit trail  ·  Enter in a filter applies it  ·  "
            "acting as ", self.app.who()))  # type: ignore[attr-defined]

    def action_more(self) -> None:
        self.limit += PAGE
        self.reload()

    def action_reload(self) -> None:
        self.reload()

    class Verified(Message):
        """A verify's outcome, posted to the screen by the thread that waits for it."""

        def __init__(self, outcome: Outcome) -> None:
            super().__init__()
            self.outcome = outcome

    def action_verify(self) -> None:
        """Verify in a process of its own (``tui/apart.py`` says why): on a large trail it
        takes seconds, and the screen stays usable meanwhile (the message counts the
        seconds). A second ``v`` while one runs does nothing."""
        if self.verifying is not None:
            return
        self.verifying = time.monotonic()
        self._show_progress()
        self._ticker = self.set_interval(0.5, self._show_progress)
        try:
            self._apart = Apart(self.verifier, self.app.db.url,  # type: ignore[attr-defined]
                                lambda outcome: self.post_message(self.Verified(outcome)))
        except OSError as exc:  # no process could be started: say so, in one line
            self._show_verdict(None, f"the verify process could not start: {exc}")

    def _show_progress(self) -> None:
        if self.verifying is None:
            return
        msg = self.query_one("#message", Static)
        msg.set_class(False, "refusal")
        seconds = time.monotonic() - self.verifying
        msg.update(f"verifying the chain and every current row … {seconds:.0f} s "
                   "(keep working; the verdict appears here)")

    def on_audit_screen_verified(self, message: Verified) -> None:
        self._show_verdict(*message.outcome)

    def on_unmount(self) -> None:
        self._stop_verify()

    def _stop_verify(self) -> None:
        self.verifying = None
        if self._ticker is not None:
            self._ticker.stop()
            self._ticker = None
        if self._apart is not None:
            self._apart.stop()
            self._apart = None

    def _show_verdict(self, rep: VerifyReport | None, refusal: str | None) -> None:
        self._stop_verify()
        msg = self.query_one("#message", Static)
        if rep is None:
            msg.set_class(True, "refusal")
            msg.update(Text(f"verify refused: {refusal}"))
        elif rep.ok:
            msg.set_class(False, "refusal")
            msg.update(Text(f"✓ verified: the chain of {rep.events} events is intact and "
                            "every current row matches its last audited state",
                            style=f"bold {colour(self.app, 'success')}"))
        else:
            msg.set_class(True, "refusal")
            msg.update(Text(f"✖ VERIFY FAILED ({rep.events} events):\n"
                            + "\n".join(f"  {p}" for p in rep.problems),
                            style=f"bold {colour(self.app, 'error')}"))
