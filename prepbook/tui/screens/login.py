"""Signing in at start, and the lock after the idle time.

The app opens on :class:`LoginScreen` (name and passphrase, checked by the same
service as `prepbook login`: each failure recorded, lockouts included). After the lab's
idle time without a key or a click, :class:`LockScreen` covers everything until the
acting person's passphrase is given again.
"""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import Screen
from textual.widgets import Input, Label, Static

from prepbook.errors import PrepbookError


class LoginScreen(Screen[str]):
    """Who is at the keyboard, proven by their passphrase."""

    BINDINGS = [Binding("ctrl+q", "app.quit", "Leave")]

    def __init__(self, name: str | None = None, note: str = "") -> None:
        super().__init__()
        self.given_name = name or ""
        self.note = note
        self.new_needed = False

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog", id="login"):
            yield Label("Sign in to prepbook", classes="dialog-title")
            yield Static("Your name and passphrase. Anything you sign (reviews and other "
                         "signed actions) asks for the passphrase again.", classes="hint")
            yield Input(value=self.given_name, placeholder="name", id="login-name")
            yield Input(password=True, placeholder="passphrase", id="login-secret")
            yield Input(password=True, placeholder="new passphrase (an admin reset yours)",
                        id="login-new", classes="hidden")
            yield Static(self.note, id="login-message", classes="refusal")

    def on_mount(self) -> None:
        self.query_one("#login-new", Input).display = False
        field = "#login-secret" if self.given_name else "#login-name"
        self.query_one(field, Input).focus()

    def say(self, text: str) -> None:
        self.query_one("#login-message", Static).update(text)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        from prepbook.lab import sessions

        name = self.query_one("#login-name", Input).value.strip()
        secret_field = self.query_one("#login-secret", Input)
        new_field = self.query_one("#login-new", Input)
        if event.input.id == "login-name" or not name:
            secret_field.focus()
            return
        if self.new_needed and not new_field.value:
            new_field.focus()
            return
        app = self.app
        os_login, host = sessions.os_account()
        try:
            opened = sessions.login(app.db, name=name,  # type: ignore[attr-defined]
                                    passphrase=secret_field.value, os_login=os_login,
                                    host=host,
                                    new_passphrase=new_field.value if self.new_needed else None)
        except sessions.MustChoose as exc:
            self.new_needed = True
            new_field.display = True
            new_field.focus()
            self.say(str(exc))
            return
        except PrepbookError as exc:
            secret_field.value = ""
            new_field.value = ""
            secret_field.focus()
            self.say(str(exc))
            return
        finally:
            if not self.new_needed:
                secret_field.value = ""
        secret_field.value = new_field.value = ""
        app.signed_in(opened)  # type: ignore[attr-defined]
        self.dismiss(name)


class LockScreen(Screen[None]):
    """The screen hidden after the idle time, until the acting person's passphrase."""

    BINDINGS = [Binding("ctrl+q", "app.quit", "Leave")]

    def __init__(self, name: str) -> None:
        super().__init__()
        self.who = name

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog", id="lock"):
            yield Label(f"Locked: {self.who} was idle", classes="dialog-title")
            yield Static(f"{self.who}'s passphrase unlocks the screen; Ctrl+Q leaves.",
                         classes="hint")
            yield Input(password=True, placeholder="passphrase", id="lock-secret")
            yield Static("", id="lock-message", classes="refusal")

    def on_mount(self) -> None:
        self.query_one("#lock-secret", Input).focus()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        from prepbook.lab import people

        secret = event.value
        event.input.value = ""
        try:
            people.check_signature(self.app.db, name=self.who,  # type: ignore[attr-defined]
                                   passphrase=secret)
        except PrepbookError as exc:
            self.query_one("#lock-message", Static).update(str(exc))
            return
        self.dismiss(None)
