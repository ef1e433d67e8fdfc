"""prepbook calc sample, eqpoint and salt: a sample's titration and its equilibria.

Commands of the ``calc`` group, kept apart from ``prepbook.cli.calc`` so that the
group's light commands (``calc normality``) do not import them; ``calc`` loads this
module only when one of these commands is used or listed. Each parses its options,
calls one service function and renders the plain result.
"""

from __future__ import annotations

from typing import Any

import typer

from prepbook.cli import output
from prepbook.cli.budget_view import budget_table as _budget_table
from prepbook.cli.calc import JSON, _notes


def sample(
    analyte: str = typer.Option(
        ..., "--analyte", metavar="NAME",
        help="Analyte: code, name or alias from the catalog (e.g. chloride, hardness)."),
    titrant: str = typer.Option(
        ..., "--titrant", metavar="SOLUTE", help="Titrant solute: code, name or formula."),
    rep: list[str] = typer.Option(
        ..., "--rep", metavar="ML", help="mL of titrant at one endpoint. Repeat."),
    normality: str = typer.Option(
        None, "--normality", metavar="EQ/L", help="Titrant normality, eq/L."),
    molarity: str = typer.Option(
        None, "--molarity", metavar="MOL/L", help="Titrant molarity, mol/L (instead)."),
    normality_u: str = typer.Option(
        None, "--normality-u", metavar="U",
        help="Expanded uncertainty (k = 2) of the titrant's strength, in its unit."),
    aliquot: list[str] = typer.Option(
        None, "--aliquot", metavar="ML",
        help="Sample aliquot, mL: once for all replicates, or once per --rep."),
    mass: list[str] = typer.Option(
        None, "--mass", metavar="G",
        help="Weighed sample, g (instead of --aliquot): once, or once per --rep."),
    blank: str = typer.Option("0", "--blank", metavar="ML", help="Blank titration, mL."),
    method: str = typer.Option(
        None, "--method", metavar="NAME",
        help="The analyte's method, where it has several (e.g. Mohr, Fajans, Volhard)."),
    excess_ml: str = typer.Option(
        None, "--excess-volume", metavar="ML",
        help="Back-titration: mL of the excess reagent added to each sample."),
    excess_normality: str = typer.Option(
        None, "--excess-normality", metavar="EQ/L",
        help="Back-titration: normality of the excess reagent, eq/L."),
    excess_u: str = typer.Option(
        None, "--excess-normality-u", metavar="U",
        help="Back-titration: expanded uncertainty (k = 2) of that normality, eq/L."),
    burette_tolerance: str = typer.Option(
        "0.05", "--burette-tolerance", metavar="ML", help="Burette tolerance, +/- mL."),
    burette_capacity: str = typer.Option(
        None, "--burette-capacity", metavar="ML",
        help="Burette capacity, mL: warns below 30 % of it."),
    pipette_tolerance: str = typer.Option(
        "0.03", "--pipette-tolerance", metavar="ML", help="Pipette tolerance, +/- mL."),
    linearity: str = typer.Option(
        "0.15", "--linearity", metavar="MG", help="Balance linearity, +/- mg (weighed)."),
    temp_range: str = typer.Option(
        "3", "--temp-range", metavar="C", help="Laboratory temperature variation, +/- C."),
    repeatability: str = typer.Option(
        None, "--repeatability", metavar="RSD%",
        help="Validated repeatability of one result, relative SD in %."),
    as_json: bool = JSON,
) -> None:
    """A sample's result from a standardized titrant: concentration or mass fraction."""
    from prepbook.lab import sample_calcs

    result = sample_calcs.sample(
        analyte=analyte, titrant=titrant, volumes=rep, normality=normality, molarity=molarity,
        normality_u=normality_u, aliquot=aliquot, mass=mass, blank_ml=blank, method=method,
        excess_normality=excess_normality, excess_normality_u=excess_u, excess_ml=excess_ml,
        burette_tolerance_ml=burette_tolerance, pipette_tolerance_ml=pipette_tolerance,
        linearity_mg=linearity, temperature_range_c=temp_range,
        repeatability_percent=repeatability, burette_capacity_ml=burette_capacity)
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    out.print(f"[bold]{result.analyte_name}[/bold] ({result.method}), titrant "
              f"{result.titrant} {output.sig(result.titrant_normality, 5)} N")
    unit = "%" if result.sample_kind == "mass" else (
        result.concentration.unit if result.concentration else "")
    amount = "sample (g)" if result.sample_kind == "mass" else "aliquot (mL)"
    rows = [(r.index, r.sample, r.titrant_ml, output.sig(r.value, 5),
             "excluded" if r.excluded else "outlier" if r.outlier else "")
            for r in result.replicates]
    out.print(output.table("Replicates", ["#", amount, "titrant (mL)", f"result ({unit})",
                                          "flag"], rows, right=(0, 1, 2, 3)))
    as_text = f" as {result.reported_as}" if result.reported_as else ""
    if result.concentration is not None:
        head = (f"{output.sig(result.concentration.value, 5)} {result.concentration.unit}"
                f"{as_text}")
    else:
        head = f"{output.sig(result.mass_fraction_percent, 5)} % w/w{as_text}"
    out.print(f"[bold]{head}[/bold]  (SD = {output.sig(result.sd, 2)}, RSD = "
              f"{output.fixed(result.rsd_percent, 3)} %)")
    if result.normality is not None and result.molarity is not None:
        out.print(f"analyte: {output.sig(result.normality, 5)} eq/L, "
                  f"{output.sig(result.molarity, 5)} mol/L")
    gaps = [line.quantity for line in result.budget if line.missing is not None]
    out.print(f"u = {output.sig(result.u, 2)}, U = {output.sig(result.U, 2)} {unit} "
              f"(k = {result.k:g})" + (f", incomplete: {', '.join(gaps)} missing"
                                       if gaps else ""))
    out.print(_budget_table(result.budget, unit))
    out.print(result.equivalence_statement, markup=False)
    _notes(out, result.uncertainty_notes)
    output.warn_lines(out, result.warnings)


def eqpoint(
    standard: str = typer.Option(
        None, "--standard", metavar="SUBSTANCE", help="Primary standard (acid or base)."
    ),
    analyte: str = typer.Option(
        None, "--analyte", metavar="NAME",
        help="Or a sample's analyte (acid or base) from the catalog, e.g. acetic acid."
    ),
    titrant: str = typer.Option(
        ..., "--titrant", metavar="SUBSTANCE", help="Titrant solute (strong acid or base)."
    ),
    concentration: str = typer.Option(
        ..., "--concentration", metavar="MOL/L",
        help="Concentration of the salt at equivalence, mol/L."
    ),
    titrant_concentration: str = typer.Option(
        None, "--titrant-concentration", metavar="EQ/L",
        help="Titrant, eq/L: mol/L of H+ or OH- (0.05 M Ba(OH)2 is 0.1); default: the "
             "sample's volume equal to the equivalence volume."
    ),
    method: str = typer.Option(
        None, "--method", metavar="NAME",
        help="With --analyte: its method, e.g. 'to hydrogen carbonate' (the first endpoint)."
    ),
    co2_removed: bool = typer.Option(False, "--boil-co2", help="CO2 boiled off near the "
                                     "endpoint (a carbonate titrated with an acid to CO2)."),
    tolerance: str = typer.Option(
        None, "--tolerance", metavar="PERCENT",
        help="Titration error, % of the equivalence volume, within which an indicator is "
             "advised (default 0.1)."
    ),
    reaction: str = typer.Option(
        None, "--reaction", metavar="NAME",
        help="With --standard: its reaction where it has more than one (sodium carbonate: "
             "acid-base-first, to the first endpoint)."
    ),
    as_json: bool = JSON,
) -> None:
    """pH at the equivalence point, and each indicator judged by its titration error."""
    from prepbook.errors import InvalidInput

    if (standard is None) == (analyte is None):
        raise InvalidInput("give --standard SUBSTANCE or --analyte NAME (one of them)")
    if reaction is not None and analyte is not None:
        raise InvalidInput("--reaction goes with --standard (an analyte takes --method)")
    if analyte is not None:
        from prepbook.lab import equilibrium_calcs

        result: Any = equilibrium_calcs.eqpoint(
            analyte=analyte, titrant=titrant, concentration_text=concentration,
            titrant_concentration_text=titrant_concentration, method=method,
            co2_removed=co2_removed, tolerance_text=tolerance)
        what = result.method
    else:
        from prepbook.lab import curves

        if method is not None:
            raise InvalidInput("--method goes with --analyte")
        result = curves.eqpoint(standard=standard, titrant=titrant,
                                concentration_text=concentration,
                                titrant_concentration_text=titrant_concentration,
                                co2_removed=co2_removed, tolerance_text=tolerance,
                                reaction=reaction)
        what = result.reaction
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    out.print(f"pH at equivalence [bold]{result.ph:.2f}[/bold] ({what})")
    for point in getattr(result, "points", ()):
        out.print(f"  equivalence point {point.protons}: pH {point.ph:.2f} "
                  f"({output.sig(point.concentration_mol_per_l, 3)} mol/L)")
    rows = [(a.name, f"{a.low_ph:g}-{a.high_ph:g}", f"{a.stop_ph:.2f}",
             "never reached" if a.error_percent is None else f"{a.error_percent:+.3f} %",
             "suitable" if a.suitable else "unsuitable")
            for a in result.indicators]
    out.print(output.table(f"Indicators (advised within +/-{result.tolerance_percent:g} %)",
                           ["indicator", "range (pH)", "stop at pH", "titration error",
                            "advice"], rows, right=(2, 3)))
    out.print("suitable: " + (", ".join(result.suitable) or "none of the catalog's indicators"))
    out.print("unsuitable: " + ", ".join(result.unsuitable))
    _notes(out, result.notes)


def salt(
    cation: str = typer.Argument(..., metavar="CATION", help="Cation: NH4+, Na+, Al3+, ..."),
    anion: str = typer.Argument(..., metavar="ANION", help="Anion: acetate, HCO3-, Cl-, ..."),
    concentration: str = typer.Option(
        "0.1", "--concentration", metavar="MOL/L", help="Salt dissolved, mol/L."),
    as_json: bool = JSON,
) -> None:
    """pH of a salt's solution from its ions' constants: acidic, basic or neutral, and why."""
    from prepbook.lab import equilibrium_calcs

    result = equilibrium_calcs.salt(cation=cation, anion=anion,
                                    concentration_text=concentration)
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    out.print(f"{result.formula}, {output.sig(result.concentration_mol_per_l, 3)} mol/L: "
              f"pH [bold]{result.ph:.2f}[/bold], {result.nature}"
              + (f" ({result.governing} governs)" if result.governing else ""))
    out.print(result.reason, markup=False)
    for source in result.sources:
        out.print(f"constants: {source}", markup=False)
