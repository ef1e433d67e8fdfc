"""The database-free equilibrium calculations for samples: ``calc eqpoint --analyte`` and
``calc salt``.

Takes the values as typed, finds the analyte, titrant or ions in the catalog, computes
with ``prepbook.chem.equilibria``, ``chem.indicators`` and ``chem.salts`` and returns
frozen records whose fields are the keys of the commands' JSON. No SQLAlchemy here.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import msgspec

from prepbook.errors import InvalidInput
from prepbook.inputs import parse_number

if TYPE_CHECKING:
    from prepbook.catalog.models import Material, Reaction
    from prepbook.catalog.sample_models import Analyte
    from prepbook.chem.indicators import IndicatorAdvice
    from prepbook.chem.salts import Strength

#: A strong acid or base has no pKa in the catalog; the model gives each of its sites a
#: step far outside water's range, so it is fully dissociated at every pH a vessel holds:
#: an acid's at -10, a base's conjugate acid's at 24 (common practice, no source).
STRONG_ACID_PKA = -10.0
STRONG_BASE_PKA = 24.0
SAMPLE_ML = 50.0  # any volume: the pH and the titration error depend on ratios only


class EquivalencePoint(msgspec.Struct, frozen=True):
    """The solution at one equivalence point: ``protons`` exchanged per formula unit,
    the analyte's formula units per litre there and the pH."""

    protons: int
    concentration_mol_per_l: float
    ph: float


class AnalyteEqpoint(msgspec.Struct, frozen=True):
    """``calc eqpoint --analyte``: the method's equivalence point, each indicator judged
    by its titration error, and every equivalence point of a polyprotic analyte."""

    analyte: str
    titrant: str
    method: str
    n_eq_per_mol: float
    concentration_mol_per_l: float
    ph: float
    suitable: tuple[str, ...]
    unsuitable: tuple[str, ...]
    titrant_concentration_mol_per_l: float
    sample_concentration_mol_per_l: float
    co2_removed: bool
    tolerance_percent: float
    indicators: tuple[IndicatorAdvice, ...]
    points: tuple[EquivalencePoint, ...]
    notes: tuple[str, ...]


def acid_base_system(analyte: Analyte | Material,
                     protons: int) -> tuple[tuple[float, ...], int, int]:
    """(pKa values, protons carried, units per formula) of the analyte for the model; a
    strong acid or base without pKa values gets ``protons`` strong steps."""
    if analyte.acid_base is None or analyte.initial_protons is None:
        raise InvalidInput(f"{analyte.name} is not marked as an acid or a base: no "
                           "equivalence pH to compute")
    units = analyte.acid_units or 1
    if analyte.pka:
        return tuple(analyte.pka), analyte.initial_protons, units
    if analyte.acid_base == "acid":
        return (STRONG_ACID_PKA,) * analyte.initial_protons, analyte.initial_protons, units
    return (STRONG_BASE_PKA,) * protons, analyte.initial_protons, units


class AcidBaseSystem(msgspec.Struct, frozen=True):
    """A weighed standard as the equilibrium model takes it, with a strong titrant."""

    pkas: tuple[float, ...]
    initial_protons: int
    units_per_formula: int
    is_acid: bool  # the standard gives protons (titrated with a base)
    protons: int  # exchanged per formula unit in the reaction
    notes: tuple[str, ...]


def standard_system(standard: Material, titrant: Material,
                    reaction: Reaction) -> AcidBaseSystem:
    """Any catalog standard (or titrant solute) with any catalog titrant, for the
    aqueous model: an acid-base reaction between an acid and a base, the titrant strong;
    a strong standard without pKa values gets strong steps (``acid_base_system``).
    What the model cannot describe is refused in one line, saying why."""
    if reaction.kind != "acid-base" or reaction.protons is None:
        raise InvalidInput(f"{standard.name} with {titrant.name} is a {reaction.kind} "
                           "titration: no equivalence pH to compute")
    if standard.acid_base is None or titrant.acid_base is None \
            or standard.acid_base == titrant.acid_base:
        raise InvalidInput(f"{standard.name} ({standard.acid_base or 'neither acid nor base'}"
                           f") with {titrant.name} ({titrant.acid_base or 'neither'}) by "
                           f"{reaction.name} is not an acid with a base in water (a "
                           "non-aqueous titration?): the aqueous model does not apply")
    if titrant.pka:
        raise InvalidInput(f"{titrant.name} is a weak titrant; the model takes a strong acid "
                           "or base")
    k = int(reaction.protons)
    pkas, p0, units = acid_base_system(standard, k)
    notes = () if standard.pka else (f"{standard.name} is strong: modelled as fully "
                                     "dissociated",)
    return AcidBaseSystem(pkas, p0, units, standard.acid_base == "acid", k, notes)


def eqpoint(*, analyte: str, titrant: str, concentration_text: str,
            titrant_concentration_text: str | None = None, method: str | None = None,
            co2_removed: bool = False, tolerance_text: str | None = None) -> AnalyteEqpoint:
    """The pH at the equivalence point of an analyte's acid-base titration with a strong
    titrant, at ``concentration_text`` formula units per litre there; each catalog
    indicator judged by its titration error; and the pH at each equivalence point."""
    from prepbook.catalog import loader, samples
    from prepbook.chem import equilibria, indicators

    found = samples.analyte_titration(analyte, titrant, method)
    a, way = found.analyte, found.method
    if way.kind != "acid-base" or way.is_back_titration:
        raise InvalidInput(f"{a.name} by {way.name} is not a direct acid-base titration: "
                           "no equivalence pH to compute")
    if found.titrant.pka:
        raise InvalidInput(f"{found.titrant.name} is a weak titrant; the model takes a "
                           "strong acid or base")
    k = int(way.n)
    pkas, p0, units = acid_base_system(a, k)
    conc = parse_number(concentration_text, "concentration (mol/L)", positive=True).value
    notes = []
    if titrant_concentration_text is None:
        c_titrant = 2.0 * k * conc  # the sample's volume equal to the equivalence volume
        notes.append(f"titrant taken as {c_titrant:g} eq/L (the sample's volume equal to the "
                     "equivalence volume); give --titrant-concentration to change it")
    else:
        c_titrant = parse_number(titrant_concentration_text, "titrant concentration (eq/L)",
                                 positive=True).value
        if k * conc >= c_titrant:
            raise InvalidInput(f"at {conc:g} mol/L at equivalence the titrant must be stronger "
                               f"than {k * conc:g} eq/L ({k} x the concentration)")
    if not a.pka:
        notes.append(f"{a.name} is strong: modelled as fully dissociated")
    c_sample = conc / (1.0 - k * conc / c_titrant)
    is_acid = a.acid_base == "acid"
    steps = p0 if is_acid else len(pkas) * units - p0
    points = []
    for j in range(1, steps + 1):
        c_j = c_sample / (1.0 + j * c_sample / c_titrant)
        ph = equilibria.solution_ph(pkas, c_j, initial_protons=p0, units_per_formula=units,
                                    strong_base_mol_per_l=j * c_j if is_acid else 0.0,
                                    strong_acid_mol_per_l=0.0 if is_acid else j * c_j)
        points.append(EquivalencePoint(j, c_j, ph))
    titration = indicators.Titration(
        pkas=pkas, sample_mol_per_l=c_sample, sample_ml=SAMPLE_ML, titrant_mol_per_l=c_titrant,
        initial_protons=p0, protons_transferred=k, titrant_is_base=is_acid,
        units_per_formula=units, co2_removed=co2_removed)
    ph = points[k - 1].ph
    if co2_removed:
        ph = equilibria.PKW_25C / 2.0
        notes.append("carbon dioxide boiled off near the endpoint: the sample counts as its "
                     "equivalents of strong base")
    tolerance = (parse_number(tolerance_text, "tolerance (%)", positive=True).value
                 if tolerance_text is not None else indicators.DEFAULT_TOLERANCE_PERCENT)
    table = [(i.name, i.low_ph, i.high_ph) for i in loader.indicators()
             if i.low_ph is not None and i.high_ph is not None]
    advice = indicators.indicator_advice(titration, table, tolerance_percent=tolerance)
    return AnalyteEqpoint(
        analyte=a.code, titrant=found.titrant.code, method=way.name, n_eq_per_mol=way.n,
        concentration_mol_per_l=conc, ph=ph,
        suitable=tuple(x.name for x in advice if x.suitable),
        unsuitable=tuple(x.name for x in advice if not x.suitable),
        titrant_concentration_mol_per_l=c_titrant, sample_concentration_mol_per_l=c_sample,
        co2_removed=co2_removed, tolerance_percent=tolerance, indicators=advice,
        points=tuple(points), notes=tuple(notes))


class SaltCalc(msgspec.Struct, frozen=True):
    """``calc salt``: the pH of the salt's solution, its nature and the governing ion."""

    cation: str
    anion: str
    formula: str
    concentration_mol_per_l: float
    ph: float
    nature: str
    governing: str | None
    strengths: tuple[Strength, ...]
    reason: str
    sources: tuple[str, ...]


def salt(*, cation: str, anion: str, concentration_text: str) -> SaltCalc:
    """The pH of a salt's solution from its ions' constants (``chem.salts``)."""
    from prepbook.catalog import samples
    from prepbook.chem import salts

    ions = []
    for query, sign, what in ((cation, 1, "cation"), (anion, -1, "anion")):
        ion = samples.find_ion(query)
        if ion.charge * sign <= 0:
            raise InvalidInput(f"{ion.name} ({ion.formula}) is not a {what}")
        ions.append(ion)
    conc = parse_number(concentration_text, "salt concentration (mol/L)", positive=True).value
    cat_ion, an_ion = (salts.Ion(i.name, i.charge, i.pka, i.protons) for i in ions)
    result = salts.salt_ph(cat_ion, an_ion, conc)
    parts = [(ions[0], result.cations_per_formula), (ions[1], result.anions_per_formula)]
    formula = " + ".join(f"{'' if nu == 1 else f'{nu} '}{i.formula}" for i, nu in parts)
    return SaltCalc(cation=ions[0].name, anion=ions[1].name, formula=formula,
                    concentration_mol_per_l=conc, ph=result.ph, nature=result.nature,
                    governing=result.governing, strengths=result.strengths,
                    reason=result.reason, sources=tuple(dict.fromkeys(i.source for i in ions)))
