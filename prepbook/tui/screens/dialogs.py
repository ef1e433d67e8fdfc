"""Small modal dialogs: a passphrase, a few fields, a yes/no, help."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static

from prepbook.tui.work_time import WorkTime


class PassphraseScreen(ModalScreen[str | None]):
    """A passphrase for one signed action: never echoed, never kept after it is used."""

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, who: str, doing: str) -> None:
        super().__init__()
        self.who, self.doing = who, doing

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog", id="sign"):
            yield Label(f"Sign as {self.who}", classes="dialog-title")
            yield Static(self.doing, classes="hint")
            yield Input(password=True, placeholder="passphrase", id="secret")
            yield Static("Enter signs; Escape cancels. The passphrase is not shown or stored.",
                         classes="hint")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        secret = event.value
        event.input.value = ""
        self.dismiss(secret)

    def action_cancel(self) -> None:
        self.query_one("#secret", Input).value = ""
        self.dismiss(None)


class FieldsScreen(ModalScreen[dict[str, str] | None]):
    """A few labelled text fields (a reason, a volume used ...). With ``when`` (a label and
    what the time is called), also when the work was done and, for a late entry, why:
    the values then hold "at" and "late_reason" (blank: now, or not late)."""

    BINDINGS = [Binding("escape", "cancel", "Cancel"), Binding("ctrl+s", "done", "Done")]
    AUTO_FOCUS = "Input"  # the first field, not the scrolling frame around them

    def __init__(self, title: str, fields: list[tuple[str, str, str]], note: str = "",
                 required: tuple[str, ...] = (), when: tuple[str, str] | None = None) -> None:
        super().__init__()
        self.title_text, self.fields, self.note, self.required = title, fields, note, required
        self.when = when

    def compose(self) -> ComposeResult:
        with VerticalScroll(classes="dialog"):  # scrolls on a small terminal
            yield Label(self.title_text, classes="dialog-title")
            if self.note:
                yield Static(self.note, classes="hint")
            for key, label, placeholder in self.fields:
                yield Label(label)
                yield Input(placeholder=placeholder, id=f"f-{key}")
            if self.when is not None:
                yield WorkTime(*self.when, wid="f-at", stacked=True)
            yield Static("", id="fields-message", classes="refusal")
            yield Static("Enter in the last field or Ctrl+S: done; Escape: cancel.",
                         classes="hint")

    def on_input_submitted(self, event: Input.Submitted) -> None:
        shown = [w for w in self.focus_chain if isinstance(w, Input)]
        if shown and event.input is shown[-1]:
            self.action_done()
        else:
            self.focus_next()

    def action_done(self) -> None:
        values = {k: self.query_one(f"#f-{k}", Input).value for k, _, _ in self.fields}
        missing = [f"{label} is required" for k, label, _ in self.fields
                   if k in self.required and not values[k].strip()]
        if self.when is not None:
            when = self.query_one(WorkTime)
            late = when.check()
            missing += [late] if late else []
            values |= {"at": when.at or "", "late_reason": when.reason or ""}
        if missing:
            self.query_one("#fields-message", Static).update(missing[0])
            return
        self.dismiss(values)

    def action_cancel(self) -> None:
        self.dismiss(None)


class ConfirmScreen(ModalScreen[bool]):
    BINDINGS = [Binding("y", "yes", "Yes"), Binding("n,escape", "no", "No")]

    def __init__(self, question: str) -> None:
        super().__init__()
        self.question = question

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(self.question)
            yield Button("Yes (y)", id="yes", variant="warning")
            yield Button("No (n)", id="no")

    def on_button_pressed(self, event: Button.Pressed) -> None:
        self.dismiss(event.button.id == "yes")

    def action_yes(self) -> None:
        self.dismiss(True)

    def action_no(self) -> None:
        self.dismiss(False)


HELP = """\
[b]prepbook, full screen[/b]  -  keys work where the footer shows them.

[b]Everywhere[/b]  ? this help   q leave   Escape back / cancel   Tab next field
              t light or dark colours   Ctrl+P commands

[b]Board[/b]  Enter open the batch   / find a batch code   s standardize it
        n prepare a new batch   r review desk   a audit trail   Ctrl+R reload now
        The spec and state lists filter the board. It reloads by itself when
        anyone writes to the record (checked every few seconds).

[b]Batch[/b]  1 chain  2 trend  3 audit events   s standardize   u record a use
        and, where installed: l label   e report   x retire

[b]Recording a standardization[/b]  type each replicate's mass (g) of primary
        standard, or aliquot (mL), and titrant volume (mL); each is checked as
        typed and the result, RSD, uncertainty and every acceptance check follow.
        Ctrl+B reads the row's mass from the run's balance (a stable net reading;
        its printed line is kept), Ctrl+T attaches the row's titration curve file
        (no volume typed: the curve's endpoint; one typed: checked against it).
        Ctrl+N adds a replicate row, Ctrl+S records the run (it then awaits a
        second person's review).

[b]Time of the work[/b]  blank means now, else YYYY-MM-DDTHH:MM in lab time.
        Entered more than the lab's late-entry hours after the work, it needs
        a reason: the field for it appears, and nothing is recorded without it.

[b]Preparing a batch[/b]  the calculator shows what to weigh, measure or dilute;
        Ctrl+S records the batch.

[b]Review desk[/b]  a accept   x reject (with a reason); both are signed with
        your passphrase. Nobody reviews their own run.

[b]Audit[/b]  filter by record (batches#3, runs), actor and dates; Enter applies;
        m older events; v verify the chain and the current rows.

[b]States[/b]  ✖ EXPIRED  ! DUE (restandardize)  ? to review  + new (never
        standardized)  ✓ in service  - retired.  Checks: ✓ passed, ✖ FAILED
        (blocks acceptance), ! warning.

[b]Safety[/b]  the cautions shown are reminders only: follow the substance's
safety data sheet, local regulations and your laboratory's own procedures.

Shown numbers are rounded for reading; the record keeps every digit and each
reading exactly as typed.
"""


class HelpScreen(ModalScreen[None]):
    BINDINGS = [Binding("escape,question_mark,q", "close", "Close")]

    def compose(self) -> ComposeResult:
        with VerticalScroll(classes="dialog", id="help"):
            yield Static(HELP)

    def action_close(self) -> None:
        self.dismiss(None)
