"""Rich renderings shared by the batch screen and the review desk."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text
from textual.app import App

from prepbook.tui import words
from prepbook.tui.widgets import check_cell, colour, safe_table, shown, status_cell, when

if TYPE_CHECKING:
    from prepbook.lab.batch_records import BudgetRow, RunRecord

# The live result waits this long after the last key (a preview takes about 10 ms; the
# pause only lets a burst of typing settle): common practice, no source.
LIVE_DELAY_S = 0.08
DEFER = ("Follow the substance's safety data sheet, local regulations and the "
         "laboratory's own procedures.")


def small_table(*columns: str, right: tuple[int, ...] = ()) -> Table:
    t = safe_table(box=None, pad_edge=False, expand=False, header_style="bold underline")
    for i, c in enumerate(columns):
        t.add_column(c, justify="right" if i in right else "left", no_wrap=i in right)
    return t


def safety(app: App, hazard: Mapping[str, Any] | None, cautions: Sequence[str],
           storage: str | None = None) -> RenderableType:
    """Hazard statements and cautions, always ending with the deference to the SDS."""
    out = Text()
    warn = colour(app, "warning")
    if hazard:
        sw = hazard.get("signal_word")
        if sw:
            out.append(f"{sw.upper()}  ", style=f"bold {warn}".strip())
        pict = hazard.get("pictograms") or []
        if pict:
            out.append(", ".join(pict))
        out.append("\n")
        for s in hazard.get("statements") or []:
            out.append(f"  {s}\n")
        if not sw and not hazard.get("statements"):
            out.append("  no hazard classification at this strength in the catalog\n")
        if hazard.get("source"):
            out.append(f"  (hazard at this strength: {hazard['source']})\n", style="dim")
    # The deference to the SDS and local procedures always comes last, in words.
    defer = [c for c in cautions if "safety data sheet" in c]
    for c in cautions:
        if c not in defer:
            out.append(f"  ! {c}\n", style=warn)
    if storage:
        out.append(f"  Storage: {storage}\n")
    for c in defer or [DEFER]:
        out.append(f"  {c}\n", style="italic")
    return out


def _is_20(text: str | None) -> bool:
    try:
        return text is not None and float(text) == 20.0
    except ValueError:
        return False


def run_block(app: App, run: RunRecord, unit: str = "N") -> RenderableType:
    """One standardization: how it was done, its replicates, checks, budget and reviews."""
    head = Text.assemble(
        (f"run {run.run}", "bold"), "  ", status_cell(app, run.status),
        f"  {run.method}  performed {when(app, run.performed_at)} by {run.analyst}"
        f"  (recorded {when(app, run.recorded_at)})")
    against = (f"lot {run.lot} ({run.lot_certificate or 'no certificate on record'})"
               if run.lot else f"against batch {run.reference_batch}")
    how = Text(f"  {against};  balance {run.balance or '-'};  burette "
               f"{run.burette or '-'};  {run.temperature_c or '-'} °C;  blank "
               f"{run.blank_ml or '0'} mL;  indicator {run.indicator or '-'}")
    at_20 = "" if _is_20(run.temperature_c) else \
        f", {words.sig(run.normality_20c)} at 20 °C"
    res = Text(f"  N = {words.sig(run.normality)} eq/L at {run.temperature_c} °C"
               f"{at_20};  factor "
               f"{words.fixed(run.factor)};  RSD {words.sig(run.rsd_percent, 3)} %;  "
               f"U = {words.sig(run.U, 2)} eq/L (k = {words.sig(run.k, 2)})")
    parts: list[RenderableType] = [head, how, res]
    reps = run.replicates or ()
    if reps:
        amount = "aliquot mL" if run.method == "secondary" else "mass g"
        t = small_table("#", "v", amount, "titrant mL", "N (eq/L)", "note", right=(2, 3, 4))
        for r in reps:
            note = []
            if not r.current:
                note.append("superseded")
            if r.excluded:
                note.append(f"excluded: {r.reason}")
            if r.outlier:
                note.append("outlier (Grubbs)")
            t.add_row(str(r.position), str(r.version), r.amount, r.volume_ml,
                      words.sig(r.normality), "; ".join(note),
                      style="dim" if not r.current else "")
        parts.append(t)
    checks = run.checks
    if checks:
        ct = small_table("check", "outcome", "why")
        for c in checks:
            ct.add_row(c["name"], check_cell(app, c), c["message"])
        parts.append(ct)
    for rv in run.reviews:
        parts.append(shown(f"  {rv.decision}ed by {rv.reviewer} on "
                           f"{when(app, rv.signed_at)}"
                           + (f": {rv.reason}" if rv.reason else "")))
    return Group(*parts)


def budget_table(budget: Sequence[BudgetRow] | Sequence[Mapping[str, Any]]) -> RenderableType:
    if not budget:
        return Text("no uncertainty budget")
    t = small_table("quantity", "value", "unit", "u", "u rel.", "share %", right=(1, 3, 4, 5))
    for b in budget:
        t.add_row(b["quantity"], words.sig(b["value"], 6), b["unit"], words.sig(b["u"], 2),
                  words.sig(b["u_relative"], 2), f"{b['share_percent']:.1f}")
    return t
