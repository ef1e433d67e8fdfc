"""prepbook standardize: record replicate titrations of a batch and compute them."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import typer

from prepbook.cli import output
from prepbook.cli.readings_view import amount_or_reading, replicate_of
from prepbook.cli.session import actor, database
from prepbook.errors import InvalidInput

if TYPE_CHECKING:
    from prepbook.lab.runs import RunResult


def render_result(out: Any, res: RunResult) -> None:
    rows = [(r.index, output.sig(r.normality, 5),
             " ".join(w for w, on in (("excluded", r.excluded), ("outlier", r.outlier)) if on))
            for r in res.replicates]
    out.print(output.table(None, ["#", "normality (eq/L)", "flag"], rows, right=(0, 1)))
    out.print(
        f"[bold]N = {output.sig(res.normality, 5)} eq/L[/bold] at {res.temperature_c:g} C "
        f"({output.sig(res.normality_20c, 5)} at 20 C), factor "
        f"[bold]{res.factor:.4f}[/bold], RSD {output.fixed(res.rsd_percent, 3)} %, "
        f"U = {output.sig(res.U, 2)} eq/L (k = {res.k:g})"
        if res.U is not None else
        f"[bold]N = {output.sig(res.normality, 5)} eq/L[/bold], factor {res.factor:.4f}"
    )
    gaps = [line.quantity for line in res.budget if line.missing is not None]
    if gaps:
        out.print(f"  uncertainty incomplete: {', '.join(gaps)} missing")
    from prepbook.lab.batch_records import budget_basis

    basis = budget_basis(res.reference, res.repeatability, res.repeatability_rsd_percent)
    out.print("  " + output.escape(basis))
    for c in res.checks:
        mark = "ok  " if c.passed else ("FAIL" if c.severity == "fail" else "warn")
        out.print(f"  {mark} {c.name}: {c.message}")


def standardize(
    ctx: typer.Context,
    batch: str = typer.Argument(..., metavar="BATCH", help="Batch code."),
    lot: str = typer.Option(None, "--lot", metavar="LOT", help="Primary-standard lot weighed."),
    against: str = typer.Option(
        None, "--against", metavar="BATCH",
        help="Standardized batch pipetted (secondary standardization)."
    ),
    balance: str = typer.Option(None, "--balance", metavar="CODE", help="Balance used."),
    burette: str = typer.Option(None, "--burette", metavar="CODE", help="Burette used."),
    temp: str = typer.Option(
        None, "--temp", metavar="C",
        help="Temperature of the titrant, C (asked when replicates are asked; with --rep "
             "and no --temp the reference 20 C is used and the result says so)."
    ),
    blank: str = typer.Option("0", "--blank", metavar="ML", help="Blank titration volume, mL."),
    indicator: str = typer.Option(
        None, "--indicator", metavar="NAME", help="Indicator (default: the spec's)."
    ),
    rep: list[str] = typer.Option(
        None,
        "--rep",
        metavar="MASS:VOL",
        help="One replicate (g of standard : mL of titrant), or ALIQUOT:VOL with "
        "--against. Repeat. @balance:VOL reads the mass from --balance; MASS:@FILE takes "
        "the volume from a recorded curve, MASS:VOL@FILE checks it against the curve. "
        "Without --rep you are asked for them one at a time.",
    ),
    at: str = typer.Option(
        None, "--at", metavar="WHEN",
        help="When titrated (YYYY-MM-DD[THH:MM], lab time), if not now."
    ),
    late_reason: str = typer.Option(
        None, "--reason", metavar="TEXT",
        help="Why it is entered late (needed when --at is more than the lab's "
        "late_entry_hours ago)."
    ),
    repeatability: str = typer.Option(
        None, "--repeatability", metavar="RSD%",
        help="Validated repeatability, relative SD of one result in % (at most 5), for this run's "
             "uncertainty budget (over the spec's; without either, the replicates' scatter)."
    ),
    reaction: str = typer.Option(
        None, "--reaction", metavar="NAME",
        help="With --lot: the standard's reaction where it has more than one (sodium "
             "carbonate: acid-base-first, n = 1); default: the one that pairs with the titrant."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the result as JSON."),
) -> None:
    """Standardize a batch against a primary-standard lot or a standardized batch."""
    from prepbook.lab import runs

    db = database(ctx)
    args: dict[str, Any] = dict(actor=actor(ctx), batch=batch, lot=lot, against=against,
                                balance=balance, burette=burette, temperature=temp, blank=blank,
                                indicator=indicator, at=at, late_reason=late_reason,
                                repeatability=repeatability, reaction=reaction)
    replicates: list[Any] = list(rep or [])
    if not replicates:
        replicates = _ask(db, args, runs, secondary=against is not None, quiet=as_json)
    res = runs.standardize(db, replicates=replicates, **args)
    if as_json:
        output.emit_json(res.to_json())
        return
    out = output.console()
    out.print(f"run [bold]{res.run}[/bold] of batch {res.batch}: {res.status} "
              f"(checks: {res.verdict})")
    render_result(out, res)


def _ask(db: Any, args: dict[str, Any], runs: Any, *, secondary: bool, quiet: bool) -> list[Any]:
    """Ask the temperature (offering the last one used), then the replicates one at a time
    with the running result after each; show the whole result with its checks and
    record only after a confirmation. An empty first answer records nothing."""
    out = output.console(stderr=quiet)
    if args["temperature"] is None:
        args["temperature"] = _ask_temperature(db, args["batch"], runs, out)
    asked = "aliquot (mL)" if secondary else "mass of standard (g)"
    out.print(f"Enter each replicate as {asked} and titrant volume (mL); "
              "an empty line ends.")
    if args["balance"] and not secondary:
        out.print(f"For the mass, type b to read it from balance {args['balance']}; for the "
                  "volume, @FILE takes it from a recorded curve.")
    reps: list[Any] = []
    while True:
        n = len(reps) + 1
        a = typer.prompt(f"replicate {n} {asked}", default="", show_default=False).strip()
        if not a:
            if not reps:
                raise InvalidInput("no replicates: nothing recorded")
            break
        amount = amount_or_reading(db, out, a, args["balance"], n, secondary)
        if amount is None:
            continue
        v = typer.prompt(f"replicate {n} titrant volume (mL)").strip()
        try:
            trial = reps + [replicate_of(amount, v, n)]
            res = runs.standardize(db, replicates=trial, record=False, **args)
        except InvalidInput as exc:
            out.print(f"[bold]not taken:[/bold] {output.escape(str(exc))}")
            continue
        reps = trial
        out.print(f"  running: N = {output.sig(res.normality, 5)} eq/L, factor "
                  f"{res.factor:.4f}, RSD {output.fixed(res.rsd_percent, 3)} % "
                  f"(n = {len(reps)})")
    res = runs.standardize(db, replicates=reps, record=False, **args)
    out.print(f"\nTo be recorded: {len(reps)} replicate(s) of batch {res.batch} "
              f"(checks: {res.verdict})")
    render_result(out, res)
    if not typer.confirm("Record this run?", default=False, err=quiet):
        raise InvalidInput("not confirmed: nothing recorded")
    return reps


def _ask_temperature(db: Any, batch: str, runs: Any, out: Any) -> str:
    """The titrant's temperature, offering the last one used for this batch or spec."""
    last = runs.last_temperature(db, batch)
    offer = f" [Enter: {last}, the last used for this batch or spec]" if last else ""
    while True:
        text = typer.prompt(f"titrant temperature (C){offer}", default="",
                            show_default=False).strip() or (last or "")
        if not text:
            raise InvalidInput("no temperature given: nothing recorded")
        try:
            return str(runs.parse_temperature(text).text)
        except InvalidInput as exc:
            out.print(f"[bold]not taken:[/bold] {output.escape(str(exc))}")
