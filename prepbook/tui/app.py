"""The app: who is acting, the screen stack, and noticing writes by others."""

from __future__ import annotations

from typing import Any

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
                 **kw: Any) -> None:
        super().__init__(**kw)
        self.db = db
        self.actor: str | None = user
        self.role: str | None = None
        self.poll_seconds = poll_seconds
        self._head: int | None = None

    # -- start ------------------------------------------------------------------------
    def on_mount(self) -> None:
        from prepbook.lab import people, watch
        from prepbook.tui.screens.board import BoardScreen
        from prepbook.tui.screens.dialogs import WhoScreen

        for theme in THEMES:
            self.register_theme(theme)
        self.theme = "prepbook-dark"
        self._head = watch.head_seq(self.db)
        self.push_screen(BoardScreen())
        users = people.list_users(self.db)
        known = {u.name: u for u in users if u.active}
        if self.actor in known:
            self.role = known[self.actor].role
        else:
            note = (f"{self.actor!r} is not an active user of this database."
                    if self.actor else "")
            self.actor = None
            self.push_screen(WhoScreen(users, note), self._set_actor)
        if self.poll_seconds > 0:
            self.set_interval(self.poll_seconds, self.check_for_changes)

    def _set_actor(self, name: str | None) -> None:
        from prepbook.lab import people

        roles = {u.name: u.role for u in people.list_users(self.db)}
        self.actor = name
        self.role = roles.get(name or "")
        self.refresh_screens()

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
