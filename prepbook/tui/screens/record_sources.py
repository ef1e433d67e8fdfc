"""The standardization form's replicate rows and what the instruments gave them.

Ctrl+B reads a mass from the run's balance into a row, through the service the
command line's ``--rep @balance:VOL`` uses (``lab.replicate_sources.weighed``: the
stable net reading in grams, its raw line and time kept; an unstable reading, another
unit, an overload or no answer is one line here and nothing is read). Ctrl+T attaches
a titration curve file to a row (``lab.replicate_curves.read_file``): with no volume
typed the volume is the curve's endpoint, with one typed the endpoint is checked
against it, as ``--rep MASS:@FILE`` and ``MASS:VOL@FILE`` do. A mass read from the
balance and then changed by hand is typed, as the service counts a corrected reading.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from rich.text import Text
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import Input, Select, Static

from prepbook.errors import InvalidInput, PrepbookError
from prepbook.tui.widgets import colour, shown

if TYPE_CHECKING:
    from prepbook.devices.records import RecordedCurve
    from prepbook.inputs import ReplicateEntry

MARK_HELP = "src: B mass read from the balance, C curve attached."


class InstrumentRows(Screen[None]):
    """The readings part of the standardization form (``RecordScreen`` builds on it)."""

    BINDINGS = [
        Binding("ctrl+b", "read_balance", "Read balance"),
        Binding("ctrl+t", "attach_curve", "Curve file"),
    ]

    def __init__(self) -> None:
        super().__init__()
        self.rows = 0
        self.weighed: dict[int, ReplicateEntry] = {}
        self.curves: dict[int, RecordedCurve] = {}

    # what the form itself decides ------------------------------------------------------------
    def _secondary(self) -> bool:
        raise NotImplementedError

    def schedule(self) -> None:
        raise NotImplementedError

    # the row the reading goes to ---------------------------------------------------------------
    def _focused_row(self) -> int | None:
        wid = self.focused.id if self.focused is not None else None
        if wid and wid[:1] in "mv" and wid[1:].isdigit():
            return int(wid[1:])
        return None

    def _row_for(self, has: str) -> int | None:
        """The focused replicate's row, else the first row without ``has`` (a mass, "m",
        or a curve, "c"); None when there is none, or the run is recorded (its fields are
        closed)."""
        if self.query_one("#m1", Input).disabled:
            return None
        row = self._focused_row()
        if row is not None:
            return row
        for i in range(1, self.rows + 1):
            taken = i in self.curves if has == "c" else bool(self.mass(i))
            if not taken:
                return i
        return None

    def mass(self, i: int) -> str:
        return self.query_one(f"#m{i}", Input).value.strip()

    def volume(self, i: int) -> str:
        return self.query_one(f"#v{i}", Input).value.strip()

    def tell(self, text: str, bad: bool = False) -> None:
        line = self.query_one("#reading", Static)
        line.set_class(bad, "refusal")
        line.update(shown(text, colour(self.app, "error") if bad else ""))
        if bad:  # the form may be scrolled to its top on a small terminal
            line.scroll_visible()

    def mark(self, i: int) -> None:
        """The row's source marks, and the volume the curve gives as its placeholder."""
        marks = ("B" if i in self.weighed else "") + ("C" if i in self.curves else "")
        self.query_one(f"#src{i}", Static).update(Text(marks, style="bold"))
        curve = self.curves.get(i)
        from prepbook.lab.replicate_sources import CURVE_VOLUME_DECIMALS

        self.query_one(f"#v{i}", Input).placeholder = (
            f"{curve.endpoint_ml:.{CURVE_VOLUME_DECIMALS}f} curve" if curve else "mL")

    # the balance -------------------------------------------------------------------------------
    def balance(self) -> str | None:
        value = self.query_one("#balance", Select).value
        return value if isinstance(value, str) else None

    def action_read_balance(self) -> None:
        if self._secondary():
            self.tell("a secondary standardization weighs nothing; type the aliquot (mL)",
                      bad=True)
            return
        code = self.balance()
        if code is None:
            self.tell("no balance chosen: choose the run's balance first", bad=True)
            return
        i = self._row_for("m")
        if i is None:
            self.tell("no open row without a mass (Ctrl+N adds one; a recorded run takes no "
                      "more readings)", bad=True)
            return
        if self.mass(i):
            self.tell(f"replicate {i} already has a mass; clear it first (nothing is "
                      "replaced silently)", bad=True)
            return
        self.tell(f"reading balance {code} for replicate {i} …")
        self.run_worker(lambda: self._read(code, i), thread=True, group="balance",
                        exclusive=True)

    def _read(self, code: str, i: int) -> None:
        """In a worker thread: the balance may take its whole timeout to answer."""
        from prepbook.lab import replicate_sources

        try:
            entry = replicate_sources.weighed(self.app.db, code, i)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            self.app.call_from_thread(self.tell, f"replicate {i}: nothing read: {exc}", True)
            return
        self.app.call_from_thread(self._weighed, i, entry)

    def _weighed(self, i: int, entry: ReplicateEntry) -> None:
        w = entry.weighing
        if w is None or i > self.rows:
            return
        if self.mass(i):
            self.tell(f"replicate {i}: a mass was typed while the balance was read; the "
                      "reading is not used", bad=True)
            return
        self.weighed[i] = entry
        self.query_one(f"#m{i}", Input).value = entry.amount.text
        self.mark(i)
        self.tell(f"replicate {i}: {entry.amount.text} g from balance {w.balance} (stable, "
                  f"net); its line {w.raw!r} is kept with the replicate")
        self.query_one(f"#v{i}", Input).focus()

    def typed_over(self, i: int) -> None:
        """A mass changed by hand after it was read is a typed mass."""
        entry = self.weighed.get(i)
        if entry is not None and self.mass(i) != entry.amount.text:
            del self.weighed[i]
            self.mark(i)

    # the curve ---------------------------------------------------------------------------------
    def action_attach_curve(self) -> None:
        from prepbook.tui.screens.dialogs import FieldsScreen

        i = self._row_for("c")
        if i is None:
            self.tell("no open row without a curve (put the cursor in a row to change its "
                      "curve; a recorded run takes no more)", bad=True)
            return
        had = self.curves.get(i)
        note = ("The file is stored with the replicate byte for byte. With no volume typed "
                "the volume is the curve's endpoint; a typed volume is checked against it.")
        if had is not None:
            note += f" Now attached: {had.file_name} (a blank name detaches it)."

        def done(values: dict[str, str] | None) -> None:
            if values is not None:
                self.attach(i, values["file"].strip())

        self.app.push_screen(FieldsScreen(f"Titration curve of replicate {i}",
                                          [("file", "curve file (CSV export)", "path")],
                                          note=note), done)

    def attach(self, i: int, path: str) -> None:
        from prepbook.lab import replicate_curves

        if not path:
            if self.curves.pop(i, None) is not None:
                self.tell(f"replicate {i}: curve detached")
                self.mark(i)
                self.schedule()
            return
        try:
            curve = replicate_curves.read_file(path)
        except PrepbookError as exc:
            self.tell(f"replicate {i}: no curve attached: {exc}", bad=True)
            return
        self.curves[i] = curve
        self.mark(i)
        ends = ", ".join(f"{v:.3f}" for v in curve.endpoints_ml)
        self.tell(f"replicate {i}: curve {curve.file_name} attached; endpoint "
                  f"{curve.endpoint_ml:.3f} mL" + (f" (inflections at {ends} mL)"
                                                   if len(curve.endpoints_ml) > 1 else ""))
        self.schedule()

    # the replicate as the service takes it -----------------------------------------------------
    def item(self, i: int, amount_name: str) -> str | ReplicateEntry:
        """Row ``i`` as ``standardize`` takes it: ``MASS:VOL`` when typed, else the entry
        with its weighing and curve (refused in one line when it cannot be)."""
        from prepbook.lab import replicate_sources as sources

        weighed, curve = self.weighed.get(i), self.curves.get(i)
        if weighed is None and curve is None:
            return f"{self.mass(i)}:{self.volume(i)}"
        if weighed is not None and weighed.weighing is not None:
            if self._secondary():
                raise InvalidInput(f"replicate {i} was weighed on the balance; a secondary "
                                   "standardization weighs nothing: clear it and type the "
                                   "aliquot (mL)")
            if weighed.weighing.balance != self.balance():
                raise InvalidInput(f"replicate {i} was read from balance "
                                   f"{weighed.weighing.balance}, not the run's balance: "
                                   "choose it, or clear the mass and read it again")
        base = weighed or sources.typed_amount(self.mass(i), i, amount_name)
        return sources.with_volume(base, self.volume(i), i, curve=curve)
