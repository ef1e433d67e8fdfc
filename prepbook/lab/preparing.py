"""The database-free preparation calculators behind ``prepbook calc``: solid, liquid,
dilute, adjust, buoyancy, temperature and titer.

Each function takes the values as typed (strings), looks materials up in the
built-in catalog, calls the chemistry core and returns a frozen record whose fields
are the keys of the command's JSON. Apart from ``lab.calcs`` so that ``calc
normality``, the command a bench runs most, does not build these types at start-up.
"""

from __future__ import annotations

from collections.abc import Mapping
from datetime import date
from typing import TYPE_CHECKING, Any

import msgspec

from prepbook.errors import InvalidInput, NotFound, Refused
from prepbook.inputs import parse_number, parse_percent, parse_text
from prepbook.records import as_data

if TYPE_CHECKING:
    from prepbook.catalog.models import SpecDefaults
    from prepbook.chem.corrections import Expansion


class SolidResult(msgspec.Struct, frozen=True):
    solute: str
    name: str
    formula: str
    molar_mass_g_per_mol: float
    n_eq_per_mol: float
    reaction: str
    normality: float
    volume_ml: float
    purity_percent: float
    mass_g: float
    cautions: tuple[str, ...]


class LiquidResult(msgspec.Struct, frozen=True):
    reagent: str
    name: str
    formula: str
    mass_fraction_percent: float
    density_g_per_ml: float
    molarity_mol_per_l: float
    n_eq_per_mol: float
    normality: float
    final_volume_ml: float
    volume_ml: float
    cautions: tuple[str, ...]
    source: str


class DilutionResult(msgspec.Struct, frozen=True):
    stock_normality: float
    normality: float
    volume_ml: float
    stock_ml: float
    water_ml: float


class AdjustResult(msgspec.Struct, frozen=True):
    normality: float
    target: float
    volume_now_ml: float
    add: str  # "water" or "stock"
    volume_ml: float


class BuoyancyResult(msgspec.Struct, frozen=True):
    reading_g: float
    mass_g: float
    correction_g: float
    density_g_per_cm3: float
    air_density_g_per_cm3: float
    weights_density_g_per_cm3: float


class TemperatureResult(msgspec.Struct, frozen=True):
    normality_from: float
    from_c: float
    to_c: float
    normality: float
    ratio: float
    solvent: str
    expansion_per_c: float | None  # None: water's density formula
    expansion_source: str


class TiterResult(msgspec.Struct, frozen=True):
    titrant: str
    normality: float
    analyte: str
    analyte_formula: str
    analyte_n_eq_per_mol: float
    reaction: str
    mg_per_ml: float


def _cautions(*materials: Any) -> tuple[str, ...]:
    seen: list[str] = []
    for m in materials:
        for c in getattr(m, "cautions", ()) or ():
            if c not in seen:
                seen.append(c)
    return tuple(seen)


def solid(solute: str, *, normality_text: str, volume_text: str,
          purity_text: str = "100") -> SolidResult:
    from prepbook.catalog import loader
    from prepbook.chem import formula, preparation

    mat = loader.find_material(solute)
    rx = mat.reaction()
    n_target = parse_number(normality_text, "normality", positive=True).value
    volume = parse_number(volume_text, "volume (mL)", positive=True).value
    purity = parse_percent(purity_text, "purity").value / 100
    mm = formula.molar_mass(mat.formula)
    mass = preparation.solid_mass_g(n_target, volume, mm.value_g_per_mol, rx.n, purity)
    return SolidResult(solute=mat.code, name=mat.name, formula=mat.formula,
                       molar_mass_g_per_mol=mm.value_g_per_mol, n_eq_per_mol=rx.n,
                       reaction=rx.name, normality=n_target, volume_ml=volume,
                       purity_percent=purity * 100, mass_g=mass, cautions=_cautions(mat))


def supplied_as_concentrate(solute: str) -> bool:
    """Whether a titrant's solute is taken as a concentrated liquid (the catalog has a
    reagent for it: hydrochloric, sulfuric, perchloric acid), so it is measured, not
    weighed."""
    from prepbook.catalog import loader

    try:
        loader.find_reagent(solute)
    except NotFound:
        return False
    return True


def liquid(
    reagent: str,
    *,
    normality_text: str,
    volume_text: str,
    fraction_text: str | None = None,
    density_text: str | None = None,
    n_text: str | None = None,
) -> LiquidResult:
    from prepbook.catalog import loader
    from prepbook.chem import formula, preparation

    rg = loader.find_reagent(reagent)
    n_target = parse_number(normality_text, "normality", positive=True).value
    volume = parse_number(volume_text, "volume (mL)", positive=True).value
    fraction = (
        parse_percent(fraction_text, "mass fraction").value / 100
        if fraction_text is not None
        else rg.mass_fraction
    )
    density = (
        parse_number(density_text, "density (g/mL)", positive=True).value
        if density_text is not None
        else rg.density_g_per_ml
    )
    mm = formula.molar_mass(rg.formula)
    if n_text is not None:
        n_eq = parse_number(n_text, "equivalents per mole", positive=True).value
    elif rg.n_eq_per_mol is not None:
        n_eq = rg.n_eq_per_mol
    else:
        try:
            n_eq = loader.find_material(rg.formula).reaction().n
        except NotFound:
            raise InvalidInput(
                f"the catalog gives no equivalents per mole for {rg.name} (they depend on "
                "the endpoint): give them with --n"
            ) from None
    v_conc = preparation.liquid_volume_ml(
        n_target, volume, mm.value_g_per_mol, n_eq, fraction, density
    )
    molarity = 1000 * fraction * density / mm.value_g_per_mol
    return LiquidResult(reagent=rg.code, name=rg.name, formula=rg.formula,
                        mass_fraction_percent=fraction * 100, density_g_per_ml=density,
                        molarity_mol_per_l=molarity, n_eq_per_mol=n_eq, normality=n_target,
                        final_volume_ml=volume, volume_ml=v_conc, cautions=tuple(rg.cautions),
                        source=rg.source)


class ConcentrateLot(msgspec.Struct, frozen=True):
    """A concentrate's lot as recorded: its assay (% w/w) and density (g/mL) as typed
    from the certificate."""

    code: str
    reagent: str
    assay_percent_text: str
    density_text: str | None
    expires: date


class ConcentrateMade(msgspec.Struct, frozen=True):
    normality: float
    reagent: str
    mass_fraction: float
    density_g_per_ml: float
    warnings: tuple[str, ...]
    cautions: tuple[str, ...]  # the concentrate's own (the reagent's, from the catalog)


def concentrate_normality(solute: str, n: float, concentrate_ml: float, volume_ml: float,
                          made_on: date, *, lot: ConcentrateLot | None = None
                          ) -> ConcentrateMade:
    """A batch made by diluting ``concentrate_ml`` of the solute's concentrate to
    ``volume_ml``: its normality from the lot's certified assay and density, or, with no
    lot named, from the catalog's typical values (said in a warning, since the batch
    then cannot be traced to an assay)."""
    from prepbook.catalog import loader
    from prepbook.chem import formula, preparation

    reagent = loader.find_reagent(solute)
    warnings: list[str] = []
    if lot is None:
        fraction, density = reagent.mass_fraction, reagent.density_g_per_ml
        warnings.append(
            f"no concentrate lot named: the catalog's typical {fraction * 100:g} % w/w and "
            f"{density:g} g/mL for {reagent.name} were used ({reagent.source}); name the "
            "lot with --solute-lot to compute from its certificate")
    else:
        if lot.reagent != reagent.code:
            raise InvalidInput(f"lot {lot.code} is {lot.reagent}, but this batch is made "
                               f"from {reagent.code}")
        if lot.density_text is None:
            raise InvalidInput(f"lot {lot.code} records no density: it is not a concentrate "
                               "lot (lot add ... --assay PERCENT --density G/ML)")
        if lot.expires < made_on:
            raise Refused(f"lot {lot.code} expired on {lot.expires.isoformat()}")
        fraction = float(lot.assay_percent_text) / 100
        density = float(lot.density_text)
    mm = formula.molar_mass(reagent.formula).value_g_per_mol
    molarity = preparation.reagent_molarity_mol_per_l(fraction, density, mm)
    normality = preparation.concentrate_normality(concentrate_ml, volume_ml,
                                                  molarity_mol_per_l=molarity, n=n)
    return ConcentrateMade(normality=normality, reagent=reagent.code, mass_fraction=fraction,
                           density_g_per_ml=density, warnings=tuple(warnings),
                           cautions=tuple(reagent.cautions))


def dilute(*, stock_text: str, normality_text: str, volume_text: str) -> DilutionResult:
    from prepbook.chem import preparation

    stock = parse_number(stock_text, "stock normality", positive=True).value
    target = parse_number(normality_text, "normality", positive=True).value
    volume = parse_number(volume_text, "volume (mL)", positive=True).value
    d = preparation.dilution(stock, target, volume)
    return DilutionResult(stock_normality=stock, normality=target, volume_ml=volume,
                          stock_ml=d.stock_ml, water_ml=d.water_ml)


def adjust(*, normality_text: str, target_text: str, volume_text: str,
           stock_text: str | None = None) -> AdjustResult:
    from prepbook.chem import preparation

    found = parse_number(normality_text, "normality", positive=True).value
    target = parse_number(target_text, "target normality", positive=True).value
    volume = parse_number(volume_text, "volume (mL)", positive=True).value
    stock = (parse_number(stock_text, "stock normality", positive=True).value
             if stock_text is not None else None)
    a = preparation.adjust(found, target, volume, stock_n=stock)
    return AdjustResult(normality=found, target=target, volume_now_ml=volume, add=a.add,
                        volume_ml=a.volume_ml)


def buoyancy(*, mass_text: str, density_text: str, air_text: str = "0.0012",
             weights_text: str = "8.0") -> BuoyancyResult:
    from prepbook.chem import corrections

    mass = parse_number(mass_text, "mass (g)", positive=True).value
    density = parse_number(density_text, "sample density (g/cm3)", positive=True).value
    air = parse_number(air_text, "air density (g/cm3)", non_negative=True).value
    weights = parse_number(weights_text, "weights density (g/cm3)", positive=True).value
    if air >= density or air >= weights:
        raise InvalidInput("air density must be below the densities of the sample and the weights")
    true = corrections.buoyancy_true_mass(mass, density, air=air, weights=weights)
    return BuoyancyResult(reading_g=mass, mass_g=true, correction_g=true - mass,
                          density_g_per_cm3=density, air_density_g_per_cm3=air,
                          weights_density_g_per_cm3=weights)


def spec_expansion(data: Mapping[str, Any]) -> Expansion | None:
    """How a spec's titrant is carried between temperatures: its solvent's cubic
    expansion (``expansion_per_c`` and its source), or None for an aqueous titrant
    (water's density formula). ``data`` is the spec's fields (a stored spec's JSON or a
    catalog spec's); a built-in spec stored before the solvent or the coefficient existed
    takes them from the catalog's spec of the same code. A non-aqueous spec without a
    coefficient is refused rather than corrected as water, and so is a lab's spec stored
    without a solvent whose titrant the catalog makes only in another solvent."""
    from prepbook.chem.corrections import Expansion

    spec = _catalog_spec(data.get("code"))
    if not data.get("solvent"):  # stored before specs stated their solvent
        if spec is not None:
            return spec_expansion(as_data(spec))
        unstated = catalog_solvent(str(data["solute"])) if data.get("solute") else None
        if unstated is not None:
            raise InvalidInput(
                f"spec {data.get('code')} states no solvent, and the catalog makes "
                f"{data['solute']} titrants only in {unstated[0]} (spec "
                f"{', '.join(unstated[1])}): add a spec that states its --solvent")
    solvent = str(data.get("solvent") or "water")
    if solvent.strip().casefold() == "water":
        return None
    gamma, sources = data.get("expansion_per_c"), data.get("sources") or {}
    if gamma is None and spec is not None and spec.solvent == solvent:
        gamma, sources = spec.expansion_per_c, dict(spec.sources)
    if not isinstance(gamma, (int, float)) or isinstance(gamma, bool):
        raise InvalidInput(f"spec {data.get('code')} is in {solvent}, but states no cubic "
                           "expansion coefficient to carry it between temperatures")
    source = dict(sources).get("expansion_per_c") or "no source recorded"
    return Expansion(per_c=float(gamma), solvent=solvent, source=str(source))


def _catalog_spec(code: object) -> SpecDefaults | None:
    """The catalog's spec of a stored spec's code, if the catalog has one."""
    from prepbook.catalog import loader

    if not code:
        return None
    try:
        return loader.find_spec(str(code))
    except NotFound:
        return None


def known_solvents() -> dict[str, Expansion]:
    """The non-aqueous solvents the catalog's specs name, each with the cubic expansion
    coefficient and source its spec states (keyed by the name, case-folded)."""

    from prepbook.catalog import loader

    known: dict[str, Expansion] = {}
    for sp in loader.specs():
        expansion = spec_expansion(as_data(sp))
        if expansion is not None:
            known.setdefault(expansion.solvent.casefold(), expansion)
    return known


def catalog_solvent(solute: str) -> tuple[str, tuple[str, ...]] | None:
    """The solvent other than water that every catalog spec of a titrant's ``solute``
    (a material code) is made in, with those specs' codes; None when the catalog has an
    aqueous spec of it, or none at all."""
    from prepbook.catalog import loader

    specs = [sp for sp in loader.specs() if sp.solute == solute]
    solvents = {sp.solvent.strip().casefold() for sp in specs}
    if len(solvents) != 1 or solvents == {"water"}:
        return None
    return specs[0].solvent, tuple(sp.code for sp in specs)


def titrant_expansion(*, spec: str | None = None, solvent: str | None = None,
                      per_c: str | None = None, source: str | None = None,
                      solute: str | None = None) -> Expansion | None:
    """How a titrant is carried between temperatures, as the user states it: a catalog
    ``spec``'s solvent, or a ``solvent`` (water, one the catalog knows with its
    coefficient, or any other with ``per_c`` and its ``source``). None: water's density.

    With nothing stated, a titrant whose ``solute`` the catalog makes only in another
    solvent (perchloric acid in glacial acetic acid) is refused rather than carried as
    water; any other is aqueous."""
    from prepbook.chem.corrections import Expansion

    if spec is not None:
        if solvent is not None or per_c is not None or source is not None:
            raise InvalidInput("give the titrant's --spec or its --solvent (and "
                               "--expansion), not both")

        from prepbook.catalog import loader

        return spec_expansion(as_data(loader.find_spec(spec)))
    if (per_c is None) != (source is None):
        raise InvalidInput("--expansion PER_C and --expansion-source TEXT go together: a "
                           "coefficient is used only with its source")
    if solvent is None:
        if per_c is not None:
            raise InvalidInput("--expansion needs --solvent NAME: the solvent it is the "
                               "coefficient of")
        found = catalog_solvent(solute) if solute is not None else None
        if found is not None:
            raise InvalidInput(
                f"{solute} titrants are made in {found[0]} (catalog spec "
                f"{', '.join(found[1])}), not water: say the titrant's solvent with "
                f"--solvent (e.g. --solvent '{found[0]}', or --solvent water)")
        return None
    name = " ".join((parse_text(solvent, "solvent", max_len=60) or "").split())
    if not name:
        raise InvalidInput("--solvent must name the solvent")
    if name.casefold() == "water":
        if per_c is not None:
            raise InvalidInput("an aqueous titrant is carried with water's density: "
                               "--expansion is for a solvent other than water")
        return None
    if per_c is None:
        known = known_solvents()
        if name.casefold() not in known:
            names = ", ".join(["water", *(e.solvent for e in known.values())])
            raise InvalidInput(f"solvent {name!r} is not in the catalog ({names}): give its "
                               "cubic expansion with --expansion PER_C --expansion-source TEXT")
        return known[name.casefold()]
    gamma = parse_number(per_c, "expansion coefficient (per C)", positive=True)
    from prepbook.chem.corrections import EXPANSION_RANGE_PER_C, plausible_expansion
    low, high = EXPANSION_RANGE_PER_C
    if not plausible_expansion(gamma.value):
        raise InvalidInput(f"expansion coefficient {gamma.text} per C is not a liquid's cubic "
                           f"expansion (expected between {low:g} and {high:g} per C)")
    text = (parse_text(source, "expansion source", max_len=300) or "").strip()
    if not text:
        raise InvalidInput("--expansion-source must name where the coefficient comes from")
    return Expansion(per_c=gamma.value, solvent=name, source=text)


def temperature(*, normality_text: str, from_text: str, to_text: str,
                spec: str | None = None, solvent: str | None = None,
                expansion_text: str | None = None,
                expansion_source: str | None = None) -> TemperatureResult:
    """Normality at another temperature; with ``spec`` (a catalog spec's code) or a
    ``solvent`` (with its coefficient) the titrant is carried with its solvent's
    expansion, else as a dilute aqueous one (``titrant_expansion``)."""
    from prepbook.chem import corrections

    n1 = parse_number(normality_text, "normality", positive=True).value
    t1 = parse_number(from_text, "temperature from (C)").value
    t2 = parse_number(to_text, "temperature to (C)").value
    expansion = titrant_expansion(spec=spec, solvent=solvent, per_c=expansion_text,
                                  source=expansion_source)
    for t in (t1, t2):
        if not 0 <= t <= 40:
            where = ("where the CIPM water density formula applies" if expansion is None
                     else "where a titrant's temperature correction is applied")
            raise InvalidInput(f"temperature {t:g} C is outside 0-40 C, {where}")
    n2 = corrections.normality_at_temperature(n1, t1, t2, expansion)
    return TemperatureResult(
        normality_from=n1, from_c=t1, to_c=t2, normality=n2, ratio=n2 / n1,
        solvent=expansion.solvent if expansion else "water",
        expansion_per_c=expansion.per_c if expansion else None,
        expansion_source=expansion.source if expansion else corrections.WATER_DENSITY_SOURCE)


def titer(*, titrant: str, normality_text: str, analyte: str) -> TiterResult:
    from prepbook.catalog import loader
    from prepbook.chem import formula, preparation

    tit = loader.find_material(titrant)
    ana = loader.find_material(analyte)
    ana_rx, tit_rx = loader.reaction_for_pair(ana, tit)
    n = parse_number(normality_text, "normality", positive=True).value
    mm = formula.molar_mass(ana.formula)
    mg = preparation.titer_mg_per_ml(n, mm.value_g_per_mol, ana_rx.n)
    return TiterResult(titrant=tit.code, normality=n, analyte=ana.name,
                       analyte_formula=ana.formula, analyte_n_eq_per_mol=ana_rx.n,
                       reaction=ana_rx.name, mg_per_ml=mg)
