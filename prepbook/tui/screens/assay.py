"""Titrating a sample with a batch: the form, the titrant volumes and the live result.

As on the standardization form, each reading is checked as it is typed
(``inputs.parse_number``) and the running result is the service itself called with
``record=False`` (``lab.assays.assay``), so the preview and the record cannot
disagree. Ctrl+S records through the same call with ``record=True``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from rich.console import Group
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import Screen
from textual.timer import Timer
from textual.widgets import Input, Label, Select, Static

from prepbook.errors import PrepbookError
from prepbook.inputs import parse_number
from prepbook.records import as_data
from prepbook.tui import words
from prepbook.tui.screens.common import LIVE_DELAY_S, budget_table
from prepbook.tui.screens.record_view import problems_text
from prepbook.tui.widgets import KeyLine, colour
from prepbook.tui.work_time import WorkTime

if TYPE_CHECKING:
    from prepbook.lab.assays import AssayResult

START_ROWS = 3
# The form's text fields: widget id, label, placeholder.
FIELDS = (("sample", "sample ID", "as on the sample's container"),
          ("analyte", "analyte", "e.g. acetic-acid, chloride, hardness"),
          ("method", "method", "the analyte's default"),
          ("amount", "amount", "mL of sample, or g with 'weighed'"),
          ("blank", "blank mL", "0"),
          ("temp", "temperature °C", "20"),
          ("limit", "limit", "LOW:HIGH in the reported unit (optional)"))


class AssayScreen(Screen[None]):
    BINDINGS = [
        Binding("escape", "back", "Back"),
        Binding("ctrl+s", "submit", "Record assay"),
        Binding("ctrl+n", "add_row", "Add titration"),
    ]

    def __init__(self, code: str) -> None:
        super().__init__()
        self.code = code
        self.rows = 0
        self.recorded: str | None = None
        self.last: AssayResult | None = None
        self._timer: Timer | None = None

    def compose(self) -> ComposeResult:
        yield Static(Text.assemble(("prepbook ", "bold"), "assay with  ", (self.code, "bold")),
                     id="topline", classes="topline")
        with Horizontal(id="record"):
            with VerticalScroll(id="record-form"):
                yield Label("sample", classes="section")
                for wid, label, hint in FIELDS:
                    with Horizontal(classes="field"):
                        yield Label(label, classes="field-label")
                        if wid == "amount":
                            yield Select([("aliquot (mL)", "aliquot"), ("weighed (g)", "mass")],
                                         value="aliquot", allow_blank=False, id="kind",
                                         compact=True)
                        yield Input(placeholder=hint, id=wid, compact=True)
                yield WorkTime("performed", "assay time")
                yield Label("titrant volumes at the endpoint", classes="section")
                with Vertical(id="grid"):
                    for _ in range(START_ROWS):
                        self.rows += 1
                        yield self._row(self.rows)
                yield Static("Ctrl+N adds a titration; Ctrl+S records.", classes="hint")
            with VerticalScroll(id="record-live"):
                yield Static("", id="live")
        yield KeyLine()

    def _row(self, i: int) -> Horizontal:
        return Horizontal(Label(str(i), classes="rep-n"),
                          Input(placeholder="mL", id=f"v{i}", classes="rep-cell", compact=True),
                          Static("", id=f"note{i}", classes="rep-note"),
                          id=f"row{i}", classes="rep-row")

    def on_mount(self) -> None:
        self.query_one("#sample", Input).focus()
        self.preview()

    def action_add_row(self) -> None:
        self.rows += 1
        self.query_one("#grid", Vertical).mount(self._row(self.rows))

    def volumes(self) -> tuple[list[str], list[str]]:
        """The titrant volumes as typed, and what is wrong with any of them."""
        reps: list[str] = []
        problems: list[str] = []
        for i in range(1, self.rows + 1):
            field = self.query_one(f"#v{i}", Input)
            note = self.query_one(f"#note{i}", Static)
            text = field.value.strip()
            field.remove_class("bad")
            note.update("")
            if not text:
                continue
            try:
                parse_number(text, f"replicate {i} titrant volume (mL)", positive=True)
            except PrepbookError as exc:
                field.add_class("bad")
                note.update(Text(f"✖ {exc}", style=colour(self.app, "error"), no_wrap=True,
                                 overflow="ellipsis"))
                problems.append(str(exc))
                continue
            reps.append(text)
        return reps, problems

    def kwargs(self, reps: list[str]) -> dict[str, Any]:
        value = {wid: self.query_one(f"#{wid}", Input).value.strip() or None
                 for wid, _, _ in FIELDS}
        kind = self.query_one("#kind", Select).value
        when = self.query_one(WorkTime)
        return {"actor": self.app.actor or "", "batch": self.code,  # type: ignore[attr-defined]
                "sample": value["sample"] or "", "analyte": value["analyte"] or "",
                "reaction": value["method"], "replicates": reps,
                "aliquot": value["amount"] if kind == "aliquot" else None,
                "mass": value["amount"] if kind == "mass" else None,
                "blank": value["blank"], "temperature": value["temp"],
                "limit": value["limit"], "at": when.at, "late_reason": when.reason}

    def on_input_changed(self, event: Input.Changed) -> None:
        self.schedule()

    def on_select_changed(self, event: Select.Changed) -> None:
        self.schedule()

    def schedule(self) -> None:
        if self._timer is not None:
            self._timer.stop()
        self._timer = self.set_timer(LIVE_DELAY_S, self.preview)

    def preview(self) -> None:
        from prepbook.lab import assays

        if self.recorded:
            return
        reps, problems = self.volumes()
        live = self.query_one("#live", Static)
        self.last = None
        late = self.query_one(WorkTime).check()
        if late:
            live.update(problems_text(self.app, "cannot compute yet", [*problems, late]))
            return
        if not reps:
            live.update(problems_text(self.app, "the volumes need attention", problems) if problems
                        else Text("Name the sample, the analyte and the amount, then type "
                                  "the titrant volumes: the running result, its uncertainty "
                                  "and the limit appear here.", style="italic"))
            return
        try:
            res = assays.assay(self.app.db, **self.kwargs(reps), record=False)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            live.update(problems_text(self.app, "cannot compute yet", [*problems, str(exc)]))
            return
        self.last = res
        parts = [problems_text(self.app, "the volumes need attention", problems)] \
            if problems else []
        live.update(Group(*parts, self._result(res, "running result (not recorded yet)")))

    def _result(self, res: AssayResult, title: str) -> Group:
        c = res.computed
        lines: list[str | tuple[str, str]] = [
            (f"{title}\n", "bold"),
            f"  sample {res.sample}: ",
            (f"{words.sig(res.result)} {res.unit}", "bold"),
            f"   RSD {words.sig(c.rsd_percent, 3)} %   n = {len(c.replicates)}\n",
            f"  u = {words.sig(c.u, 2)}   U = {words.sig(c.U, 2)} (k = {words.sig(c.k, 2)})\n",
            f"  titrant {res.batch}: {words.sig(res.titrant_normality)} eq/L at "
            f"{res.temperature_c:g} °C (run {res.run})\n",
        ]
        if res.within_limit is not None:
            ok = "within the limit" if res.within_limit else "OUTSIDE the limit"
            tone = colour(self.app, "success" if res.within_limit else "error")
            lines.append((f"  {ok}\n", f"bold {tone}".strip()))
        notes = Text("".join(f"  note: {w}\n" for w in (*c.warnings, *c.uncertainty_notes)))
        return Group(Text.assemble(*lines), notes, Text("uncertainty budget", style="bold"),
                     budget_table([as_data(line) for line in c.budget]))

    def action_submit(self) -> None:
        from prepbook.lab import assays

        if self._timer is not None:
            self._timer.stop()
            self._timer = None
        live = self.query_one("#live", Static)
        if self.recorded:
            live.update(Text(f"already recorded as assay {self.recorded}; Escape goes back"))
            return
        reps, problems = self.volumes()
        if not reps and not problems:
            problems = ["type at least one titrant volume"]
        late = self.query_one(WorkTime).check()
        if late:
            problems.append(late)
        if problems:
            live.update(problems_text(self.app, "not recorded: nothing was written", problems))
            return
        try:
            res = assays.assay(self.app.db, **self.kwargs(reps), record=True)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            live.update(problems_text(self.app, "not recorded: nothing was written", [str(exc)]))
            return
        self.recorded = res.assay
        for field in self.query(Input):
            field.disabled = True
        live.update(self._result(res, f"recorded as assay {res.assay}"))
        self.app.notify(f"assay {res.assay} recorded", title="recorded")
        self.app.wrote()  # type: ignore[attr-defined]

    def action_back(self) -> None:
        from prepbook.tui.screens.dialogs import ConfirmScreen

        typed = any(self.query_one(f"#v{i}", Input).value.strip()
                    for i in range(1, self.rows + 1))
        if self.recorded or not typed:
            self.app.pop_screen()
            return

        def answer(yes: bool | None) -> None:
            if yes:
                self.app.pop_screen()

        self.app.push_screen(ConfirmScreen("The volumes typed here are not recorded. "
                                           "Go back and lose them?"), answer)
