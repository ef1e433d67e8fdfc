"""prepbook batch: make a batch of titrant and show its whole chain."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import msgspec
import typer

from prepbook.cli import output
from prepbook.cli.readings_view import render_readings
from prepbook.cli.session import actor, database

if TYPE_CHECKING:
    from prepbook.lab.assays import AssayRow
    from prepbook.lab.batch_records import BatchRecord
    from prepbook.lab.replicate_sources import RunReadings
    from prepbook.lab.settings import LabClock

app = typer.Typer(
    help="Make batches and show their history.",
    no_args_is_help=True,
    rich_markup_mode=None,
)


@app.command("make")
def make(
    ctx: typer.Context,
    spec: str = typer.Argument(..., metavar="SPEC", help="Solution spec code, e.g. NaOH-0.1N."),
    volume: str = typer.Option(..., "--volume", metavar="ML", help="Final volume made, mL."),
    solute_mass: str = typer.Option(
        None, "--solute-mass", metavar="G", help="Mass of solid dissolved, g."
    ),
    solute_lot: str = typer.Option(
        None, "--solute-lot", metavar="LOT",
        help="Lot of the solid, or of the concentrate (its certified assay and density are used)."
    ),
    stock_volume: str = typer.Option(
        None, "--stock-volume", metavar="ML", help="Volume of concentrated reagent taken, mL."
    ),
    from_batch: str = typer.Option(
        None, "--from-batch", metavar="BATCH", help="Stock batch diluted."
    ),
    aliquot: str = typer.Option(
        None, "--aliquot", metavar="ML", help="Volume of the stock batch taken, mL."
    ),
    flask: str = typer.Option(None, "--flask", metavar="CODE", help="Volumetric flask used."),
    balance: str = typer.Option(None, "--balance", metavar="CODE", help="Balance used."),
    notes: str = typer.Option(None, "--notes", metavar="TEXT", help="Free notes."),
    at: str = typer.Option(
        None, "--at", metavar="WHEN",
        help="When it was made (YYYY-MM-DD[THH:MM], lab time), if not now."
    ),
    code: str = typer.Option(
        None, "--code", metavar="CODE",
        help="The lab's own bottle code (default: spec-date-number)."
    ),
    late_reason: str = typer.Option(
        None, "--reason", metavar="TEXT",
        help="Why it is entered late (needed when --at is more than the lab's "
        "late_entry_hours ago)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the result as JSON."),
) -> None:
    """Record a new batch; prints its code, theoretical normality and the cautions."""
    from prepbook.lab import batches

    res = batches.make_batch(database(ctx), actor=actor(ctx), spec=spec, volume=volume,
                             solute_mass=solute_mass, solute_lot=solute_lot,
                             stock_volume=stock_volume, from_batch=from_batch, aliquot=aliquot,
                             flask=flask, balance=balance, notes=notes, at=at,
                             code=code, late_reason=late_reason)
    if as_json:
        output.emit_json(res)
        return
    out = output.console()
    out.print(f"batch [bold]{res.batch}[/bold] ({output.text(res.spec)}, {res.method})")
    out.print(f"theoretical normality {output.sig(res.theoretical_normality, 5)} eq/L, "
              f"factor {res.theoretical_factor:.4f}; expires {res.expires}")
    out.print("standardize it before use: prepbook standardize " + res.batch + " --lot ...")
    output.warn_lines(out, res.warnings)
    output.caution_lines(out, res.cautions)


def _render_show(out: Any, b: BatchRecord, readings: dict[str, RunReadings],
                 clk: LabClock) -> None:
    p = b.preparation
    out.print(f"[bold]{b.batch}[/bold]  {output.text(b.spec_name)} ({b.spec}), "
              f"nominal {b.nominal:g} {b.unit}")
    state = b.state
    out.print(f"state: [bold]{state}[/bold]   normality: {output.sig(b.normality, 5)} eq/L "
              "at 20 C   "
              f"factor: {output.fixed(b.factor, 4)}   restandardize by: "
              f"{b.restandardize_by or '-'}   expires: {b.expires}")
    how = {
        "solid": f"{p.solute_mass_g} g of solute" + (f" from lot {p.solute_lot}"
                                                    if p.solute_lot else ""),
        "concentrate": f"{p.concentrate_volume_ml} mL of concentrate"
        + (f" from lot {p.solute_lot}" if p.solute_lot else ""),
        "dilution": f"{p.aliquot_ml} mL of batch {p.from_batch}",
    }[p.method]
    out.print(f"made {clk.shown(p.made_at)}{clk.entered(p.made_at, p.recorded_at)} by "
              f"{p.made_by}: {output.text(how)} made up to {p.volume_ml} mL"
              + (f" in flask {p.flask}" if p.flask else "")
              + (f", balance {p.balance}" if p.balance else "")
              + f"; theoretical {output.sig(p.theoretical_normality, 5)} eq/L")
    if p.notes:
        out.print(f"notes: {output.text(p.notes)}")
    if b.retired:
        out.print(f"retired {clk.shown(b.retired.at)} by {b.retired.by}: "
                  f"{output.text(b.retired.reason)}")
    for run in b.runs:
        src = f"lot {run.lot}" if run.lot else f"against {run.reference_batch}"
        head = (f"\n[bold]{run.run}[/bold] {run.status}  {clk.shown(run.performed_at)}"
                f"{clk.entered(run.performed_at, run.recorded_at)} by "
                f"{run.analyst}, {output.text(src)}")
        inst = ", ".join(x for x in (run.balance and f"balance {run.balance}",
                                     run.burette and f"burette {run.burette}") if x)
        out.print(head + (f" ({inst})" if inst else ""))
        out.print(f"  N = {output.sig(run.normality, 5)} eq/L at {run.temperature_c} C "
                  f"({output.sig(run.normality_20c, 5)} at 20 C), factor "
                  f"{output.fixed(run.factor, 4)}, RSD {output.fixed(run.rsd_percent, 3)} %,"
                  f" U = {output.sig(run.U, 2)} (k = {run.k or '-'}), verdict "
                  f"{run.verdict}")
        if run.repeatability is not None:
            gaps = [row["quantity"] for row in run.budget if row.get("missing")]
            out.print(f"  {output.escape(run.budget_basis())}"
                      + (f"; uncertainty incomplete: {', '.join(gaps)} missing" if gaps else ""))
        rows = [(r.position, r.version, r.amount, r.volume_ml,
                 output.sig(r.normality, 5) if r.normality is not None else "",
                 ("superseded" if not r.current else "")
                 + (" excluded" if r.excluded else "") + (" outlier" if r.outlier else ""))
                for r in run.replicates or ()]
        amount = "aliquot (mL)" if run.method == "secondary" else "mass (g)"
        out.print(output.table(None, ["#", "v", amount, "titrant (mL)", "N (eq/L)", ""], rows,
                               right=(0, 1, 2, 3, 4)))
        render_readings(out, readings.get(run.run), clk.shown)
        for c in run.checks:
            if not c["passed"]:
                out.print(f"  {c['severity']}: {output.text(c['message'])}")
        for rv in run.reviews:
            out.print(f"  {rv.decision}ed by {rv.reviewer} {clk.shown(rv.signed_at)}"
                      + (f": {output.text(rv.reason)}" if rv.reason else ""))
    if b.uses:
        out.print(f"\nuses: {len(b.uses)}")
    if b.remaining_ml is not None:
        out.print(f"remaining: {b.remaining_ml:g} mL of {p.volume_ml} mL made")
    if b.diluted_into:
        out.print("diluted into: " + ", ".join(b.diluted_into))
    if b.uses_needing_review:
        out.print(f"[bold]{len(b.uses_needing_review)} use(s) need review[/bold] "
                  f"(see `prepbook trace {b.batch}`)")
    output.warn_lines(out, b.warnings)


@app.command("show")
def show(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="BATCH", help="Batch code."),
    as_json: bool = typer.Option(False, "--json", help="Print JSON."),
) -> None:
    """The whole chain of a batch: preparation, standardizations, replicates, reviews."""
    from prepbook.lab import batches, settings
    from prepbook.lab.assays import assays_of

    db = database(ctx)
    b = batches.show_batch(db, code)
    made = assays_of(db, code)
    if as_json:
        output.emit_json({**msgspec.structs.asdict(b), "assays": made})
    else:
        from prepbook.lab.replicate_sources import of_batch

        out = output.console()
        _render_show(out, b, of_batch(db, code), settings.lab_clock(db))
        _render_assays(out, made, settings.lab_clock(db))


def _render_assays(out: Any, made: tuple[AssayRow, ...], clk: LabClock) -> None:
    """The sample results made with the batch (``prepbook impact`` recomputes them)."""
    if not made:
        return
    rows = [(a.assay, a.sample, a.analyte, clk.shown(a.performed_at), a.run,
             output.sig(a.result, 5), a.unit,
             f"{a.limit_low or '-'} to {a.limit_high or '-'}"
             if a.limit_low or a.limit_high else "") for a in made]
    out.print(output.table(f"\nassays: {len(made)}", ["assay", "sample", "analyte", "when",
                                                       "run", "result", "unit", "limit"],
                           rows, right=(5,)))


@app.command("use")
def use(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="BATCH", help="Batch code."),
    volume: str = typer.Option(None, "--volume", metavar="ML", help="Volume drawn, mL."),
    purpose: str = typer.Option(
        None, "--purpose", metavar="TEXT",
        help="What it was used for (sample, method); required."
    ),
    at: str = typer.Option(
        None, "--at", metavar="WHEN", help="When (YYYY-MM-DD[THH:MM], lab time), if not now."
    ),
    late_reason: str = typer.Option(
        None, "--reason", metavar="TEXT",
        help="Why it is entered late (needed when --at is more than the lab's "
        "late_entry_hours ago)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the use as JSON."),
) -> None:
    """Record a use of a batch in service (kept so a bad batch's impact can be traced)."""
    from prepbook.lab import batches

    res = batches.use_batch(database(ctx), actor=actor(ctx), code=code, volume=volume,
                            purpose=purpose, at=at, late_reason=late_reason)
    if as_json:
        output.emit_json(res)
    else:
        output.console().print(f"use of {res.batch} recorded: factor "
                               f"{output.fixed(res.factor, 4)}")


@app.command("retire")
def retire(
    ctx: typer.Context,
    code: str = typer.Argument(..., metavar="BATCH", help="Batch code."),
    reason: str = typer.Option(
        ..., "--reason", metavar="TEXT", help="Why (discarded, used up, spoiled...)."
    ),
    passphrase_stdin: bool = typer.Option(
        False, "--passphrase-stdin", help="Read your passphrase from standard input."
    ),
    at: str = typer.Option(
        None, "--at", metavar="WHEN",
        help="When discarded (YYYY-MM-DD[THH:MM], lab time), if not now."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the result as JSON."),
) -> None:
    """Retire a batch (signed): it can no longer be standardized or used; its record stays."""
    from prepbook.cli.session import Passphrases
    from prepbook.lab import history

    secret = Passphrases(passphrase_stdin).get(f"Passphrase of {actor(ctx)}")
    res = history.retire(database(ctx), actor=actor(ctx), code=code, reason=reason,
                         passphrase=secret, at=at)
    if as_json:
        output.emit_json(res)
    else:
        output.console().print(f"batch [bold]{res.batch}[/bold] retired: "
                               f"{output.text(res.reason)}")
