"""prepbook lot: primary-standard, solute and concentrate lots and their certificates."""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.session import actor, database

app = typer.Typer(
    help="Add and list primary-standard lots.",
    no_args_is_help=True,
    rich_markup_mode=None,
)


@app.command("add")
def add(
    ctx: typer.Context,
    material: str = typer.Argument(
        ..., metavar="SUBSTANCE",
        help="Material: code, name or formula (e.g. KHP); with --density a concentrated "
             "reagent (e.g. HCl-conc)."
    ),
    code: str = typer.Option(..., "--code", metavar="CODE", help="Lot code, as on the bottle."),
    purity: str = typer.Option(
        ..., "--purity", "--assay", metavar="PERCENT",
        help="Certified purity, %; for a concentrate its assay, % w/w."
    ),
    purity_u: str = typer.Option(
        None, "--purity-u", metavar="PERCENT", help="Certified uncertainty of purity, %."
    ),
    expires: str = typer.Option(..., "--expires", metavar="DATE", help="Expiry date, YYYY-MM-DD."),
    certificate: str = typer.Option(
        None, "--certificate", metavar="TEXT", help="Certificate number or note."
    ),
    dried: str = typer.Option(None, "--dried", metavar="DATE", help="Date dried, YYYY-MM-DD."),
    opened: str = typer.Option(None, "--opened", metavar="DATE", help="Date opened, YYYY-MM-DD."),
    density: str = typer.Option(
        None, "--density", metavar="G/ML",
        help="A concentrate's density, g/mL, from its certificate (makes it a concentrate lot)."
    ),
    as_json: bool = typer.Option(False, "--json", help="Print the lot as JSON."),
) -> None:
    """Record a lot of a primary standard, a solute or a concentrate (with --density)."""
    from prepbook.lab import lots

    lot = lots.add_lot(database(ctx), actor=actor(ctx), material=material, code=code,
                       purity=purity, purity_u=purity_u, expires=expires,
                       certificate=certificate, dried=dried, opened=opened, density=density)
    if as_json:
        output.emit_json(lot)
        return
    out = output.console()
    strength = (f"assay {lot.purity_percent} % w/w, density {lot.density_g_per_ml} g/mL"
                if lot.density_g_per_ml is not None else f"purity {lot.purity_percent} %")
    out.print(f"lot [bold]{lot.code}[/bold] of {output.text(lot.material)}, {strength}, "
              f"expires {lot.expires}")
    if lot.expired:
        out.print("[bold]warning:[/bold] this lot is already past its expiry date")


@app.command("list")
def list_(ctx: typer.Context,
          as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """List lots with purity, expiry and drying."""
    from prepbook.lab import lots

    rows = lots.list_lots(database(ctx))
    if as_json:
        output.emit_json(rows)
        return
    output.show(output.console(), output.table(
        "Lots (density g/mL of a concentrate)",
        ["code", "material", "purity %", "u %", "density", "expires", "dried", "certificate"],
        [(r.code, r.material, r.purity_percent, r.purity_u_percent, r.density_g_per_ml,
          r.expires + (" (expired)" if r.expired else ""), r.dried_on,
          r.certificate) for r in rows],
        right=(2, 3, 4), no_wrap=(0, 2, 3, 4, 5, 6)))
