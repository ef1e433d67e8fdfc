"""When a form's work was done: a time in lab time and, for a late entry, its reason.

Every form that records work (a run, a batch made, a use, an assay) takes the time as
the command line's ``--at`` does: blank means now, else ``YYYY-MM-DDTHH:MM`` in the
lab's zone. Work entered more than the lab's ``late_entry_hours`` after it was done
needs a reason (the command line's ``--reason``): the reason field appears then, and
the form refuses to record without it. The service (``lab.common.work_time``) checks
the same again when it records; the form only says it earlier, in its own words.
"""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical
from textual.widgets import Input, Label, Static

from prepbook.clock import LabClock
from prepbook.errors import PrepbookError
from prepbook.inputs import parse_datetime, utc_now
from prepbook.tui.widgets import lab_clock

PLACEHOLDER = "now, or YYYY-MM-DDTHH:MM (lab time)"


class WorkTime(Vertical):
    """The time field (``#ID``), the late entry's reason (``#ID-reason``, shown only when
    the time is late) and a line saying what the typed time is (``#ID-note``).

    ``stacked`` puts each label above its field (for the small dialogs)."""

    DEFAULT_CSS = """
    WorkTime { height: auto; }
    WorkTime .stacked { height: auto; }
    WorkTime .late-reason { display: none; }
    WorkTime.late .late-reason { display: block; }
    WorkTime .work-note { height: auto; color: $foreground-muted; text-style: italic; }
    WorkTime .work-note.refusal { color: $error; text-style: bold; }
    """

    def __init__(self, label: str, what: str, *, wid: str = "at", stacked: bool = False
                 ) -> None:
        super().__init__(id=f"{wid}-when")
        self.label, self.what, self.wid, self.stacked = label, what, wid, stacked
        self.is_late = False

    def compose(self) -> ComposeResult:
        compact = not self.stacked  # a dialog's fields have their borders
        rows = ((self.label, Input(placeholder=PLACEHOLDER, id=self.wid, compact=compact), ""),
                ("why entered late", Input(placeholder="required for a late entry",
                                           id=f"{self.wid}-reason", compact=compact),
                 "late-reason"))
        for label, field, kind in rows:
            if self.stacked:
                with Vertical(classes=f"stacked {kind}".strip()):
                    yield Label(label)
                    yield field
            else:
                with Horizontal(classes=f"field {kind}".strip()):
                    yield Label(label, classes="field-label")
                    yield field
        yield Static("", id=f"{self.wid}-note", classes="work-note")

    @property
    def clock(self) -> LabClock:
        return lab_clock(self.app)

    @property
    def at(self) -> str | None:
        """The time as typed (None: now)."""
        return self.query_one(f"#{self.wid}", Input).value.strip() or None

    @property
    def reason(self) -> str | None:
        """The late entry's reason; None unless the time typed is late (a reason typed
        for a time since changed to a timely one is not recorded)."""
        if not self.is_late:
            return None
        return self.query_one(f"#{self.wid}-reason", Input).value.strip() or None

    def check(self) -> str | None:
        """Read the typed time again, show or hide the reason, and say what is wrong:
        the one line a refusal shows, or None."""
        note = self.query_one(f"#{self.wid}-note", Static)
        note.remove_class("refusal")
        text = self.at
        self._late(False)
        if text is None:
            note.update("")
            return None
        clk = self.clock
        try:
            moment = parse_datetime(text, self.what, clk.zone)
        except PrepbookError as exc:
            note.add_class("refusal")
            note.update(str(exc))
            return str(exc)
        now = utc_now()
        if moment > now:
            problem = f"{self.what} {clk.shown(moment)} is in the future"
            note.add_class("refusal")
            note.update(problem)
            return problem
        if not clk.late(moment, now):
            note.update(f"{clk.shown(moment)} (lab time)")
            return None
        self._late(True)
        hours = int((now - moment).total_seconds() // 3600)
        limit = int(clk.late_after.total_seconds() // 3600)
        said = (f"{clk.shown(moment)}: entered {hours} h after the work, more than the lab's "
                f"{limit} h, a late entry")
        if self.reason is None:
            note.add_class("refusal")
            note.update(f"{said}; say why it is entered only now")
            return (f"{self.what} {clk.shown(moment)} is {hours} h ago, more than the lab's "
                    f"{limit} h: a late entry needs a reason (type it under 'why entered "
                    "late')")
        note.update(said)
        return None

    def _late(self, late: bool) -> None:
        self.is_late = late
        self.set_class(late, "late")

    def on_input_changed(self, event: Input.Changed) -> None:
        self.check()  # the event goes on to the form, which previews again

    def disable(self) -> None:
        for field in self.query(Input):
            field.disabled = True
