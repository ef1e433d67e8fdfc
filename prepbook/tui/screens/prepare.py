"""Preparing a batch: the form, the calculators at hand and the safety cautions.

The calculators are the same services as ``prepbook calc solid / liquid / dilute``;
recording is ``lab.batches.make_batch``, the service behind ``prepbook batch make``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from rich.console import Group
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, VerticalScroll
from textual.screen import Screen
from textual.widgets import Input, Label, Select, Static

from prepbook.errors import PrepbookError
from prepbook.tui import words
from prepbook.tui.screens.common import safety
from prepbook.tui.widgets import KeyLine, colour
from prepbook.tui.work_time import WorkTime

if TYPE_CHECKING:
    from prepbook.lab.board import BatchLife
    from prepbook.lab.lots import LotInfo
    from prepbook.lab.specs import SpecInfo

METHODS = [("weighed solid", "solid"), ("concentrated reagent", "concentrate"),
           ("dilution of a stock batch", "dilution")]
# field id -> methods it belongs to
ONLY = {"mass": ("solid",), "lot": ("solid", "concentrate"), "purity": ("solid",),
        "balance": ("solid",),
        "stock": ("concentrate",), "parent": ("dilution",), "aliquot": ("dilution",)}


class PrepareScreen(Screen[None]):
    BINDINGS = [Binding("escape", "app.pop_screen", "Back"),
                Binding("ctrl+s", "submit", "Record batch")]

    def __init__(self) -> None:
        super().__init__()
        self.specs: dict[str, SpecInfo] = {}
        self.board: list[BatchLife] = []
        self.lots: dict[str, LotInfo] = {}
        self.made: str | None = None

    def compose(self) -> ComposeResult:
        yield Static("", id="topline", classes="topline")
        with Horizontal(id="record"):
            with VerticalScroll(id="record-form"):
                yield Label("what and how", classes="section")
                f = self._field
                yield from f("spec", Select([], prompt="solution spec", id="spec", compact=True))
                yield from f("made from", Select(METHODS, value="solid", allow_blank=False,
                                                 id="method", compact=True))
                yield from f("target N", Input(id="target", compact=True), "f-target")
                yield from f("final volume mL", Input(value="1000", id="volume", compact=True))
                yield from f("purity %", Input(value="100", id="purity", compact=True),
                             "f-purity")
                yield from f("solute mass g", Input(id="mass", compact=True), "f-mass")
                yield from f("solute lot", Select([], prompt="none", id="lot", compact=True),
                             "f-lot")
                yield from f("concentrate mL", Input(id="stock", compact=True), "f-stock")
                yield from f("stock batch", Select([], prompt="choose", id="parent",
                                                   compact=True), "f-parent")
                yield from f("aliquot mL", Input(id="aliquot", compact=True), "f-aliquot")
                yield from f("flask", Select([], prompt="none named", id="flask", compact=True))
                yield from f("balance", Select([], prompt="none named", id="balance",
                                               compact=True), "f-balance")
                yield from f("notes", Input(id="notes", compact=True))
                yield WorkTime("made", "preparation time")
            with VerticalScroll(id="record-live"):
                yield Static("", id="live")
        yield KeyLine()

    @staticmethod
    def _field(label: str, widget: Any, fid: str | None = None) -> ComposeResult:
        with Horizontal(classes="field", id=fid):
            yield Label(label, classes="field-label")
            yield widget

    def on_mount(self) -> None:
        from prepbook.lab import board, instruments, lots, specs

        db = self.app.db  # type: ignore[attr-defined]
        self.specs = {s.code: s for s in specs.list_specs(db)}
        self.board = board.board(db)
        self.query_one("#spec", Select).set_options([(f"{c} · {s.name}", c)
                                                     for c, s in self.specs.items()])
        self.lots = {lt.code: lt for lt in lots.list_lots(db) if not lt.expired}
        self.query_one("#lot", Select).set_options(
            [(f"{lt.code} · {lt.material} {lt.purity_percent} %"
              + (f" w/w, {lt.density_g_per_ml} g/mL" if lt.density_g_per_ml else ""), lt.code)
             for lt in self.lots.values()])
        ins = instruments.list_instruments(db)
        for kind in ("flask", "balance"):
            self.query_one(f"#{kind}", Select).set_options(
                [(i.code + (" · calibration OVERDUE" if i.overdue else ""), i.code)
                 for i in ins if i.kind == kind])
        self.query_one("#topline", Static).update(Text.assemble(
            ("prepbook ", "bold"), "prepare a batch  ·  acting as ",
            self.app.who()))  # type: ignore[attr-defined]
        self.show_method()
        self.calculate()

    def show_method(self) -> None:
        method = self.query_one("#method", Select).value
        for fid, methods in ONLY.items():
            self.query_one(f"#f-{fid}").display = method in methods

    # -- events -------------------------------------------------------------------------
    def on_select_changed(self, event: Select.Changed) -> None:
        if event.select.id == "spec" and isinstance(event.value, str):
            from prepbook.lab import preparing

            spec = self.specs[event.value]
            if preparing.supplied_as_concentrate(spec.solute):
                self.query_one("#method", Select).value = "concentrate"
            self.query_one("#target", Input).value = (
                f"{spec.nominal:g}" if spec.unit == "N" else "")
            parents = [it for it in self.board if it.state in ("in-service", "due")
                       and it.spec in self.specs
                       and self.specs[it.spec].solute == spec.solute
                       and it.spec != spec.code]
            self.query_one("#parent", Select).set_options(
                [(f"{it.batch} · N {words.sig(it.normality)}", it.batch)
                 for it in parents])
        if event.select.id == "method":
            self.show_method()
        self.calculate()

    def on_input_changed(self, event: Input.Changed) -> None:
        self.calculate()

    def value(self, wid: str) -> str | None:
        w = self.query_one(f"#{wid}")
        v = w.value  # type: ignore[attr-defined]
        if isinstance(w, Select):
            return v if isinstance(v, str) else None
        return v.strip() or None

    # -- calculators ----------------------------------------------------------------------
    def calculate(self) -> None:
        from prepbook.catalog import loader
        from prepbook.lab import preparing

        if self.made:
            return
        code = self.value("spec")
        live = self.query_one("#live", Static)
        if code is None:
            live.update(Text("Choose the solution spec: the calculator, the hazards and the "
                             "cautions for it appear here.", style="italic"))
            return
        spec = self.specs[code]
        method = self.value("method")
        out = Text.assemble((f"{spec.name}\n", "bold"))
        out.append(f"  nominal {spec.nominal:g} {spec.unit} · solute {spec.solute} · "
                   f"shelf life {spec.shelf_life_days} days\n")
        cautions: list[str] = list(spec.cautions)
        target, volume = self.value("target"), self.value("volume")
        err = colour(self.app, "error")
        out.append("\ncalculator\n", style="bold")
        if spec.unit != "N" and not target:
            out.append(f"  this spec is in mol/L: type the target normality (eq/L) for the "
                       f"calculator, {spec.nominal:g} M × the equivalents per mole of "
                       "the reaction\n")
        elif not (target and volume):
            out.append("  type the target normality and the final volume\n")
        else:
            found: tuple[str, ...] = ()  # the calculator's cautions for what it names
            try:
                if method == "solid" and preparing.supplied_as_concentrate(spec.solute):
                    out.append(f"  {spec.solute} is supplied as a concentrated liquid, not "
                               "weighed: choose made from concentrated reagent\n")
                elif method == "solid":
                    solid = preparing.solid(spec.solute, normality_text=target,
                                        volume_text=volume,
                                        purity_text=self.value("purity") or "100")
                    out.append(f"  weigh {words.sig(solid.mass_g, 5)} g of {solid.name} "
                               f"({solid.formula}, M = "
                               f"{words.sig(solid.molar_mass_g_per_mol, 6)} g/mol, n = "
                               f"{solid.n_eq_per_mol:g} eq/mol, purity "
                               f"{solid.purity_percent:g} %) for {target} N in {volume} mL\n")
                    found = solid.cautions
                elif method == "concentrate":
                    lot = self.lots.get(self.value("lot") or "")
                    certified = lot is not None and lot.density_g_per_ml is not None
                    liquid = preparing.liquid(
                        spec.solute, normality_text=target, volume_text=volume,
                        fraction_text=lot.purity_percent if lot and certified else None,
                        density_text=lot.density_g_per_ml if lot and certified else None)
                    out.append(f"  measure {words.sig(liquid.volume_ml, 4)} mL of the "
                               f"concentrate ({liquid.name}, "
                               f"{liquid.mass_fraction_percent:g} % w/w, "
                               f"{liquid.density_g_per_ml:g} g/mL, about "
                               f"{words.sig(liquid.molarity_mol_per_l, 3)} mol/L) and make up "
                               f"to {volume} mL\n")
                    where = (f"lot {lot.code}'s certificate" if lot and certified
                             else f"typical values, {liquid.source}; choose the lot to use "
                             "its certificate")
                    out.append(f"  assay and density: {where}\n", style="dim")
                    concentrate = loader.find_reagent(liquid.reagent).hazard
                    if concentrate.classified:
                        out.append(f"  the concentrate itself: {concentrate.signal_word or ''} "
                                   f"{' '.join(concentrate.statements)}\n", style=err)
                    found = liquid.cautions
                else:
                    parent = self.value("parent")
                    stock = next((it for it in self.board if it.batch == parent), None)
                    if stock is None or stock.normality is None:
                        out.append("  choose a standardized stock batch\n")
                    else:
                        d = preparing.dilute(stock_text=repr(stock.normality),
                                         normality_text=target, volume_text=volume)
                        out.append(f"  take {words.sig(d.stock_ml, 4)} mL of {parent} "
                                   f"(N {words.sig(stock.normality)}) and make up to "
                                   f"{volume} mL (about {words.sig(d.water_ml, 4)} mL of "
                                   "water)\n")
                cautions += [c for c in found if c not in cautions]
            except PrepbookError as exc:
                out.append(f"  ✖ {exc}\n", style=err)
        out.append("  The calculator only advises: record what was actually weighed or "
                   "measured.\n", style="dim")
        out.append("\nsafety\n", style="bold")
        live.update(Group(out, safety(self.app, spec.hazard, cautions,
                                      spec.storage)))

    # -- recording ------------------------------------------------------------------------
    def action_submit(self) -> None:
        from prepbook.lab import batches

        live = self.query_one("#live", Static)
        if self.made:
            return
        code, method = self.value("spec"), self.value("method")
        err = colour(self.app, "error")
        if code is None:
            live.update(Text("not recorded: choose the solution spec", style=err))
            return
        when = self.query_one(WorkTime)
        late = when.check()
        if late:
            live.update(Text(f"not recorded, nothing was written: {late}", style=err))
            return
        kw: dict[str, Any] = {"actor": self.app.actor or "", "spec": code,  # type: ignore[attr-defined]
                              "volume": self.value("volume") or "", "flask": self.value("flask"),
                              "notes": self.value("notes"), "at": when.at,
                              "late_reason": when.reason}
        if method == "solid":
            kw |= {"solute_mass": self.value("mass") or "", "solute_lot": self.value("lot"),
                   "balance": self.value("balance")}
        elif method == "concentrate":
            kw |= {"stock_volume": self.value("stock") or "", "solute_lot": self.value("lot")}
        else:
            kw |= {"from_batch": self.value("parent") or "", "aliquot": self.value("aliquot")
                   or ""}
        try:
            res = batches.make_batch(self.app.db, **kw)  # type: ignore[attr-defined]
        except PrepbookError as exc:
            live.update(Text(f"not recorded, nothing was written: {exc}", style=err))
            return
        self.made = res.batch
        out = Text.assemble((f"recorded batch {res.batch}\n", "bold"))
        out.append(f"  theoretical N {words.sig(res.theoretical_normality)} (factor "
                   f"{words.fixed(res.theoretical_factor)}); expires {res.expires}\n"
                   "  It is new until standardized: open it from the board and press s.\n")
        for w in res.warnings:
            out.append(f"  ! {w}\n", style=colour(self.app, "warning"))
        spec = self.specs[code]
        live.update(Group(out, safety(self.app, spec.hazard, res.cautions,
                                      spec.storage)))
        for box in self.query(Input):
            box.disabled = True
        self.app.notify(f"batch {res.batch} recorded", title="recorded")
        self.app.wrote()  # type: ignore[attr-defined]
