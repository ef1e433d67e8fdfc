"""prepbook calc: the computations, without a database.

Each command parses its options, calls one function of ``prepbook.lab.calcs``
(which joins the catalog to the chemistry core) and renders the plain result as
JSON or as a table.
"""

from __future__ import annotations

from collections.abc import Iterator, MutableMapping, Sequence
from pathlib import Path
from typing import Any

import typer
from typer.core import TyperGroup

from prepbook.cli import output

#: Commands of this group defined in another module (under prepbook.cli), imported on
#: first use, listed in this order after those defined here.
LATER = {"solid": "calc_prepare", "liquid": "calc_prepare", "dilute": "calc_prepare",
         "adjust": "calc_prepare", "buoyancy": "calc_prepare", "sample": "calc_sample",
         "eqpoint": "calc_sample", "salt": "calc_sample"}


class _Later(MutableMapping[str, Any]):
    """The group's commands: those defined here, then ``LATER``, each loaded (by the
    root's own ``load``) when first looked up, so ``calc normality`` never imports them."""

    def __init__(self, commands: MutableMapping[str, Any]) -> None:
        self._commands = commands

    def __getitem__(self, name: str) -> Any:
        if name not in self._commands and name in LATER:
            from prepbook.cli.app import Entry, load

            self._commands[name] = load(Entry(name, LATER[name], name, False, ""))
        return self._commands[name]

    def __setitem__(self, name: str, command: Any) -> None:
        self._commands[name] = command

    def __delitem__(self, name: str) -> None:
        del self._commands[name]

    def __iter__(self) -> Iterator[str]:
        return iter([*self._commands, *(n for n in LATER if n not in self._commands)])

    def __len__(self) -> int:
        return len(set(self._commands) | set(LATER))


class _CalcGroup(TyperGroup):
    def __init__(self, **attrs: Any) -> None:
        super().__init__(**attrs)
        self.commands = _Later(self.commands)


app = typer.Typer(
    rich_markup_mode=None,
    cls=_CalcGroup,
    help="Compute without a database: normality, preparation, corrections, curves.",
    no_args_is_help=True,
)

JSON = typer.Option(False, "--json", help="Print one JSON document instead of a table.")
BURETTE_TOLERANCE = typer.Option(
    "0.05", "--burette-tolerance", metavar="ML",
    help="Burette tolerance, +/- mL (Class A 50 mL: 0.05)."
)
TEMP_RANGE = typer.Option(
    "3", "--temp-range", metavar="C", help="Laboratory temperature variation, +/- degrees C."
)
SOLVENT = typer.Option(
    None, "--solvent", metavar="NAME",
    help="The titrant's solvent: water, or one the catalog knows (glacial acetic acid), "
         "carried with its stated cubic expansion; another needs --expansion."
)
EXPANSION = typer.Option(
    None, "--expansion", metavar="PER_C",
    help="The solvent's cubic expansion coefficient per C (with --solvent and "
         "--expansion-source)."
)
EXPANSION_SOURCE = typer.Option(
    None, "--expansion-source", metavar="TEXT",
    help="Where the expansion coefficient comes from (required with --expansion)."
)
REPEATABILITY = typer.Option(
    None, "--repeatability", metavar="RSD%",
    help="Validated repeatability, relative SD of one result in % (at most 5; e.g. from the "
         "method validation); used in the budget instead of the replicates' scatter."
)


def _expansion_used(solvent: str | None, per_c: float | None) -> str:
    """How a normality was carried between temperatures, in words."""
    return (f"{output.text(solvent or '')}'s cubic expansion {per_c:g} per C"
            if per_c is not None else "water's density")


def _notes(out: Any, notes: Sequence[str]) -> None:
    for note in notes:
        out.print(f"note: {note}", markup=False)


@app.command("normality")
def normality(
    standard: str = typer.Option(
        ..., "--standard", metavar="SUBSTANCE", help="Primary standard: code, name or formula."
    ),
    rep: list[str] = typer.Option(
        ..., "--rep", metavar="MASS:VOL",
        help="One replicate (g of standard : mL of titrant). Repeat."
    ),
    titrant: str = typer.Option(
        None, "--titrant", metavar="SUBSTANCE",
        help="Titrant solute; gives the reaction and the molarity."
    ),
    purity: str = typer.Option(
        "100", "--purity", metavar="PERCENT", help="Certified purity of the standard."
    ),
    purity_u: str = typer.Option(
        None,
        "--purity-u",
        metavar="PERCENT",
        help="Standard uncertainty of the purity, % (default: +/-0.05 % taken as rectangular).",
    ),
    blank: str = typer.Option("0", "--blank", metavar="ML", help="Blank titration volume, mL."),
    buoyancy: bool = typer.Option(
        False, "--buoyancy", help="Correct each weighing for air buoyancy (NIST SOP 2)."
    ),
    linearity: str = typer.Option(
        "0.15", "--linearity", metavar="MG", help="Balance linearity, +/- mg (each weighing)."
    ),
    burette_tolerance: str = BURETTE_TOLERANCE,
    burette_capacity: str = typer.Option(
        None, "--burette-capacity", metavar="ML",
        help="Burette capacity, mL: warns below 30 % of it."
    ),
    temp_range: str = TEMP_RANGE,
    repeatability: str = REPEATABILITY,
    reaction: str = typer.Option(
        None, "--reaction", metavar="NAME",
        help="The standard's reaction, by name, where it has more than one (sodium "
             "carbonate: acid-base-first, n = 1, to the first endpoint); default: the one "
             "that pairs with the titrant."
    ),
    temp: str = typer.Option(
        None, "--temp", metavar="C",
        help="Temperature of the standardization, C: the normality is also carried to "
             "20 C with the titrant's solvent (--spec or --solvent; default water, "
             "refused for a titrant the catalog makes only in another solvent)."
    ),
    spec: str = typer.Option(None, "--spec", metavar="SPEC", help="The titrant's spec "
                             "(e.g. HClO4-0.1N): a non-aqueous one expands like its solvent."),
    solvent: str = SOLVENT,
    expansion: str = EXPANSION,
    expansion_source: str = EXPANSION_SOURCE,
    as_json: bool = JSON,
) -> None:
    """Normality of a titrant from replicate titrations of a weighed primary standard."""
    from prepbook.lab import calcs

    result = calcs.normality(
        standard=standard,
        replicates=rep,
        titrant=titrant,
        purity_percent=purity,
        purity_u_percent=purity_u,
        blank_ml=blank,
        buoyancy=buoyancy,
        linearity_mg=linearity,
        burette_tolerance_ml=burette_tolerance,
        burette_capacity_ml=burette_capacity,
        temperature_range_c=temp_range,
        repeatability_percent=repeatability,
        reaction=reaction,
        temperature_c=temp,
        spec=spec,
        solvent=solvent,
        expansion_per_c=expansion,
        expansion_source=expansion_source,
    )
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    out.print(
        f"[bold]{result.standard.name}[/bold] ({result.standard.formula}), "
        f"M = {result.standard.molar_mass_g_per_mol:.4f} g/mol, "
        f"n = {result.standard.n_eq_per_mol:g} eq/mol ({result.reaction}), "
        f"purity {result.standard.purity_percent:g} %"
    )
    buoyant = result.buoyancy
    rows = [
        (
            r.index,
            r.mass_g,
            *([output.fixed(r.true_mass_g, 5)] if buoyant else []),
            r.volume_ml,
            output.sig(r.normality, 5),
            "outlier" if r.outlier else "",
        )
        for r in result.replicates
    ]
    heads = ["#", "mass (g)", *(["true mass (g)"] if buoyant else []), "titrant (mL)",
             "normality (eq/L)", "flag"]
    out.print(output.table("Replicates", heads, rows, right=range(len(heads) - 1)))
    line = (
        f"[bold]N = {output.sig(result.normality, 5)} eq/L[/bold]  "
        f"(n = {len(result.replicates)}, SD = {output.sig(result.sd, 2)}, "
        f"RSD = {output.fixed(result.rsd_percent, 3)} %)"
    )
    out.print(line)
    if result.molarity is not None:
        out.print(f"molarity of the titrant: {output.sig(result.molarity, 5)} mol/L")
    if result.normality_20c is not None and result.temperature_c is not None:
        out.print(f"N(20 C) = [bold]{output.sig(result.normality_20c, 5)} eq/L[/bold], "
                  f"carried from {result.temperature_c:g} C with "
                  f"{_expansion_used(result.solvent, result.expansion_per_c)} "
                  f"({output.text(result.expansion_source or '')})")
    from prepbook.cli.budget_view import uncertainty

    uncertainty(out, result.u, result.U, result.k, result.budget)
    _notes(out, result.uncertainty_notes)
    output.warn_lines(output.console(stderr=True), result.warnings)  # one line each


@app.command("secondary")
def secondary(
    reference_normality: str = typer.Option(
        ..., "--reference-normality", metavar="EQ/L",
        help="Normality of the standardized reference, eq/L."
    ),
    aliquot: str = typer.Option(
        ..., "--aliquot", metavar="ML", help="Aliquot of the reference pipetted, mL."
    ),
    rep: list[str] = typer.Option(
        ..., "--rep", metavar="ML",
        help="mL of the solution being standardized at each endpoint. Repeat."
    ),
    blank: str = typer.Option("0", "--blank", metavar="ML", help="Blank titration volume, mL."),
    reference_u: str = typer.Option(
        None, "--reference-u", metavar="EQ/L",
        help="Standard uncertainty of the reference's normality, eq/L (its record's u); "
             "without it the budget names it missing."
    ),
    pipette_tolerance: str = typer.Option(
        "0.03", "--pipette-tolerance", metavar="ML",
        help="Pipette tolerance, +/- mL (Class A 25 mL: 0.03)."
    ),
    burette_tolerance: str = BURETTE_TOLERANCE,
    temp_range: str = TEMP_RANGE,
    repeatability: str = REPEATABILITY,
    as_json: bool = JSON,
) -> None:
    """Normality against an already standardized solution (N1 V1 = N2 V2), with the
    reference's uncertainty, the pipette, the burette and repeatability in its budget."""
    from prepbook.lab import calcs

    result = calcs.secondary(
        reference_normality=reference_normality, aliquot_ml=aliquot, volumes=rep,
        blank_ml=blank, reference_u=reference_u, pipette_tolerance_ml=pipette_tolerance,
        burette_tolerance_ml=burette_tolerance, temperature_range_c=temp_range,
        repeatability_percent=repeatability,
    )
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    rows = [
        (r.index, r.aliquot_ml, r.volume_ml, output.sig(r.normality, 5),
         "outlier" if r.outlier else "")
        for r in result.replicates
    ]
    out.print(output.table("Replicates", ["#", "aliquot (mL)", "titrant (mL)", "normality (eq/L)",
                                          "flag"], rows, right=(0, 1, 2, 3)))
    out.print(
        f"[bold]N = {output.sig(result.normality, 5)} eq/L[/bold]  "
        f"(SD = {output.sig(result.sd, 2)}, RSD = {output.fixed(result.rsd_percent, 3)} %)"
    )
    from prepbook.cli.budget_view import uncertainty

    uncertainty(out, result.u, result.U, result.k, result.budget)
    _notes(out, result.uncertainty_notes)
    output.warn_lines(out, result.warnings)


@app.command("temperature")
def temperature(
    normality: str = typer.Option(
        ..., "--normality", metavar="EQ/L", help="Normality at the first temperature."
    ),
    from_c: str = typer.Option(
        ..., "--from", metavar="C", help="Temperature of standardization, C."
    ),
    to_c: str = typer.Option(..., "--to", metavar="C", help="Temperature of use, C."),
    spec: str = typer.Option(None, "--spec", metavar="SPEC", help="The titrant's spec "
                             "(e.g. HClO4-0.1N): a non-aqueous one expands like its solvent."),
    solvent: str = SOLVENT,
    expansion: str = EXPANSION,
    expansion_source: str = EXPANSION_SOURCE,
    as_json: bool = JSON,
) -> None:
    """Normality at another temperature (water's density, or the solvent's expansion)."""
    from prepbook.lab import preparing

    result = preparing.temperature(normality_text=normality, from_text=from_c, to_text=to_c,
                                   spec=spec, solvent=solvent, expansion_text=expansion,
                                   expansion_source=expansion_source)
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    out.print(
        f"N = [bold]{output.sig(result.normality, 6)} eq/L[/bold] at {result.to_c:g} C "
        f"(factor {result.ratio:.6f} from {result.from_c:g} C)"
    )
    used = _expansion_used(result.solvent, result.expansion_per_c)
    out.print(f"carried with {used} ({output.text(result.expansion_source)})")


@app.command("titer")
def titer(
    titrant: str = typer.Option(..., "--titrant", metavar="SUBSTANCE", help="Titrant solute."),
    normality: str = typer.Option(
        ..., "--normality", metavar="EQ/L", help="Normality of the titrant, eq/L."
    ),
    analyte: str = typer.Option(
        ..., "--analyte", metavar="SUBSTANCE", help="Analyte: code, name or formula."
    ),
    as_json: bool = JSON,
) -> None:
    """Titer: mg of an analyte equivalent to 1 mL of the titrant."""
    from prepbook.lab import preparing

    result = preparing.titer(titrant=titrant, normality_text=normality, analyte=analyte)
    if as_json:
        output.emit_json(result)
        return
    output.console().print(
        f"1 mL of {output.sig(result.normality, 4)} N {result.titrant} is equivalent to "
        f"[bold]{output.sig(result.mg_per_ml, 5)} mg[/bold] of {result.analyte} "
        f"({result.reaction})"
    )


@app.command("endpoint")
def endpoint(
    file: Path = typer.Argument(
        ..., metavar="FILE",
        help="A meter's export: a header naming volume (mL) and pH or mV, in either order; "
             "metadata lines above it, ';' and decimal commas are read.", show_default=False
    ),
    sample_ml: str = typer.Option(
        None, "--sample-ml", metavar="ML",
        help="Volume in the vessel before titrant (Gran after the end)."
    ),
    from_ml: str = typer.Option(None, "--from", metavar="ML", help="Window: from this mL."),
    to_ml: str = typer.Option(None, "--to", metavar="ML", help="Window: up to this mL."),
    search: str = typer.Option(None, "--between", metavar="ML:ML",
                               help="The window as one option, e.g. 5:15."),
    smoothing: str = typer.Option(None, "--smoothing", metavar="ML",
                                  help="Span of the derivative filter that finds the "
                                       "endpoints, mL (default 7 steps as recorded on "
                                       "the jump)."),
    as_json: bool = JSON,
) -> None:
    """Every endpoint (inflection) of a recorded titration curve, with its uncertainty,
    and Gran's estimate beside the last one."""
    from prepbook.lab import curves

    result = curves.endpoint(file, sample_ml_text=sample_ml, from_text=from_ml, to_text=to_ml,
                             between_text=search, smoothing_text=smoothing)
    if as_json:
        output.emit_json(result)
        return
    out = output.console()
    rows = [(e.index, output.fixed(e.volume_ml, 3), output.fixed(e.u_ml, 3),
             output.fixed(e.reading, 2 if result.kind == "pH" else 1), output.sig(e.slope, 3))
            for e in result.endpoints]
    where = ("" if result.window_ml is None
             else f" between {result.window_ml[0]:g} and {result.window_ml[1]:g} mL")
    out.print(output.table(f"Endpoints{where} ({result.points} points)",
                           ["#", "volume (mL)", "u (mL)", result.kind,
                            f"slope ({result.kind}/mL)"], rows, right=(0, 1, 2, 3, 4)))
    out.print(f"equivalence volume [bold]{output.fixed(result.equivalence_ml, 3)} mL[/bold] "
              f"(u = {output.fixed(result.u_ml, 3)} mL, endpoint #{len(result.endpoints)})")
    if result.gran_ml is not None and result.gran_tolerance_ml is not None:
        out.print(f"Gran estimate {output.fixed(result.gran_ml, 3)} mL beside "
                  f"{output.fixed(result.equivalence_ml, 3)} mL: "
                  f"{'agree' if result.gran_agrees else 'DISAGREE'} (difference "
                  f"{abs(result.gran_ml - result.equivalence_ml):.3f} mL, tolerance "
                  f"{result.gran_tolerance_ml:.3f} mL)")
    _notes(out, result.notes)
