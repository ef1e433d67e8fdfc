"""The database-free standardization calculations behind ``prepbook calc``
(``normality``, ``secondary``); the preparation calculators are in ``lab.preparing``.

Each function takes the values as typed (strings), looks materials up in the
built-in catalog, calls the chemistry core and returns a frozen dataclass whose fields
are the keys of the command's JSON.
No SQLAlchemy here: ``prepbook calc`` must start fast.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import TYPE_CHECKING

from prepbook.errors import InvalidInput
from prepbook.inputs import (
    ReplicateEntry,
    parse_number,
    parse_percent,
    parse_replicates,
    parse_text,
)

if TYPE_CHECKING:
    from prepbook.chem.stats import OutlierFlag
    from prepbook.chem.uncertainty import BudgetLine
    from prepbook.rules.evaluation import Reading, StandardFacts

# Ph. Eur. 4.2.2: a volumetric solution's repeatability (RSD) not over 0.2 %.
RSD_LIMIT_PERCENT = 0.2
MIN_REPLICATES = 3  # common practice, no source
BURETTE_FRACTION = 0.30  # USP <31>


@dataclass(frozen=True)
class WeighedReplicate:
    index: int
    mass_g: str  # as typed
    volume_ml: str  # as typed
    normality: float
    true_mass_g: float | None
    outlier: bool
    excluded: bool


@dataclass(frozen=True)
class PipettedReplicate:
    index: int
    aliquot_ml: str  # as typed
    volume_ml: str  # as typed
    normality: float
    true_mass_g: float | None
    outlier: bool
    excluded: bool


@dataclass(frozen=True)
class NormalityResult:
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


@dataclass(frozen=True)
class SecondaryResult:
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
) -> NormalityResult:
    """Normality of a titrant from weighed primary standard: the one evaluation of a
    standardization (``prepbook.rules.evaluation``), with the calculator's advice.

    ``repeatability_percent``: a validated repeatability (relative SD of one result, %,
    e.g. from the method's validation), used in the budget instead of the replicates'
    scatter; without it one replicate leaves the repeatability term missing.
    ``reaction``: the standard's reaction by name (carbonate's first endpoint), else
    the one that pairs with the titrant."""
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
        reaction=parse_text(reaction, "reaction", max_len=60),
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
    )


def _repeatability(text: str | None) -> float | None:
    """A validated repeatability as typed (relative SD of one result, %), or None."""
    if text is None:
        return None
    return parse_percent(text, "repeatability RSD (%)").value


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
