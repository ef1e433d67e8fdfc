"""The database-free standardization calculations behind ``prepbook calc``
(``normality``, ``secondary``); the preparation calculators are in ``lab.preparing``.

Each function takes the values as typed (strings), looks materials up in the
built-in catalog, calls the chemistry core and returns a frozen record whose fields
are the keys of the command's JSON.
No SQLAlchemy here: ``prepbook calc`` must start fast.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import TYPE_CHECKING

import msgspec

from prepbook.errors import InvalidInput
from prepbook.inputs import (
    ReplicateEntry,
    parse_number,
    parse_percent,
    parse_repeatability,
    parse_replicates,
    parse_text,
)

if TYPE_CHECKING:
    from prepbook.chem.corrections import Expansion
    from prepbook.chem.stats import OutlierFlag
    from prepbook.chem.uncertainty import BudgetLine
    from prepbook.rules.evaluation import Reading, StandardFacts

# Ph. Eur. 4.2.2: a volumetric solution's repeatability (RSD) not over 0.2 %.
RSD_LIMIT_PERCENT = 0.2
MIN_REPLICATES = 3  # common practice, no source
BURETTE_FRACTION = 0.30  # USP <31>


class WeighedReplicate(msgspec.Struct, frozen=True):
    index: int
    mass_g: str  # as typed
    volume_ml: str  # as typed
    normality: float
    true_mass_g: float | None
    outlier: bool
    excluded: bool


class PipettedReplicate(msgspec.Struct, frozen=True):
    index: int
    aliquot_ml: str  # as typed
    volume_ml: str  # as typed
    normality: float
    true_mass_g: float | None
    outlier: bool
    excluded: bool


class NormalityResult(msgspec.Struct, frozen=True):
    """``calc normality``: its fields are the keys of the command's JSON."""

    standard: StandardFacts
    titrant: str | None
    reaction: str
    titrant_n_eq_per_mol: float | None
    blank_ml: float
    buoyancy: bool
    normality: float
    molarity: float | None
    replicates: tuple[WeighedReplicate, ...]
    sd: float | None
    rsd_percent: float | None
    u: float | None
    U: float | None
    k: float | None
    budget: tuple[BudgetLine, ...]
    warnings: tuple[str, ...]
    repeatability_rsd_percent: float | None  # the validated value given, if any
    uncertainty_notes: tuple[str, ...]  # what the budget assumed or left out
    repeatability: str  # given, or estimated from the replicates, or missing (one)
    temperature_c: float | None  # of the standardization, as given; None: not given
    normality_20c: float | None  # carried to 20 C; None without a temperature
    solvent: str | None  # the titrant's, as carried; None without a temperature
    expansion_per_c: float | None  # the solvent's cubic expansion; None: water's density
    expansion_source: str | None  # where the coefficient (or water's density) comes from


class SecondaryResult(msgspec.Struct, frozen=True):
    """``calc secondary``: its fields are the keys of the command's JSON."""

    reference_normality: float
    aliquot_ml: float
    blank_ml: float
    normality: float
    replicates: tuple[PipettedReplicate, ...]
    sd: float | None
    rsd_percent: float | None
    warnings: tuple[str, ...]
    reference_u: float | None  # the reference's standard uncertainty as given, eq/L
    u: float | None
    U: float | None
    k: float | None
    budget: tuple[BudgetLine, ...]
    repeatability_rsd_percent: float | None
    repeatability: str
    uncertainty_notes: tuple[str, ...]


def _stat_warnings(n: int, rsd_percent: float | None, outlier: OutlierFlag | None) -> list[str]:
    warnings: list[str] = []
    if outlier is not None:
        o = outlier
        warnings.append(
            f"replicate {o.index} ({o.value:.5f}) is flagged as an outlier by {o.test}'s test "
            f"(G = {o.statistic:.3f} > {o.critical:.3f} at 95 %); it is kept in the mean"
        )
    if n < MIN_REPLICATES:
        warnings.append(
            f"only {n} replicate(s); at least {MIN_REPLICATES} are usual (common practice)"
        )
    if rsd_percent is not None and rsd_percent > RSD_LIMIT_PERCENT:
        warnings.append(
            f"RSD {rsd_percent:.3f} % is above {RSD_LIMIT_PERCENT} % (Ph. Eur. 4.2.2)"
        )
    return warnings


def normality(
    *,
    standard: str,
    replicates: list[str],
    titrant: str | None = None,
    purity_percent: str = "100",
    purity_u_percent: str | None = None,
    blank_ml: str = "0",
    buoyancy: bool = False,
    linearity_mg: str = "0.15",
    burette_tolerance_ml: str = "0.05",
    burette_capacity_ml: str | None = None,
    temperature_range_c: str = "3",
    repeatability_percent: str | None = None,
    reaction: str | None = None,
    temperature_c: str | None = None,
    spec: str | None = None,
    solvent: str | None = None,
    expansion_per_c: str | None = None,
    expansion_source: str | None = None,
) -> NormalityResult:
    """Normality of a titrant from weighed primary standard: the one evaluation of a
    standardization (``prepbook.rules.evaluation``), with the calculator's advice.

    ``repeatability_percent``: a validated repeatability (relative SD of one result, %,
    e.g. from the method's validation), used in the budget instead of the replicates'
    scatter; without it one replicate leaves the repeatability term missing.
    ``reaction``: the standard's reaction by name (carbonate's first endpoint), else
    the one that pairs with the titrant.
    ``temperature_c``: the temperature of the standardization; the normality is then
    carried to 20 C with the titrant's solvent, as ``spec``, ``solvent`` or
    ``expansion_per_c`` (with ``expansion_source``) state it (``lab.preparing.
    titrant_expansion``): a titrant the catalog makes only in another solvent is refused
    without one, any other is carried with water's density."""
    from prepbook.rules import evaluation as ev
    from prepbook.rules import plausibility as plaus

    purity_r = parse_percent(purity_percent, "purity")
    purity = purity_r.value / 100
    u_purity = None
    if purity_u_percent is not None:
        u_purity = parse_number(purity_u_percent, "purity uncertainty", non_negative=True).value
        u_purity /= 100
    blank = parse_number(blank_ml, "blank (mL)", non_negative=True)
    entries = parse_replicates(replicates)
    linearity_g = parse_number(linearity_mg, "balance linearity (mg)", non_negative=True).value
    linearity_g /= 1000
    tol = parse_number(burette_tolerance_ml, "burette tolerance (mL)", non_negative=True).value
    t_range = parse_number(temperature_range_c, "temperature range (C)", non_negative=True).value
    capacity = (
        parse_number(burette_capacity_ml, "burette capacity (mL)", positive=True).value
        if burette_capacity_ml is not None
        else None
    )
    rsd = _repeatability(repeatability_percent)
    reaction = parse_text(reaction, "reaction", max_len=60)
    carried = _carried(temperature_c, standard=standard, titrant=titrant,
                       reaction=reaction, spec=spec, solvent=solvent,
                       per_c=expansion_per_c, source=expansion_source)
    linearity_text = parse_number(linearity_mg, "balance linearity (mg)").text
    tol_text = parse_number(burette_tolerance_ml, "burette tolerance (mL)").text
    # What cannot be right is refused; what is unusual becomes a warning.
    unusual = [
        *plaus.replicates(
            [plaus.Replicate(position=i, amount=e.amount.value, volume_ml=e.volume.value,
                             amount_text=e.amount.text, volume_text=e.volume.text)
             for i, e in enumerate(entries, start=1)],
            weighed=True, burette_capacity_ml=capacity),
        *plaus.primary_purity(purity_r.value, purity_r.text),
        *plaus.balance_linearity(linearity_g * 1000, linearity_text),
        *plaus.burette_tolerance(tol, tol_text, capacity),
    ]
    e = ev.evaluate(ev.Standardization(
        readings=readings_of(entries),
        titrant=titrant,
        standard=ev.Weighed(material=standard, purity_fraction=purity,
                            u_purity_fraction=u_purity),
        blank_ml=blank.value,
        blank_text=blank.text,
        temperature_range_c=t_range,
        buoyancy="on" if buoyancy else "off",
        balance_linearity_g=linearity_g,
        burette_tolerance_ml=tol,
        burette_capacity_ml=capacity,
        u_rel_repeatability=None if rsd is None else rsd / 100,
        reaction=reaction,
        temperature_c=20.0 if carried is None else carried[0],
        expansion=None if carried is None else carried[1],
    ))
    std, reaction = e.standard, e.reaction
    assert std is not None and reaction is not None, "a weighed standard has a reaction"
    warnings = [*unusual, *_stat_warnings(e.n, e.rsd_percent, e.outlier)]
    if capacity is not None:
        warnings += [
            f"titrant volume {entry.volume.text} mL is below 30 % of the {capacity:g} mL "
            f"burette ({BURETTE_FRACTION * capacity:.1f} mL), USP <31>"
            for entry in entries if entry.volume.value < BURETTE_FRACTION * capacity
        ]
    n_titrant = e.titrant_n_eq_per_mol
    solvent_used, per_c_used, source_used = _expansion_keys(carried)
    return NormalityResult(
        standard=std,
        titrant=e.titrant,
        reaction=reaction,
        titrant_n_eq_per_mol=n_titrant,
        blank_ml=blank.value,
        buoyancy=buoyancy,
        normality=e.normality,
        molarity=e.normality / n_titrant if n_titrant else None,
        replicates=tuple(
            WeighedReplicate(index=r.index, mass_g=entry.amount.text,
                             volume_ml=entry.volume.text, normality=r.normality,
                             true_mass_g=r.true_mass_g, outlier=r.outlier, excluded=r.excluded)
            for r, entry in zip(e.replicates, entries, strict=True)),
        sd=e.sd,
        rsd_percent=e.rsd_percent,
        u=e.u,
        U=e.U,
        k=e.k,
        budget=e.budget,
        warnings=tuple(warnings),
        repeatability_rsd_percent=rsd,
        uncertainty_notes=e.uncertainty_notes,
        repeatability=e.repeatability,
        temperature_c=None if carried is None else carried[0],
        normality_20c=None if carried is None else e.normality_20c,
        solvent=solvent_used,
        expansion_per_c=per_c_used,
        expansion_source=source_used,
    )


def _carried(temperature_c: str | None, *, standard: str, titrant: str | None,
             reaction: str | None, spec: str | None, solvent: str | None,
             per_c: str | None, source: str | None
             ) -> tuple[float, Expansion | None] | None:
    """The temperature of standardization and the titrant's expansion (None: water's
    density), or None when no temperature is given (nothing is carried, and a solvent
    stated would be used for nothing, so it is refused)."""
    if temperature_c is None:
        if any(v is not None for v in (spec, solvent, per_c, source)):
            raise InvalidInput("--spec, --solvent and --expansion say how the normality is "
                               "carried to 20 C: give the temperature of standardization "
                               "with --temp C")
        return None
    from prepbook.chem.corrections import CORRECTION_RANGE_C
    from prepbook.lab.preparing import titrant_expansion

    t = parse_number(temperature_c, "temperature (C)")
    low, high = CORRECTION_RANGE_C
    if not low <= t.value <= high:
        raise InvalidInput(f"temperature {t.text} C is outside {low:g}-{high:g} C, where a "
                           "titrant's temperature correction is applied")
    expansion = titrant_expansion(spec=spec, solvent=solvent, per_c=per_c, source=source,
                                  solute=_titrant_code(standard, titrant, reaction))
    return t.value, expansion


def _titrant_code(standard: str, titrant: str | None, reaction: str | None) -> str | None:
    """The titrant's catalog code: the one named, else the one the standard's reaction
    (named, or its first) pairs with; None when neither says."""
    from prepbook.catalog import loader
    from prepbook.rules.evaluation import reactions_for

    if titrant is not None:
        return loader.find_material(titrant).code
    chosen, _ = reactions_for(loader.find_material(standard), None, reaction)
    return chosen.titrant


def _expansion_keys(carried: tuple[float, Expansion | None] | None
                    ) -> tuple[str | None, float | None, str | None]:
    """The output's ``solvent``, ``expansion_per_c`` and ``expansion_source``."""
    if carried is None:
        return None, None, None
    from prepbook.chem.corrections import WATER_DENSITY_SOURCE

    expansion = carried[1]
    if expansion is None:
        return "water", None, WATER_DENSITY_SOURCE
    return expansion.solvent, expansion.per_c, expansion.source


def _repeatability(text: str | None) -> float | None:
    """A validated repeatability as typed (relative SD of one result, %), or None."""
    if text is None:
        return None
    return parse_repeatability(text).value


def readings_of(entries: Iterable[ReplicateEntry]) -> tuple[Reading, ...]:
    """Replicates as parsed, in the evaluation's terms (numbers and the text typed)."""
    from prepbook.rules.evaluation import Reading

    return tuple(Reading(amount=e.amount.value, volume_ml=e.volume.value,
                         amount_text=e.amount.text, volume_text=e.volume.text)
                 for e in entries)


def secondary(
    *,
    reference_normality: str,
    aliquot_ml: str,
    volumes: list[str],
    blank_ml: str = "0",
    reference_u: str | None = None,
    pipette_tolerance_ml: str = "0.03",
    burette_tolerance_ml: str = "0.05",
    temperature_range_c: str = "3",
    repeatability_percent: str | None = None,
) -> SecondaryResult:
    """Normality against a standardized solution, with its budget: the reference's own
    standard uncertainty (``reference_u``, eq/L; without it the budget names it
    missing), the pipette, the burette and the repeatability, as a recorded secondary
    run computes them (``prepbook.rules.evaluation``)."""
    from prepbook.rules import evaluation as ev

    ref = parse_number(reference_normality, "reference normality", positive=True)
    aliquot = parse_number(aliquot_ml, "aliquot (mL)", positive=True)
    blank = parse_number(blank_ml, "blank (mL)", non_negative=True)
    u_ref = (parse_number(reference_u, "reference uncertainty (eq/L)", non_negative=True).value
             if reference_u is not None else None)
    pipette = parse_number(pipette_tolerance_ml, "pipette tolerance (mL)", non_negative=True)
    tol = parse_number(burette_tolerance_ml, "burette tolerance (mL)", non_negative=True)
    t_range = parse_number(temperature_range_c, "temperature range (C)", non_negative=True)
    rsd = _repeatability(repeatability_percent)
    if not volumes:
        raise InvalidInput("at least one replicate (--rep VOLUME) is required")
    entries = parse_replicates([f"{aliquot.text}:{v}" for v in volumes], amount_name="aliquot (mL)")
    e = ev.evaluate(ev.Standardization(
        readings=readings_of(entries), titrant=None,
        reference=ev.Reference(batch="the reference", run=None, normality_20c=ref.value,
                               u=u_ref),
        blank_ml=blank.value, blank_text=blank.text, temperature_range_c=t_range.value,
        burette_tolerance_ml=tol.value, pipette_tolerance_ml=pipette.value,
        u_rel_repeatability=None if rsd is None else rsd / 100))
    return SecondaryResult(
        reference_normality=ref.value,
        aliquot_ml=aliquot.value,
        blank_ml=blank.value,
        normality=e.normality,
        replicates=tuple(
            PipettedReplicate(index=r.index, aliquot_ml=entry.amount.text,
                              volume_ml=entry.volume.text, normality=r.normality,
                              true_mass_g=r.true_mass_g, outlier=r.outlier, excluded=r.excluded)
            for r, entry in zip(e.replicates, entries, strict=True)),
        sd=e.sd,
        rsd_percent=e.rsd_percent,
        warnings=tuple(_stat_warnings(e.n, e.rsd_percent, e.outlier)),
        reference_u=u_ref,
        u=e.u,
        U=e.U,
        k=e.k,
        budget=e.budget,
        repeatability_rsd_percent=rsd,
        repeatability=e.repeatability,
        uncertainty_notes=e.uncertainty_notes,
    )
