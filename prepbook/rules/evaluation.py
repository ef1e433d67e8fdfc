"""The evaluation of one standardization: defaults, chemistry, acceptance checks, budget.

One pure function (no database, no I/O) behind both ``prepbook calc normality`` and the
recorded runs (``standardize``, ``correct``, ``exclude``): it takes the readings and the
conditions as numbers, looks the substances up in the catalog, states every default it
assumes in ``notes``, refuses what cannot be computed, and returns the result with its
uncertainty budget and, when asked to judge the run, every acceptance check.

Defaults for what a run does not record (each stated in the notes, so nobody is misled):
the burette's tolerance (Class A 50 mL, ISO 385), the pipette's (Class A 25 mL, from
memory), the balance's linearity and the certificate's purity half-width (both those of
EURACHEM/CITAC CG4 Example A2, the purity taken as a rectangular distribution).
"""

from __future__ import annotations

import math
from datetime import date
from typing import TYPE_CHECKING, Literal

import msgspec

from prepbook.catalog import loader
from prepbook.chem import corrections, formula
from prepbook.chem import standardization as st
from prepbook.errors import InvalidInput
from prepbook.rules.acceptance import AcceptanceRules, Check, check_standardization, verdict
from prepbook.rules.curve_check import CurveEvidence, check_curves

if TYPE_CHECKING:
    from prepbook.catalog.loader import Material, Reaction
    from prepbook.chem.stats import OutlierFlag
    from prepbook.chem.uncertainty import BudgetLine

DEFAULT_BURETTE_TOLERANCE_ML = 0.05  # Class A 50 mL burette, ISO 385
DEFAULT_PIPETTE_TOLERANCE_ML = 0.03  # Class A 25 mL pipette (from memory)
DEFAULT_BALANCE_LINEARITY_G = 0.00015  # the balance of EURACHEM/CITAC CG4 Example A2
DEFAULT_PURITY_HALF_WIDTH = 0.0005  # +/-0.05 %, CG4 Example A2's certificate (rectangular)
# Water in which the standard is dissolved before titration, for the concentration at the
# equivalence point (indicator check): common practice, no source.
DISSOLVING_WATER_ML = 50.0

BuoyancyMode = Literal["off", "on", "if-known"]
# Where the repeatability of a budget came from: a validated value given for the run or
# held by the spec, the included replicates' scatter, or nowhere (one replicate).
RepeatabilitySource = Literal["given", "spec", "estimated", "missing"]


class Reading(msgspec.Struct, frozen=True):
    """One replicate as entered: the amount (g of standard, or mL of aliquot) and the
    titrant volume at the endpoint (mL), with the text typed for messages."""

    amount: float
    volume_ml: float
    amount_text: str
    volume_text: str


class Weighed(msgspec.Struct, frozen=True):
    """A primary standard weighed from a lot (direct standardization)."""

    material: str  # catalog code, name or formula
    purity_fraction: float
    u_purity_fraction: float | None = None  # standard uncertainty; None -> the default


class Reference(msgspec.Struct, frozen=True):
    """A standardized solution pipetted (secondary standardization), as recorded."""

    batch: str
    run: str | None  # None: a value typed (``calc secondary``), not a recorded run
    normality_20c: float
    u: float | None  # its standard uncertainty at 20 C, eq/L; None: its record holds none


class Judgement(msgspec.Struct, frozen=True):
    """What the acceptance checks need beyond the readings (a recorded run's context)."""

    rules: AcceptanceRules
    nominal: float
    unit: str  # "N" (eq/L) or "M" (mol/L)
    run_date: date
    lot_expires: date | None = None
    lot_dried_on: date | None = None
    instruments: tuple[tuple[str, str, date], ...] = ()  # (code, kind, calibration due)
    balance_readability_g: float | None = None
    indicator: str | None = None  # as typed, or the spec's; None -> the reaction's
    curves: tuple[CurveEvidence, ...] = ()  # replicates with a recorded curve
    entered_on: date | None = None  # lot expiry and calibration are checked on this day too
    required_instruments: tuple[str, ...] = ()  # kinds the spec requires (balance, burette)


class Standardization(msgspec.Struct, frozen=True):
    """Everything one standardization is computed from. Exactly one of ``standard`` and
    ``reference`` is given; ``judgement`` asks for the acceptance checks and the factor."""

    readings: tuple[Reading, ...]
    titrant: str | None  # the titrant's solute (catalog); None: the standard's reaction only
    standard: Weighed | None = None
    reference: Reference | None = None
    titrant_reaction: str | None = None  # a named reaction of the titrant (secondary)
    blank_ml: float = 0.0
    blank_text: str = "0"
    temperature_c: float = 20.0
    temperature_range_c: float = 3.0
    excluded: frozenset[int] = frozenset()  # 1-based positions left out of the mean
    buoyancy: BuoyancyMode = "off"  # "on" refuses a standard of unknown density; "if-known" notes
    balance_linearity_g: float | None = None
    burette_tolerance_ml: float | None = None
    burette_capacity_ml: float | None = None
    burette: str | None = None  # the burette's code, for messages
    judgement: Judgement | None = None
    u_rel_repeatability: float | None = None  # validated relative SD; None: the replicates'
    repeatability_from: RepeatabilitySource = "given"  # where a validated value came from
    reaction: str | None = None  # a named reaction of the standard; None: the pair's
    pipette_tolerance_ml: float | None = None  # secondary: the pipette's; None: the default
    expansion: corrections.Expansion | None = None  # a non-aqueous titrant's solvent; None: water


class StandardFacts(msgspec.Struct, frozen=True):
    """The primary standard as the catalog and the chemistry core give it (its reaction
    with the titrant is ``Evaluation.reaction``)."""

    code: str
    name: str
    formula: str
    molar_mass_g_per_mol: float
    u_molar_mass_g_per_mol: float
    n_eq_per_mol: float
    equivalent_weight_g_per_eq: float
    purity_percent: float


class EvaluatedReplicate(msgspec.Struct, frozen=True):
    index: int
    normality: float
    outlier: bool
    excluded: bool
    true_mass_g: float | None


class Evaluation(msgspec.Struct, frozen=True):
    normality: float  # eq/L at the run's temperature
    normality_20c: float
    factor: float | None  # only when judged (it needs the spec's nominal)
    n: int  # replicates included
    sd: float | None
    rsd_percent: float | None
    outlier: OutlierFlag | None
    u: float | None
    U: float | None
    k: float | None
    replicates: tuple[EvaluatedReplicate, ...]
    budget: tuple[BudgetLine, ...]
    notes: tuple[str, ...]  # the defaults assumed and what was not checked
    uncertainty_notes: tuple[str, ...]  # what the budget assumed or left out
    checks: tuple[Check, ...]  # empty unless judged
    verdict: Literal["pass", "fail"] | None
    indicator: str | None
    equivalence_ph: float | None
    titrant: str | None  # the titrant's catalog code
    titrant_n_eq_per_mol: float | None
    standard: StandardFacts | None  # direct standardizations only
    reaction: str | None  # the standard's reaction with the titrant (direct only)
    repeatability: RepeatabilitySource  # where the budget's repeatability came from


def _check_readings(s: Standardization) -> None:
    if (s.standard is None) == (s.reference is None):
        raise InvalidInput("a standardization is against exactly one of a primary standard "
                           "or a standardized solution")
    if not s.readings:
        raise InvalidInput("at least one replicate (--rep MASS:VOL) is required")
    for i, r in enumerate(s.readings, start=1):
        if s.blank_ml >= r.volume_ml:
            raise InvalidInput(f"blank {s.blank_text} mL is not smaller than replicate {i}'s "
                               f"titrant volume {r.volume_text} mL")
        if s.burette_capacity_ml is not None and r.volume_ml > s.burette_capacity_ml:
            which = f"burette {s.burette}" if s.burette else "the burette"
            raise InvalidInput(f"replicate {i} titrant volume {r.volume_text} mL exceeds the "
                               f"capacity of {which} ({s.burette_capacity_ml:g} mL)")
    if all(i in s.excluded for i in range(1, len(s.readings) + 1)):
        raise InvalidInput("every replicate would be excluded; at least one must remain")


def evaluate(s: Standardization) -> Evaluation:
    """Compute one standardization from its readings and conditions (see the module)."""
    _check_readings(s)
    notes: list[str] = []
    tol = s.burette_tolerance_ml
    if tol is None:
        tol = DEFAULT_BURETTE_TOLERANCE_ML
        notes.append("no burette tolerance on record: +/-0.05 mL (Class A 50 mL) assumed")
    kept = [r for i, r in enumerate(s.readings, start=1) if i not in s.excluded]
    mean_volume = sum(r.volume_ml for r in kept) / len(kept)
    u_volume = st.volume_u_from_burette(tol, mean_volume,
                                        temperature_range_c=s.temperature_range_c)
    pairs = [(r.amount, r.volume_ml) for r in s.readings]
    solute = loader.find_material(s.titrant) if s.titrant else None
    facts: StandardFacts | None = None
    std_rx: Reaction | None = None
    eq_ph: float | None = None
    indicator = s.judgement.indicator if s.judgement else None
    if s.standard is not None:
        std_mat = loader.find_material(s.standard.material)
        std_rx, titrant_rx = reactions_for(std_mat, solute, s.reaction)
        standard, facts = _primary(std_mat, std_rx, s.standard, notes)
        linearity = s.balance_linearity_g
        if linearity is None:
            linearity = DEFAULT_BALANCE_LINEARITY_G
            notes.append("no balance tolerance on record: +/-0.15 mg linearity assumed")
        result = st.direct(
            standard, pairs, blank_ml=s.blank_ml, buoyancy=_buoyancy(s, std_mat, notes),
            excluded=s.excluded,
            uncertainty=st.UncertaintyInputs(u_mass_g=st.mass_u_from_balance(linearity),
                                             u_volume_ml=u_volume,
                                             u_rel_repeatability=s.u_rel_repeatability))
        if s.judgement is not None:
            indicator = indicator or std_rx.indicator
            eq_ph = _equivalence_ph(std_mat, std_rx, standard, kept, mean_volume)
    else:
        ref = s.reference
        assert ref is not None
        titrant_rx = solute.reaction(name=s.titrant_reaction) if solute is not None else None
        n_ref = corrections.normality_at_temperature(ref.normality_20c, 20.0, s.temperature_c,
                                                     s.expansion)
        # the reference's relative uncertainty carries to the run's temperature unchanged
        u_ref = None if ref.u is None else ref.u * n_ref / ref.normality_20c
        pipette = s.pipette_tolerance_ml
        if pipette is None:
            pipette = DEFAULT_PIPETTE_TOLERANCE_ML
            notes.append("no pipette tolerance on record: +/-0.03 mL (Class A 25 mL) assumed")
        u_aliquot = st.volume_u_from_burette(pipette,
                                             sum(r.amount for r in kept) / len(kept),
                                             temperature_range_c=s.temperature_range_c)
        result = st.secondary(
            n_ref, u_ref, pairs, blank_ml=s.blank_ml, excluded=s.excluded,
            uncertainty=st.UncertaintyInputs(u_mass_g=0.0, u_volume_ml=u_volume,
                                             u_aliquot_ml=u_aliquot,
                                             u_rel_repeatability=s.u_rel_repeatability))
        if ref.run is not None:
            inherited = "no uncertainty on record" if ref.u is None else (
                f"u = {ref.u:.6f} eq/L ({100 * ref.u / ref.normality_20c:.3f} %)")
            notes.append(f"reference {ref.batch} at {ref.normality_20c:.5f} eq/L (20 C), "
                         f"{inherited}, from its run {ref.run}")
    normality_20c = corrections.normality_at_temperature(result.normality, s.temperature_c,
                                                         20.0, s.expansion)
    if s.expansion is not None:
        notes.append(f"carried to 20 C with {s.expansion.describe()}")
    factor: float | None = None
    checks: tuple[Check, ...] = ()
    if s.judgement is not None:
        assert titrant_rx is not None, "a judged run names its titrant"
        j = s.judgement
        factor = (normality_20c if j.unit == "N" else normality_20c / titrant_rx.n) / j.nominal
        indicator, ind_range = _indicator(indicator, notes)
        checks = check_standardization(
            j.rules,
            replicate_count=result.stats.n,
            rsd_percent=result.stats.rsd_percent,
            factor=factor,
            masses_g=[r.amount for r in s.readings] if s.standard is not None else None,
            balance_readability_g=j.balance_readability_g,
            volumes_ml=[r.volume_ml for r in s.readings],
            burette_capacity_ml=s.burette_capacity_ml,
            lot_expires=j.lot_expires,
            lot_dried_on=j.lot_dried_on,
            run_date=j.run_date,
            instruments=j.instruments,
            outlier_index=result.stats.outlier.index if result.stats.outlier else None,
            excluded=s.excluded,
            indicator=indicator,
            equivalence_ph=eq_ph,
            indicator_range=ind_range,
            entered_on=j.entered_on,
            required_instruments=j.required_instruments,
        ) + check_curves(j.curves)
    unc = result.uncertainty
    return Evaluation(
        normality=result.normality,
        normality_20c=normality_20c,
        factor=factor,
        n=result.stats.n,
        sd=result.stats.sd,
        rsd_percent=result.stats.rsd_percent,
        outlier=result.stats.outlier,
        u=unc.u if unc else None,
        U=unc.U if unc else None,
        k=unc.k if unc else None,
        replicates=tuple(
            EvaluatedReplicate(index=r.index, normality=r.normality, outlier=r.outlier,
                               excluded=r.excluded, true_mass_g=r.true_mass_g)
            for r in result.replicates),
        budget=unc.budget if unc else (),
        notes=tuple(notes),
        uncertainty_notes=unc.notes if unc else (),
        checks=checks,
        verdict=verdict(checks) if s.judgement is not None else None,
        indicator=indicator,
        equivalence_ph=eq_ph,
        titrant=solute.code if solute else None,
        titrant_n_eq_per_mol=titrant_rx.n if titrant_rx else None,
        standard=facts,
        reaction=std_rx.name if std_rx else None,
        repeatability=_repeatability_source(s, result.stats.n),
    )


def _repeatability_source(s: Standardization, included: int) -> RepeatabilitySource:
    if s.u_rel_repeatability is not None:
        return s.repeatability_from
    return "estimated" if included > 1 else "missing"


def reactions_for(standard: Material, titrant: Material | None,
               name: str | None) -> tuple[Reaction, Reaction | None]:
    """The standard's reaction (the one named, else the pair's) and the titrant's.

    A named reaction must be of the kind the titrant titrates by; an unknown name is
    refused with the standard's reactions listed (``Material.reaction``)."""
    std_rx, titrant_rx = loader.reaction_for_pair(standard, titrant)
    if name is None:
        return std_rx, titrant_rx
    chosen = standard.reaction(name=name)
    if titrant_rx is not None and chosen.kind != titrant_rx.kind:
        raise InvalidInput(f"reaction {chosen.name} of {standard.code} is {chosen.kind}; "
                           f"{titrant.code if titrant else 'the titrant'} titrates by "
                           f"{titrant_rx.kind}")
    if titrant is not None and chosen.titrant_reaction:
        titrant_rx = titrant.reaction(name=chosen.titrant_reaction)
    return chosen, titrant_rx


def _primary(material: Material, reaction: Reaction, w: Weighed,
             notes: list[str]) -> tuple[st.PrimaryStandard, StandardFacts]:
    mm = formula.molar_mass(material.formula)
    u_purity = w.u_purity_fraction
    if u_purity is None:
        u_purity = DEFAULT_PURITY_HALF_WIDTH / math.sqrt(3)
        notes.append("purity uncertainty not on record: +/-0.05 % assumed")
    standard = st.PrimaryStandard(
        name=material.name, molar_mass_g_per_mol=mm.value_g_per_mol,
        u_molar_mass_g_per_mol=mm.u_g_per_mol, n_eq_per_mol=reaction.n,
        purity_fraction=w.purity_fraction, u_purity_fraction=u_purity,
        density_g_per_cm3=material.density_g_per_cm3)
    facts = StandardFacts(
        code=material.code, name=material.name, formula=material.formula,
        molar_mass_g_per_mol=mm.value_g_per_mol, u_molar_mass_g_per_mol=mm.u_g_per_mol,
        n_eq_per_mol=reaction.n, equivalent_weight_g_per_eq=mm.value_g_per_mol / reaction.n,
        purity_percent=w.purity_fraction * 100)
    return standard, facts


def _buoyancy(s: Standardization, material: Material,
              notes: list[str]) -> st.Buoyancy | None:
    if s.buoyancy == "off":
        return None
    if material.density_g_per_cm3 is not None:
        return st.Buoyancy()
    if s.buoyancy == "on":
        raise InvalidInput(f"no density is known for {material.name}; cannot correct for "
                           "buoyancy")
    notes.append(f"no density known for {material.name}: buoyancy not corrected")
    return None


def _equivalence_ph(material: Material, reaction: Reaction, standard: st.PrimaryStandard,
                    kept: list[Reading], mean_volume: float) -> float | None:
    """pH at the equivalence point of an acid-base standard of known pKa, else None."""
    if reaction.kind != "acid-base" or not material.pka:
        return None
    from prepbook.chem import equilibria

    mean_mass = sum(r.amount for r in kept) / len(kept)
    moles = mean_mass * standard.purity_fraction / standard.molar_mass_g_per_mol
    conc = moles / ((mean_volume + DISSOLVING_WATER_ML) / 1000)
    return equilibria.equivalence_ph_for(material, reaction, conc)


def _indicator(name: str | None,
               notes: list[str]) -> tuple[str | None, tuple[float, float] | None]:
    """The catalog's name and pH range of an indicator; one outside the catalog is kept
    as typed and not checked."""
    if not name:
        return name, None
    try:
        ind = loader.find_indicator(name)
    except LookupError:
        notes.append(f"indicator {name!r} is not in the catalog: not checked")
        return name, None
    if ind.low_ph is not None and ind.high_ph is not None:
        return ind.name, (ind.low_ph, ind.high_ph)
    return ind.name, None
