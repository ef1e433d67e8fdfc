"""Recording a standardization: the form, the replicate grid and the live result.

Every reading is checked as it is typed (``inputs.parse_number``, the parser the
service uses); the running result is the service itself called with
``record=False``, so the preview and the record can never disagree. Recording goes
through the same call with ``record=True``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from rich.console import Group
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.timer import Timer
from textual.widgets import Input, Label, Select, Static

from prepbook.errors import PrepbookError
from prepbook.inputs import parse_number
from prepbook.tui import words
from prepbook.tui.screens.common import LIVE_DELAY_S
from prepbook.tui.screens.record_sources import MARK_HELP, InstrumentRows
from prepbook.tui.screens.record_view import problems_text, result_view, short
from prepbook.tui.widgets import KeyLine, colour, state_cell
from prepbook.tui.work_time import WorkTime

if TYPE_CHECKING:
    from prepbook.inputs import ReplicateEntry
    from prepbook.lab.batch_records import BatchRecord
    from prepbook.lab.runs import RunResult

START_ROWS = 3


class RecordScreen(InstrumentRows):
    BINDINGS = [
        Binding("escape", "back", "Back"),
        Binding("ctrl+s", "submit", "Record run"),
        Binding("ctrl+n", "add_row", "Add replicate"),
        Binding("ctrl+d", "drop_row", "Drop last empty row"),
    ]

    def __init__(self, code: str) -> None:
        super().__init__()
        self.code = code
        self.recorded: str | None = None
        self.last: RunResult | None = None
        self._timer: Timer | None = None
        self.chain: BatchRecord | None = None

    # -- layout ---------------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        yield Static("", id="topline", classes="topline")
        with Horizontal(id="record"):
            with VerticalScroll(id="record-form"):
                yield Label("how", classes="section")
                yield from self._field("standard", Select([], prompt="lot or reference batch",
                                                          id="source", compact=True))
                yield from self._field("balance", Select([], prompt="none named", id="balance",
                                                         compact=True))
                yield from self._field("burette", Select([], prompt="none named", id="burette",
                                                         compact=True))
                yield from self._field("temperature °C", Input(
                    placeholder="as measured (required)", id="temp", compact=True))
                yield from self._field("blank mL", Input(placeholder="0", id="blank", compact=True))
                yield from self._field("indicator", Input(id="indicator", compact=True))
                yield WorkTime("performed", "standardization time")
                yield Label("replicates", classes="section")
                with Horizontal(classes="grid-head"):
                    yield Label("#", classes="rep-n")
                    yield Label("src", classes="rep-src")
                    yield Label("mass g", id="amount-head", classes="rep-cell")
                    yield Label("titrant mL", classes="rep-cell")
                    yield Label("N (eq/L) or what is wrong", classes="rep-note")
                with Vertical(id="grid"):
                    for _ in range(START_ROWS):
                        self.rows += 1
                        yield self._row(self.rows)
                yield Static("", id="reading", classes="hint")
                yield Static("Ctrl+B reads the balance into a row, Ctrl+T attaches a curve "
                             f"file; Ctrl+N adds a row; Ctrl+S records. {MARK_HELP}",
                             classes="hint")
            with VerticalScroll(id="record-live"):
                yield Static("", id="live")
        yield KeyLine()

    @staticmethod
    def _field(label: str, widget: Any) -> ComposeResult:
        with Horizontal(classes="field"):
            yield Label(label, classes="field-label")
            yield widget

    def on_mount(self) -> None:
        from prepbook.lab import batches, instruments, lots, specs

        db = self.app.db  # type: ignore[attr-defined]
        try:
            self.chain = chain = batches.show_batch(db, self.code)
        except PrepbookError as exc:
            self.query_one("#live", Static).update(Text(str(exc)))
            return
        spec = next((s for s in specs.list_specs(db) if s.code == chain.spec), None)
        standard = spec.standard if spec else None
        lot_rows = sorted(lots.list_lots(db), key=lambda lt: (lt.material != standard,
                                                              lt.expired, lt.code))
        options: list[tuple[str, str]] = [
            (f"lot {lt.code} · {lt.material} {lt.purity_percent} %"
             + (" · EXPIRED" if lt.expired else f" · expires {lt.expires}"),
             f"lot:{lt.code}") for lt in lot_rows]
        from prepbook.lab import board

        options += [(f"against batch {it.batch} · N {words.sig(it.normality)}",
                     f"batch:{it.batch}") for it in board.board(db)
                    if it.state in ("in-service", "due") and it.batch != self.code]
        src = self.query_one("#source", Select)
        src.set_options(options)
        first = next((v for _, v in options if v.startswith("lot:") and standard
                      and any(lt.code == v[4:] and lt.material == standard
                              and not lt.expired for lt in lot_rows)), None)
        if first:
            src.value = first
        ins = instruments.list_instruments(db)
        for kind in ("balance", "burette"):
            rows = [i for i in ins if i.kind == kind]
            self.query_one(f"#{kind}", Select).set_options(
                [(f"{i.code}" + (" · calibration OVERDUE" if i.overdue
                                 else f" · due {i.due}"), i.code) for i in rows])
            live = [i for i in rows if not i.overdue]
            if len(live) >= 1:
                self.query_one(f"#{kind}", Select).value = live[0].code
        if spec and spec.indicator:
            self.query_one("#indicator", Input).value = spec.indicator
        from prepbook.lab import runs

        last = runs.last_temperature(db, self.code)  # offered, to be checked and kept or typed
        if last is not None:
            self.query_one("#temp", Input).value = last
        self.query_one("#topline", Static).update(Text.assemble(
            ("prepbook ", "bold"), "standardize  ", (self.code, "bold"),
            f"  {chain.spec_name}  ", state_cell(self.app, chain.state),
            f"  ·  standard {standard or '-'}  ·  acting as {self.app.who()}"))  # type: ignore[attr-defined]
        self.query_one("#m1", Input).focus()
        self.preview()

    # -- the grid -------------------------------------------------------------------------------
    def _row(self, i: int) -> Horizontal:
        return Horizontal(Label(str(i), classes="rep-n"),
                          Static("", id=f"src{i}", classes="rep-src"),
                          Input(placeholder=self._amount_name(), id=f"m{i}",
                                classes="rep-cell", compact=True),
                          Input(placeholder="mL", id=f"v{i}", classes="rep-cell",
                                compact=True),
                          Static("", id=f"note{i}", classes="rep-note"),
                          id=f"row{i}", classes="rep-row")

    def action_add_row(self) -> None:
        self.rows += 1
        self.query_one("#grid", Vertical).mount(self._row(self.rows))

    def action_drop_row(self) -> None:
        if self.rows <= 1:
            return
        i = self.rows
        if self.mass(i) or self.volume(i) or i in self.curves:
            self.say("the last row has readings or a curve; clear them first (nothing is "
                     "dropped silently)")
            return
        self.query_one(f"#row{i}").remove()
        self.rows -= 1
        self.schedule()

    def _secondary(self) -> bool:
        v = self.query_one("#source", Select).value
        return isinstance(v, str) and v.startswith("batch:")

    def _amount_name(self) -> str:
        return "aliquot mL" if self._mounted_secondary() else "g"

    def _mounted_secondary(self) -> bool:
        try:
            return self._secondary()
        except Exception:
            return False

    def check_cell(self, widget: Input) -> str | None:
        """Check one reading as typed; the message, or None when it reads well."""
        wid = widget.id or ""
        if wid[:1] not in "mv" or not wid[1:].isdigit():
            return None
        i = int(wid[1:])
        text = widget.value
        if not text.strip():
            widget.remove_class("bad")
            return None
        what = (f"replicate {i} " + ("aliquot (mL)" if self._secondary() else "mass (g)")
                if wid[0] == "m" else f"replicate {i} titrant volume (mL)")
        try:
            parse_number(text, what, positive=True)
        except PrepbookError as exc:
            widget.add_class("bad")
            return str(exc)
        widget.remove_class("bad")
        return None

    def entries(self) -> tuple[list[str | ReplicateEntry], list[str], list[str]]:
        """Replicates as the service takes them ('MASS:VOL' when typed, an entry with its
        weighing or curve), what is wrong, and rows still half typed."""
        reps: list[str | ReplicateEntry] = []
        problems: list[str] = []
        waiting: list[str] = []
        amount_name = "aliquot (mL)" if self._secondary() else "mass (g)"
        for i in range(1, self.rows + 1):
            m, v = self.query_one(f"#m{i}", Input), self.query_one(f"#v{i}", Input)
            bad = [p for p in (self.check_cell(m), self.check_cell(v)) if p]
            note = self.query_one(f"#note{i}", Static)
            note.update(short(self.app, bad[0]) if bad else "")
            problems += bad
            if bad:
                continue
            if self._complete(i):
                try:
                    reps.append(self.item(i, amount_name))
                except PrepbookError as exc:
                    problems.append(str(exc))
                    note.update(short(self.app, str(exc)))
            elif self.mass(i) or self.volume(i) or i in self.curves:
                missing = "titrant volume" if self.mass(i) else "amount"
                waiting.append(f"replicate {i} has no {missing} yet")
                note.update(Text(f"waiting for the {missing}", style="italic"))
        return reps, problems, waiting

    def kwargs(self, reps: list[str | ReplicateEntry]) -> dict[str, Any]:
        src = self.query_one("#source", Select).value
        kw: dict[str, Any] = {"actor": self.app.actor or "",  # type: ignore[attr-defined]
                              "batch": self.code, "replicates": reps}
        if isinstance(src, str):
            kind, _, code = src.partition(":")
            kw["lot" if kind == "lot" else "against"] = code
        for key in ("balance", "burette"):
            val = self.query_one(f"#{key}", Select).value
            kw[key] = val if isinstance(val, str) else None
        if kw.get("against"):
            kw["balance"] = None  # a secondary standardization weighs nothing
        for key, wid in (("temperature", "temp"), ("blank", "blank"),
                         ("indicator", "indicator")):
            val = self.query_one(f"#{wid}", Input).value.strip()
            kw[key] = val or None
        when = self.query_one(WorkTime)
        kw["at"], kw["late_reason"] = when.at, when.reason
        return kw

    # -- live result ----------------------------------------------------------------------------
    def on_input_changed(self, event: Input.Changed) -> None:
        wid = event.input.id or ""
        if wid[:1] in "mv" and wid[1:].isdigit():
            i = wid[1:]  # the row's note tells what is wrong with either of its readings
            if wid[0] == "m":
                self.typed_over(int(i))
            bad = [p for p in (self.check_cell(self.query_one(f"#m{i}", Input)),
                               self.check_cell(self.query_one(f"#v{i}", Input))) if p]
            self.query_one(f"#note{i}", Static).update(short(self.app, bad[0]) if bad else "")
        self.schedule()

    def on_select_changed(self, event: Select.Changed) -> None:
        if event.select.id == "source":
            head = "aliquot mL" if self._secondary() else "mass g"
            self.query_one("#amount-head", Label).update(head)
        self.schedule()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        wid = event.input.id or ""
        if wid.startswith("v") and wid[1:].isdigit() and int(wid[1:]) == self.rows:
            self.action_add_row()
            self.call_after_refresh(lambda: self.query_one(f"#m{self.rows}", Input).focus())
        else:
            self.focus_next()

    def schedule(self) -> None:
        if self._timer is not None:
            self._timer.stop()
        self._timer = self.set_timer(LIVE_DELAY_S, self.preview)

    def preview(self) -> None:
        from prepbook.lab import runs

        if self.recorded or self.chain is None:
            return
        reps, problems, waiting = self.entries()
        late = self.query_one(WorkTime).check()
        live = self.query_one("#live", Static)
        self.last = None
        if late:
            live.update(problems_text(self.app, "cannot compute yet",
                                      problems + waiting + [late]))
            return
        if not reps:
            if problems or waiting:
                live.update(problems_text(self.app, "the readings need attention",
                                          problems + waiting))
            else:
                live.update(Text("Type the first replicate: the running normality, RSD, "
                                 "uncertainty and every acceptance check appear here.",
                                 style="italic"))
            return
        try:
            res = runs.standardize(self.app.db, **self.kwargs(reps), record=False)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            live.update(problems_text(self.app, "cannot compute yet", problems + [str(exc)]))
            return
        self.last = res
        # The result's replicates are the complete, readable rows, in grid order.
        complete = [i for i in range(1, self.rows + 1) if self._complete(i)]
        for r, i in zip(res.replicates, complete, strict=False):
            note = f"N {words.sig(r.normality)}" + ("  outlier (Grubbs)" if r.outlier else "")
            self.query_one(f"#note{i}", Static).update(note)
        title = "running result (not recorded yet)"
        if problems or waiting:
            title += f" of replicates {', '.join(map(str, complete))} only"
        parts = [problems_text(self.app, "the readings need attention", problems + waiting)] \
            if problems or waiting else []
        live.update(Group(*parts, result_view(self.app, res, title)))

    def _complete(self, i: int) -> bool:
        """A mass and a volume (typed, or the attached curve's), both reading well."""
        m, v = self.query_one(f"#m{i}", Input), self.query_one(f"#v{i}", Input)
        return bool(self.mass(i) and (self.volume(i) or i in self.curves)) \
            and not m.has_class("bad") and not v.has_class("bad")

    # -- recording ----------------------------------------------------------------------------
    def say(self, text: str) -> None:
        self.query_one("#live", Static).update(Text(text, style=colour(self.app, "error")))

    def action_submit(self) -> None:
        from prepbook.lab import runs

        if self._timer is not None:  # a pending preview must not cover the outcome
            self._timer.stop()
            self._timer = None
        if self.recorded:
            self.say(f"already recorded as run {self.recorded}; Escape goes back")
            return
        reps, problems, waiting = self.entries()
        problems += waiting
        if not reps and not problems:
            problems = ["type at least one replicate"]
        if not self.query_one("#temp", Input).value.strip():
            problems.append("type the titrant's temperature (°C) as measured")
        late = self.query_one(WorkTime).check()
        if late:
            problems.append(late)
        live = self.query_one("#live", Static)
        if problems:
            live.update(problems_text(self.app, "not recorded: nothing was written", problems))
            return
        from prepbook.tui.screens.dialogs import ConfirmScreen

        try:  # the whole result with its checks, then a confirmation, then the record
            res = runs.standardize(self.app.db, **self.kwargs(reps), record=False)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            live.update(problems_text(self.app, "not recorded: nothing was written", [str(exc)]))
            return
        live.update(result_view(self.app, res, "to be recorded: check the result and every check"))
        failed = [c.name for c in res.checks if not c.passed and c.severity == "fail"]
        question = (f"Record this run of {self.code}: {len(reps)} replicate(s), N = "
                    f"{words.sig(res.normality)} eq/L at {res.temperature_c:g} °C, factor "
                    f"{words.fixed(res.factor)}, checks {res.verdict.upper()}"
                    + (f" (failed: {', '.join(failed)})" if failed else "") + "?")

        def answer(yes: bool | None) -> None:
            if yes:
                self.record(reps)

        self.app.push_screen(ConfirmScreen(question), answer)

    def record(self, reps: list[str | ReplicateEntry]) -> None:
        """Record the run as confirmed (the same service call, with ``record=True``)."""
        from prepbook.lab import runs

        live = self.query_one("#live", Static)
        try:
            res = runs.standardize(self.app.db, **self.kwargs(reps), record=True)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            live.update(problems_text(self.app, "not recorded: nothing was written", [str(exc)]))
            return
        self.recorded = res.run
        for field in self.query(Input):
            field.disabled = True
        for choice in self.query(Select):
            choice.disabled = True
        live.update(result_view(self.app, res, f"recorded as run {res.run}: awaiting review by a "
                                      "second person"))
        self.app.notify(f"run {res.run} recorded; it awaits review", title="recorded")
        self.app.wrote()  # type: ignore[attr-defined]

    def unsaved(self) -> bool:
        if self.recorded or not self.rows:
            return False
        return bool(self.curves) or any(self.mass(i) or self.volume(i)
                                        for i in range(1, self.rows + 1))

    def action_back(self) -> None:
        from prepbook.tui.screens.dialogs import ConfirmScreen

        if not self.unsaved():
            self.app.pop_screen()
            return

        def answer(yes: bool | None) -> None:
            if yes:
                self.app.pop_screen()

        self.app.push_screen(ConfirmScreen("The readings typed here are not recorded. "
                                           "Go back and lose them?"), answer)
