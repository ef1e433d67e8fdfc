"""Recording a standardization: the form, the replicate grid and the live result.

Every reading is checked as it is typed (``inputs.parse_number``, the parser the
service uses); the running result is the service itself called with
``record=False``, so the preview and the record can never disagree. Recording goes
through the same call with ``record=True``.
"""

from __future__ import annotations

from dataclasses import asdict
from typing import TYPE_CHECKING, Any

from rich.console import Group
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import Screen
from textual.timer import Timer
from textual.widgets import Footer, Input, Label, Select, Static

from prepbook.errors import PrepbookError
from prepbook.inputs import parse_number
from prepbook.tui import words
from prepbook.tui.screens.common import LIVE_DELAY_S, budget_table, small_table
from prepbook.tui.widgets import check_cell, colour, state_cell

if TYPE_CHECKING:
    from prepbook.lab.batch_records import BatchRecord
    from prepbook.lab.runs import RunResult

START_ROWS = 3


class RecordScreen(Screen[None]):
    BINDINGS = [
        Binding("escape", "back", "Back"),
        Binding("ctrl+s", "submit", "Record run"),
        Binding("ctrl+n", "add_row", "Add replicate"),
        Binding("ctrl+d", "drop_row", "Drop last empty row"),
    ]

    def __init__(self, code: str) -> None:
        super().__init__()
        self.code = code
        self.rows = 0
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
                yield from self._field("performed", Input(
                    placeholder="now, or YYYY-MM-DDTHH:MM (lab time)", id="at", compact=True))
                yield Label("replicates", classes="section")
                with Horizontal(classes="grid-head"):
                    yield Label("#", classes="rep-n")
                    yield Label("mass g", id="amount-head", classes="rep-cell")
                    yield Label("titrant mL", classes="rep-cell")
                    yield Label("N (eq/L) or what is wrong", classes="rep-note")
                with Vertical(id="grid"):
                    for _ in range(START_ROWS):
                        self.rows += 1
                        yield self._row(self.rows)
                yield Static("Ctrl+N adds a row; Tab moves on; Ctrl+S records.",
                             classes="hint")
            with VerticalScroll(id="record-live"):
                yield Static("", id="live")
        yield Footer()

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
        if self.query_one(f"#m{i}", Input).value or self.query_one(f"#v{i}", Input).value:
            self.say("the last row has readings; clear them first (nothing is dropped "
                     "silently)")
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

    def entries(self) -> tuple[list[str], list[str], list[str]]:
        """Replicates as typed ('MASS:VOL'), what is wrong, and rows still half typed."""
        reps: list[str] = []
        problems: list[str] = []
        waiting: list[str] = []
        for i in range(1, self.rows + 1):
            m, v = self.query_one(f"#m{i}", Input), self.query_one(f"#v{i}", Input)
            bad = [p for p in (self.check_cell(m), self.check_cell(v)) if p]
            self.query_one(f"#note{i}", Static).update(self._short(bad[0]) if bad else "")
            problems += bad
            if not bad:
                if m.value.strip() and v.value.strip():
                    reps.append(f"{m.value.strip()}:{v.value.strip()}")
                elif m.value.strip() or v.value.strip():
                    missing = "titrant volume" if m.value.strip() else "amount"
                    waiting.append(f"replicate {i} has no {missing} yet")
                    self.query_one(f"#note{i}", Static).update(
                        Text(f"waiting for the {missing}", style="italic"))
        return reps, problems, waiting

    def _short(self, message: str) -> Text:
        """A refusal shortened to fit its row (the whole message is on the right)."""
        head, sep, rest = message.partition(": ")
        text = rest if sep and head.startswith("replicate") else message
        return Text(f"✖ {text}", style=colour(self.app, "error"), no_wrap=True,
                    overflow="ellipsis")

    def kwargs(self, reps: list[str]) -> dict[str, Any]:
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
                         ("indicator", "indicator"), ("at", "at")):
            val = self.query_one(f"#{wid}", Input).value.strip()
            kw[key] = val or None
        return kw

    # -- live result ----------------------------------------------------------------------------
    def on_input_changed(self, event: Input.Changed) -> None:
        wid = event.input.id or ""
        if wid[:1] in "mv" and wid[1:].isdigit():
            i = wid[1:]  # the row's note tells what is wrong with either of its readings
            bad = [p for p in (self.check_cell(self.query_one(f"#m{i}", Input)),
                               self.check_cell(self.query_one(f"#v{i}", Input))) if p]
            self.query_one(f"#note{i}", Static).update(self._short(bad[0]) if bad else "")
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
        live = self.query_one("#live", Static)
        self.last = None
        if not reps:
            if problems or waiting:
                live.update(self._problem("the readings need attention", problems + waiting))
            else:
                live.update(Text("Type the first replicate: the running normality, RSD, "
                                 "uncertainty and every acceptance check appear here.",
                                 style="italic"))
            return
        try:
            res = runs.standardize(self.app.db, **self.kwargs(reps), record=False)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            live.update(self._problem("cannot compute yet", problems + [str(exc)]))
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
        parts = [self._problem("the readings need attention", problems + waiting)] \
            if problems or waiting else []
        live.update(Group(*parts, self._result(res, title)))

    def _complete(self, i: int) -> bool:
        m, v = self.query_one(f"#m{i}", Input), self.query_one(f"#v{i}", Input)
        return bool(m.value.strip() and v.value.strip()) and not m.has_class("bad") \
            and not v.has_class("bad")

    def _problem(self, title: str, problems: list[str]) -> Text:
        out = Text.assemble((f"{title}\n", "bold"))
        for p in problems:
            out.append(f"  ✖ {p}\n", style=colour(self.app, "error"))
        return out

    def _result(self, res: RunResult, title: str) -> Group:
        verdict = res.verdict
        v_style = colour(self.app, {"pass": "success", "fail": "error"}.get(verdict, "warning"))
        head = Text.assemble(
            (f"{title}\n", "bold"),
            f"  N = {words.sig(res.normality)} eq/L at {res.temperature_c:g} °C"
            + ("" if res.temperature_c == 20 else
               f";  {words.sig(res.normality_20c)} eq/L at 20 °C") + "\n",
            f"  factor {words.fixed(res.factor)}   SD {words.sig(res.sd, 2)}   "
            f"RSD {words.sig(res.rsd_percent, 3)} %   n = {len(res.replicates)}\n",
            f"  u = {words.sig(res.u, 2)}   U = {words.sig(res.U, 2)} eq/L "
            f"(k = {words.sig(res.k, 2)})\n",
            ("  verdict: ", "bold"), (verdict.upper(), f"bold {v_style}".strip()))
        checks = small_table("check", "outcome", "why")
        for c in res.checks:
            checks.add_row(c.name, check_cell(self.app, asdict(c)), c.message)
        extra = [n for n in res.warnings if n not in {c.message for c in res.checks}]
        notes = Text("".join(f"  note: {n}\n" for n in extra))
        return Group(head, Text(""), checks, notes, Text("uncertainty budget", style="bold"),
                     budget_table([asdict(line) for line in res.budget]))

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
        live = self.query_one("#live", Static)
        if problems:
            live.update(self._problem("not recorded: nothing was written", problems))
            return
        from prepbook.tui.screens.dialogs import ConfirmScreen

        try:  # the whole result with its checks, then a confirmation, then the record
            res = runs.standardize(self.app.db, **self.kwargs(reps), record=False)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            live.update(self._problem("not recorded: nothing was written", [str(exc)]))
            return
        live.update(self._result(res, "to be recorded: check the result and every check"))
        failed = [c.name for c in res.checks if not c.passed and c.severity == "fail"]
        question = (f"Record this run of {self.code}: {len(reps)} replicate(s), N = "
                    f"{words.sig(res.normality)} eq/L at {res.temperature_c:g} °C, factor "
                    f"{words.fixed(res.factor)}, checks {res.verdict.upper()}"
                    + (f" (failed: {', '.join(failed)})" if failed else "") + "?")

        def answer(yes: bool | None) -> None:
            if yes:
                self.record(reps)

        self.app.push_screen(ConfirmScreen(question), answer)

    def record(self, reps: list[str]) -> None:
        """Record the run as confirmed (the same service call, with ``record=True``)."""
        from prepbook.lab import runs

        live = self.query_one("#live", Static)
        try:
            res = runs.standardize(self.app.db, **self.kwargs(reps), record=True)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            live.update(self._problem("not recorded: nothing was written", [str(exc)]))
            return
        self.recorded = res.run
        for field in self.query(Input):
            field.disabled = True
        for choice in self.query(Select):
            choice.disabled = True
        live.update(self._result(res, f"recorded as run {res.run}: awaiting review by a "
                                      "second person"))
        self.app.notify(f"run {res.run} recorded; it awaits review", title="recorded")
        self.app.wrote()  # type: ignore[attr-defined]

    def unsaved(self) -> bool:
        if self.recorded or not self.rows:
            return False
        return any(self.query_one(f"#{k}{i}", Input).value.strip()
                   for i in range(1, self.rows + 1) for k in "mv")

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
