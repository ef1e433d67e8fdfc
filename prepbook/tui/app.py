"""The app: who is acting, the screen stack, and noticing writes by others."""

from __future__ import annotations

import time
from typing import Any

from textual import events
from textual.app import App
from textual.binding import Binding
from textual.theme import Theme

from prepbook.errors import PrepbookError
from prepbook.lab.database import Database

# Our own palette: slate and teal with amber, one dark and one light.
THEMES = (
    Theme(name="prepbook-dark", dark=True, primary="#4fa3a5", secondary="#b58bd6",
          accent="#e0a84e", warning="#e3b341", error="#ef6f6c", success="#7cc47f",
          foreground="#dfe4ea", background="#14181d", surface="#1b2129", panel="#23303a"),
    Theme(name="prepbook-light", dark=False, primary="#1d6f72", secondary="#74479b",
          accent="#9a5b00", warning="#8a6100", error="#b3261e", success="#2e7d32",
          foreground="#1b1f24", background="#f7f5f0", surface="#efece4", panel="#dfe6e6"),
)


class PrepbookApp(App[None]):
    """prepbook full screen: the board and everything reached from it."""

    CSS_PATH = "styles.tcss"
    TITLE = "prepbook"
    ENABLE_COMMAND_PALETTE = True
    BINDINGS = [
        Binding("q", "leave", "Leave"),
        Binding("question_mark", "help", "Help"),
        Binding("t", "toggle_dark", "Light/dark", show=False),
    ]

    def __init__(self, db: Database, *, user: str | None = None, poll_seconds: float = 3.0,
                 session: Any = None, idle_seconds: float | None = None,
                 **kw: Any) -> None:
        """``user`` fills in the name on the sign-in screen; ``session``, a sign-in already
        made (``prepbook.lab.sessions.login``, passphrase checked), skips that screen.
        ``idle_seconds``: the lock's idle time, else the lab's session_idle_minutes."""
        super().__init__(**kw)
        self.db = db
        self.actor: str | None = None
        self.role: str | None = None
        self.poll_seconds = poll_seconds
        self._head: int | None = None
        self._given = (user, session)
        self._token: str | None = None
        self.idle_seconds = idle_seconds
        self._last_input = time.monotonic()

    # -- start ------------------------------------------------------------------------
    def on_mount(self) -> None:
        from prepbook.lab import watch
        from prepbook.tui.screens.board import BoardScreen
        from prepbook.tui.screens.login import LoginScreen

        for theme in THEMES:
            self.register_theme(theme)
        self.theme = "prepbook-dark"
        self._head = watch.head_seq(self.db)
        user, session = self._given
        self._given = (user, None)
        if session is not None:
            self._take(session)
        self.push_screen(BoardScreen())
        if session is None:
            self.push_screen(LoginScreen(user))
        if self.poll_seconds > 0:
            self.set_interval(self.poll_seconds, self.check_for_changes)
        self.set_interval(1.0, self.lock_when_idle)
        # After the first frame: the first computation's imports and a settled heap.
        from prepbook.tui.warm_up import warm_up

        self.call_after_refresh(warm_up)

    # -- who is acting ------------------------------------------------------------------
    def signed_in(self, opened: Any) -> None:
        """A sign-in succeeded: this person acts until the app ends."""
        self._take(opened)
        self.wrote()  # the login is an audit event of this app's own

    def _take(self, opened: Any) -> None:
        self.actor, self.role = opened.session.user, opened.session.role
        self._token = opened.token
        if self.idle_seconds is None:
            from datetime import datetime

            idle = (datetime.fromisoformat(opened.session.idle_until)
                    - datetime.fromisoformat(opened.session.last_seen_at))
            self.idle_seconds = max(60.0, idle.total_seconds())
        self._last_input = time.monotonic()

    async def on_event(self, event: events.Event) -> None:
        if isinstance(event, events.Key | events.MouseDown):
            self._last_input = time.monotonic()
        await super().on_event(event)

    def lock_when_idle(self) -> bool:
        """Lock the screen after the idle time without a key or a click; True if it did."""
        from prepbook.tui.screens.login import LockScreen, LoginScreen

        if self.actor is None or self.idle_seconds is None:
            return False
        if not self.screen_stack:  # the app is closing: its timer may tick once more
            return False
        if isinstance(self.screen, LockScreen | LoginScreen):
            return False
        if time.monotonic() - self._last_input < self.idle_seconds:
            return False
        self.push_screen(LockScreen(self.actor), lambda _: self._unlocked())
        return True

    def _unlocked(self) -> None:
        self._last_input = time.monotonic()

    # -- others writing -----------------------------------------------------------------
    def check_for_changes(self) -> bool:
        """Reload the screens if anyone wrote since the last look (cheap: one row)."""
        from prepbook.lab import watch

        try:
            head = watch.head_seq(self.db)
        except PrepbookError:
            return False
        if head == self._head:
            return False
        self._head = head
        self.refresh_screens()
        return True

    def refresh_screens(self) -> None:
        for screen in self.screen_stack:
            reload = getattr(screen, "reload", None)
            if callable(reload):
                reload()

    def wrote(self) -> None:
        """Called after this app wrote: take the new head and reload at once."""
        self._head = None
        self.check_for_changes()

    # -- keys ---------------------------------------------------------------------------
    def action_help(self) -> None:
        from prepbook.tui.screens.dialogs import HelpScreen

        if not isinstance(self.screen, HelpScreen):
            self.push_screen(HelpScreen())

    def action_toggle_dark(self) -> None:
        self.theme = "prepbook-light" if self.theme == "prepbook-dark" else "prepbook-dark"
        self.refresh_screens()

    def action_leave(self) -> None:
        from prepbook.tui.screens.dialogs import ConfirmScreen

        unsaved = [s for s in self.screen_stack if getattr(s, "unsaved", lambda: False)()]
        if not unsaved:
            self.exit()
            return

        def answer(yes: bool | None) -> None:
            if yes:
                self.exit()

        self.push_screen(ConfirmScreen("Readings typed on the recording form are not "
                                       "recorded yet. Leave anyway (they are lost)?"), answer)

    def who(self) -> str:
        if self.actor is None:
            return "nobody yet"
        return f"{self.actor} ({self.role})" if self.role else self.actor
