"""prepbook lot: primary-standard lots and their certificates."""

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
        ..., metavar="SUBSTANCE", help="Material: code, name or formula (e.g. KHP)."
    ),
    code: str = typer.Option(..., "--code", metavar="CODE", help="Lot code, as on the bottle."),
    purity: str = typer.Option(..., "--purity", metavar="PERCENT", help="Certified purity, %."),
    purity_u: str = typer.Option(
        None, "--purity-u", metavar="PERCENT", help="Certified uncertainty of purity, %."
    ),
    expires: str = typer.Option(..., "--expires", metavar="DATE", help="Expiry date, YYYY-MM-DD."),
    certificate: str = typer.Option(
        None, "--certificate", metavar="TEXT", help="Certificate number or note."
    ),
    dried: str = typer.Option(None, "--dried", metavar="DATE", help="Date dried, YYYY-MM-DD."),
    opened: str = typer.Option(None, "--opened", metavar="DATE", help="Date opened, YYYY-MM-DD."),
    as_json: bool = typer.Option(False, "--json", help="Print the lot as JSON."),
) -> None:
    """Record a lot of a primary standard (or of a solute)."""
    from prepbook.lab import lots

    lot = lots.add_lot(database(ctx), actor=actor(ctx), material=material, code=code,
                       purity=purity, purity_u=purity_u, expires=expires,
                       certificate=certificate, dried=dried, opened=opened)
    if as_json:
        output.emit_json(lot)
        return
    out = output.console()
    out.print(f"lot [bold]{lot.code}[/bold] of {output.text(lot.material)}, purity "
              f"{lot.purity_percent} %, expires {lot.expires}")
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
    output.console().print(output.table(
        "Lots", ["code", "material", "purity %", "u %", "expires", "dried", "certificate"],
        [(r.code, r.material, r.purity_percent, r.purity_u_percent,
          r.expires + (" (expired)" if r.expired else ""), r.dried_on,
          r.certificate) for r in rows]))
