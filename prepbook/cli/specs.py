"""prepbook spec: the solutions the lab keeps, built-in and its own."""

from __future__ import annotations

from typing import TYPE_CHECKING

import typer

from prepbook.cli import output
from prepbook.cli.session import actor, database

if TYPE_CHECKING:
    from prepbook.lab.specs import SpecInfo

app = typer.Typer(
    help="List solution specs and add the lab's own.",
    no_args_is_help=True,
    rich_markup_mode=None,
)


@app.command("list")
def list_(ctx: typer.Context,
          as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """List solution specs with their acceptance rules and intervals."""
    from prepbook.lab import specs

    rows = specs.list_specs(database(ctx))
    if as_json:
        output.emit_json(rows)
        return
    # The code (typed in other commands), the standard and the numbers stay whole; the
    # name and indicator wrap. Short headings, so the whole columns fit in 80.
    out = output.console()
    output.show(out, output.table(
        "Solution specs (RSD: largest %; restd., shelf: days)",
        ["code", "name", "standard", "indicator", "RSD", "factor window", "restd.",
         "shelf"],
        [(r.code, r.name, r.standard or "-", r.indicator or "-",
          f"{r.max_rsd_percent:g}", f"{r.factor_low:.3f}-{r.factor_high:.3f}",
          r.restandardize_days, r.shelf_life_days) for r in rows],
        right=(4, 6, 7), no_wrap=(0, 2, 4, 5, 6, 7)))


@app.command("add")
def add(
    ctx: typer.Context,
    code: str = typer.Argument(
        ..., metavar="CODE", help="Code: solute and strength, e.g. NaOH-0.5N."
    ),
    solute: str = typer.Option(
        ..., "--solute", metavar="SUBSTANCE", help="Titrant solute (catalog code or name)."
    ),
    nominal: str = typer.Option(..., "--nominal", metavar="NUMBER", help="Nominal concentration."),
    unit: str = typer.Option("N", "--unit", metavar="UNIT", help="N (normality) or M (molarity)."),
    name: str = typer.Option(None, "--name", metavar="NAME", help="Name shown on labels."),
    reaction: str = typer.Option(
        None, "--reaction", metavar="NAME", help="Reaction name, if not the usual."
    ),
    standard: str = typer.Option(
        None, "--standard", metavar="SUBSTANCE", help="Default primary standard."
    ),
    indicator: str = typer.Option(None, "--indicator", metavar="NAME", help="Default indicator."),
    min_replicates: str = typer.Option(
        "3", "--min-replicates", metavar="N", help="Fewest replicates."
    ),
    rsd: str = typer.Option("0.2", "--rsd", metavar="PERCENT", help="Largest RSD, %."),
    factor_low: str = typer.Option(
        "0.90", "--factor-low", metavar="NUMBER", help="Lowest acceptable factor."
    ),
    factor_high: str = typer.Option(
        "1.10", "--factor-high", metavar="NUMBER", help="Highest acceptable factor."
    ),
    drift: str = typer.Option(
        "0.5", "--drift", metavar="PERCENT", help="Largest change between standardizations, %."
    ),
    restandardize_days: str = typer.Option(
        "30", "--restandardize-days", metavar="DAYS", help="Interval, days."
    ),
    shelf_life_days: str = typer.Option(
        "180", "--shelf-life-days", metavar="DAYS", help="Shelf life, days."
    ),
    storage: str = typer.Option(None, "--storage", metavar="TEXT", help="How to store it."),
    solvent: str = typer.Option(
        None, "--solvent", metavar="NAME",
        help="The solvent, if not water: one the catalog knows (glacial acetic acid) brings "
             "its cubic expansion; another needs --expansion."
    ),
    expansion: str = typer.Option(
        None, "--expansion", metavar="PER_C",
        help="The solvent's cubic expansion coefficient per C, carrying runs to 20 C "
             "(with --expansion-source)."
    ),
    expansion_source: str = typer.Option(
        None, "--expansion-source", metavar="TEXT",
        help="Where the expansion coefficient comes from."
    ),
    repeatability: str = typer.Option(
        None, "--repeatability", metavar="RSD%",
        help="Validated repeatability, relative SD of one result in % (at most 5), used in "
             "the budget of each run on this spec that gives none (with --repeatability-source)."
    ),
    repeatability_source: str = typer.Option(
        None, "--repeatability-source", metavar="TEXT",
        help="The validation the repeatability comes from."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the spec as JSON."),
) -> None:
    """Add the lab's own solution spec (reviewer or admin)."""
    from prepbook.lab import specs

    sp = specs.add_spec(database(ctx), actor=actor(ctx), code=code, solute=solute,
                        nominal=nominal, unit=unit, name=name, reaction=reaction,
                        standard=standard, indicator=indicator,
                        min_replicates=output.whole(min_replicates, "--min-replicates"),
                        max_rsd_percent=rsd, factor_low=factor_low, factor_high=factor_high,
                        drift_limit_percent=drift,
                        restandardize_days=output.whole(restandardize_days,
                                                        "--restandardize-days"),
                        shelf_life_days=output.whole(shelf_life_days, "--shelf-life-days"),
                        storage=storage, solvent=solvent, expansion_per_c=expansion,
                        expansion_source=expansion_source, repeatability=repeatability,
                        repeatability_source=repeatability_source)
    if as_json:
        output.emit_json(sp)
    else:
        output.console().print(f"added spec [bold]{sp.code}[/bold] ({output.text(sp.name)})")


@app.command("show")
def show(ctx: typer.Context,
         code: str = typer.Argument(..., metavar="CODE", help="The spec's code."),
         as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """One spec: its rules, solvent and validated repeatability, with their sources."""
    from prepbook.lab import specs

    sp = specs.show_spec(database(ctx), code)
    if as_json:
        output.emit_json(sp)
        return
    out = output.console()
    t = output.text
    whose = "built-in" if sp.builtin else "the lab's own"
    out.print(f"[bold]{t(sp.code)}[/bold]  {t(sp.name)} ({whose})")
    out.print(f"solute {t(sp.solute)}, {sp.nominal:g} {sp.unit}, standard "
              f"{t(sp.standard or '-')}, indicator {t(sp.indicator or '-')}")
    out.print(f"replicates >= {sp.min_replicates}, RSD <= {sp.max_rsd_percent:g} %, factor "
              f"{sp.factor_low:.3f}-{sp.factor_high:.3f}, drift <= {sp.drift_limit_percent:g} %")
    out.print(f"restandardize every {sp.restandardize_days} days, shelf life "
              f"{sp.shelf_life_days} days")
    out.print(f"solvent: {solvent_line(sp)}")
    rsd = (f"{sp.repeatability_rsd_percent:g} % "
           f"({t(sp.repeatability_source or 'no source recorded')})"
           if sp.repeatability_rsd_percent is not None
           else "none (runs use their replicates' scatter)")
    out.print(f"validated repeatability: {rsd}")
    if sp.storage:
        out.print(f"storage: {t(sp.storage)}")


def solvent_line(sp: SpecInfo) -> str:
    """How the spec's titrant is carried between temperatures, as `spec show` says it: a
    spec whose runs are refused for want of its solvent's expansion says so and why,
    never that it is carried as water."""
    t = output.text
    if sp.expansion_per_c is not None:
        return (f"{t(sp.solvent)}'s cubic expansion {sp.expansion_per_c:g} per C "
                f"({t(sp.expansion_source or 'no source recorded')})")
    if sp.expansion_refused is not None:
        return (f"[yellow]{t(sp.solvent)}: standardizations on this spec are refused: "
                f"{t(sp.expansion_refused)}[/yellow]")
    return f"{t(sp.solvent)} (water's density)"
