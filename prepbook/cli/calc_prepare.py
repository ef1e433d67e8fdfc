"""prepbook calc solid, liquid, dilute, adjust and buoyancy: the preparation calculators.

Commands of the ``calc`` group, kept apart from ``prepbook.cli.calc`` (as
``prepbook.cli.calc_sample`` is) so that ``calc normality`` does not import them; ``calc``
loads this module only when one of these commands is used or listed. Each parses its
options, calls one function of ``prepbook.lab.preparing`` and renders the plain result.
"""

from __future__ import annotations

import typer

from prepbook.cli import output
from prepbook.cli.calc import JSON


def solid(
    solute: str = typer.Argument(
        ..., metavar="SUBSTANCE", help="Solute to weigh: code, name or formula."
    ),
    normality: str = typer.Option(
        ..., "--normality", metavar="EQ/L", help="Wanted normality, eq/L."
    ),
    volume: str = typer.Option(..., "--volume", metavar="ML", help="Final volume, mL."),
    purity: str = typer.Option("100", "--purity", metavar="PERCENT", help="Assay of the solid, %."),
    as_json: bool = JSON,
) -> None:
    """Mass of solid to weigh for a volume of a given normality."""
    from prepbook.lab import preparing

    result = preparing.solid(solute, normality_text=normality, volume_text=volume,
                             purity_text=purity)
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    out.print(
        f"Weigh [bold]{output.fixed(result.mass_g, 4)} g[/bold] of {result.name} "
        f"({result.formula}, M = {result.molar_mass_g_per_mol:.4f} g/mol, "
        f"n = {result.n_eq_per_mol:g}) and make up to {result.volume_ml:g} mL."
    )
    output.caution_lines(out, result.cautions)


def liquid(
    reagent: str = typer.Argument(
        ..., metavar="REAGENT", help="Concentrated reagent: HCl, H2SO4, HNO3, ..."
    ),
    normality: str = typer.Option(
        ..., "--normality", metavar="EQ/L", help="Wanted normality, eq/L."
    ),
    volume: str = typer.Option(..., "--volume", metavar="ML", help="Final volume, mL."),
    fraction: str = typer.Option(
        None, "--fraction", metavar="PERCENT", help="Mass fraction, % (default: catalog)."
    ),
    density: str = typer.Option(
        None, "--density", metavar="G/ML", help="Density, g/mL (default: catalog)."
    ),
    n: str = typer.Option(
        None, "--n", metavar="NUMBER",
        help="Equivalents per mole (default: the catalog's reaction)."
    ),
    as_json: bool = JSON,
) -> None:
    """Volume of a concentrated liquid reagent for a volume of a given normality."""
    from prepbook.lab import preparing

    result = preparing.liquid(reagent, normality_text=normality, volume_text=volume,
                          fraction_text=fraction, density_text=density, n_text=n)
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    out.print(
        f"Measure [bold]{output.fixed(result.volume_ml, 2)} mL[/bold] of {result.name} "
        f"({result.mass_fraction_percent:g} %, {result.density_g_per_ml:g} g/mL, "
        f"{output.sig(result.molarity_mol_per_l, 3)} mol/L) and make up to "
        f"{result.final_volume_ml:g} mL."
    )
    output.caution_lines(out, result.cautions)


def dilute(
    stock: str = typer.Option(
        ..., "--stock", metavar="EQ/L", help="Normality of the stock solution, eq/L."
    ),
    normality: str = typer.Option(
        ..., "--normality", metavar="EQ/L", help="Wanted normality, eq/L."
    ),
    volume: str = typer.Option(..., "--volume", metavar="ML", help="Final volume, mL."),
    as_json: bool = JSON,
) -> None:
    """Volumes of stock and water for a dilution (N1 V1 = N2 V2)."""
    from prepbook.lab import preparing

    result = preparing.dilute(stock_text=stock, normality_text=normality, volume_text=volume)
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    out.print(
        f"Take [bold]{output.fixed(result.stock_ml, 2)} mL[/bold] of stock and make up to "
        f"{result.volume_ml:g} mL (about {output.fixed(result.water_ml, 2)} mL of water)."
    )


def adjust(
    normality: str = typer.Option(
        ..., "--normality", metavar="EQ/L", help="Normality found, eq/L."
    ),
    target: str = typer.Option(
        ..., "--target", metavar="EQ/L", help="Nominal normality wanted, eq/L."
    ),
    volume: str = typer.Option(..., "--volume", metavar="ML", help="Volume of the batch now, mL."),
    stock: str = typer.Option(
        None, "--stock", metavar="EQ/L",
        help="Normality of a stronger stock, when the batch is too weak."
    ),
    as_json: bool = JSON,
) -> None:
    """Water (or stronger stock) to add to bring a standardized batch to nominal."""
    from prepbook.lab import preparing

    result = preparing.adjust(normality_text=normality, target_text=target, volume_text=volume,
                          stock_text=stock)
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    what = "water" if result.add == "water" else "stock"
    out.print(f"Add [bold]{output.fixed(result.volume_ml, 2)} mL of {what}[/bold], mix, "
              "and standardize again.")


def buoyancy(
    mass: str = typer.Option(..., "--mass", metavar="G", help="Balance reading, g."),
    density: str = typer.Option(
        ..., "--density", metavar="G/CM3", help="Density of the sample, g/cm3."
    ),
    air_density: str = typer.Option(
        "0.0012", "--air-density", metavar="G/CM3", help="Air density, g/cm3."
    ),
    weights_density: str = typer.Option(
        "8.0", "--weights-density", metavar="G/CM3", help="Reference weights' density, g/cm3."
    ),
    as_json: bool = JSON,
) -> None:
    """True mass of a weighed sample, corrected for air buoyancy (NIST IR 6969 SOP 2)."""
    from prepbook.lab import preparing

    result = preparing.buoyancy(mass_text=mass, density_text=density, air_text=air_density,
                            weights_text=weights_density)
    if as_json:
        output.emit_json(result)
        return
    output.console().print(
        f"true mass [bold]{output.fixed(result.mass_g, 5)} g[/bold] "
        f"(correction {result.correction_g * 1000:+.3f} mg)"
    )
