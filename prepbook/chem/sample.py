"""A sample's result from a standardized titrant: the titration equation, with its budget.

Why: a titrant is standardized so that samples can be titrated with it. Equivalents of
analyte equal equivalents of titrant, so for an aliquot of V_s mL::

    N_a = N_t (V_t - V_blank) / V_s                                  (eq/L)

and for a back-titration (a measured excess V_r of a reagent of normality N_r reacts
with the analyte; what is left is titrated)::

    N_a = (N_r V_r - N_t (V_t - V_blank)) / V_s

From N_a: the molarity c_a = N_a / n_a (n_a: equivalents per mole of the analyte in this
reaction), the mass concentration N_a M / n_a (g/L; or N_a M_as / n_as "as CaCO3", the
way alkalinity and hardness are reported), and, for a weighed sample of m g instead of an
aliquot, the mass fraction 100 eq EW / m, eq = N_t (V_t - V_blank) / 1000.

Each replicate gives its own result; the reported value is the mean of the included
ones, with their statistics (``chem.stats``). The GUM budget (``chem.uncertainty``) is
evaluated once at the mean sample amount and mean titrant volume, with a repeatability
factor f_rep = 1, as ``chem.standardization`` does for a standardization:

- the titrant's normality with its own standard uncertainty (its expanded uncertainty
  over its coverage factor); when none is given the term is reported missing, never
  silently left out;
- the pipette that delivers the aliquot (tolerance triangular, temperature rectangular,
  as ``volume_u_from_burette``) or the balance that weighs the sample (linearity,
  rectangular, twice: tare and gross);
- the burette (the same treatment), and the blank reading when there is one;
- for a back-titration, the excess reagent's normality and the pipette that delivers it;
- the molar mass of the species reported (atomic-weight uncertainty);
- repeatability: a validated relative SD when given, else s/(mean sqrt(n)) of the
  replicate results, missing with one replicate.

Pure computation: numbers in, a frozen record out.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Collection, Sequence
from typing import Any

import msgspec

from prepbook.chem.stats import ReplicateStats, check_excluded, replicate_stats
from prepbook.chem.uncertainty import (
    COVERAGE_FACTOR,
    InputQuantity,
    MissingTerm,
    UncertaintyResult,
    mass_u_from_balance,
    propagate,
    repeatability_term,
    volume_u_from_burette,
)
from prepbook.errors import InvalidInput

#: Grams per litre of sample to the unit reported (g/100 mL is the "% w/v" of a label).
UNIT_SCALE = {"g/L": 1.0, "mg/L": 1000.0, "g/100 mL": 0.1}

#: Instrument defaults: Class A 50 mL burette +/- 0.05 mL (ISO 385); Class A 25 mL
#: pipette +/- 0.03 mL (from memory); balance linearity +/- 0.15 mg (EURACHEM/CITAC CG4
#: Example A2); laboratory temperature +/- 3 C (CG4 Example A2).
BURETTE_TOLERANCE_ML = 0.05
PIPETTE_TOLERANCE_ML = 0.03
BALANCE_LINEARITY_G = 0.00015
TEMPERATURE_RANGE_C = 3.0


class Analyte(msgspec.Struct, frozen=True):
    """The analyte as titrated in one reaction.

    ``n_eq_per_mol``: equivalents per mole of the analyte in this reaction, in the
    titrant's convention. ``unit``: how a liquid sample's concentration is reported
    (g/L, mg/L or g/100 mL). ``report_as`` / ``report_as_molar_mass_g_per_mol`` /
    ``report_as_n``: the formula the result is expressed as ("CaCO3"), its molar mass
    and its equivalents per mole; None to report the analyte itself.
    """

    name: str
    formula: str
    molar_mass_g_per_mol: float
    u_molar_mass_g_per_mol: float
    n_eq_per_mol: float
    unit: str = "g/L"
    report_as: str | None = None
    report_as_molar_mass_g_per_mol: float | None = None
    u_report_as_molar_mass_g_per_mol: float = 0.0
    report_as_n: float | None = None

    @property
    def reported_molar_mass(self) -> tuple[float, float, float]:
        """(M, u(M), n) of the species whose mass is reported."""
        if self.report_as is None:
            return self.molar_mass_g_per_mol, self.u_molar_mass_g_per_mol, self.n_eq_per_mol
        if self.report_as_molar_mass_g_per_mol is None or self.report_as_n is None:
            raise InvalidInput(f"{self.name}: reported as {self.report_as} without its molar "
                               "mass and n")
        return (self.report_as_molar_mass_g_per_mol, self.u_report_as_molar_mass_g_per_mol,
                self.report_as_n)

    @property
    def reported_equivalent_weight_g_per_eq(self) -> float:
        """Grams of the reported species per equivalent (50.04 for alkalinity as CaCO3)."""
        mass, _, n = self.reported_molar_mass
        return mass / n


class Solution(msgspec.Struct, frozen=True):
    """A standardized solution: the titrant, or the excess reagent of a back-titration.

    ``U`` is its expanded uncertainty (eq/L) with coverage factor ``k``; None when not
    known (the budget then names the term as missing). ``n_eq_per_mol`` converts a
    molarity to a normality and back (None when not known).
    """

    name: str
    normality: float
    U: float | None = None
    k: float = COVERAGE_FACTOR
    n_eq_per_mol: float | None = None


class ExcessReagent(msgspec.Struct, frozen=True):
    """A back-titration's reagent: the solution, the volume added (mL, each replicate
    the same) and the tolerance of the pipette that delivers it (+/- mL)."""

    solution: Solution
    volume_ml: float
    pipette_tolerance_ml: float = PIPETTE_TOLERANCE_ML


class Instruments(msgspec.Struct, frozen=True):
    """Tolerances and conditions for the budget (see the module docstring)."""

    burette_tolerance_ml: float = BURETTE_TOLERANCE_ML
    pipette_tolerance_ml: float = PIPETTE_TOLERANCE_ML
    balance_linearity_g: float = BALANCE_LINEARITY_G
    temperature_range_c: float = TEMPERATURE_RANGE_C
    u_rel_repeatability: float | None = None  # a validated relative SD of one result


DEFAULT_INSTRUMENTS = Instruments()


class SampleReplicate(msgspec.Struct, frozen=True):
    """One titration of the sample and what it gives.

    ``value`` is the reported quantity (concentration in the analyte's unit for an
    aliquot, mass fraction in % for a weighed sample); ``normality`` is None for a
    weighed sample."""

    index: int  # 1-based
    sample_amount: float  # mL of aliquot or g of sample
    titrant_ml: float
    equivalents_meq: float  # milliequivalents of analyte found
    normality: float | None
    value: float
    outlier: bool
    excluded: bool


class SampleResult(msgspec.Struct, frozen=True):
    """The sample's result: the mean of the included replicates and its uncertainty.

    For an aliquot: ``normality`` and ``molarity`` of the analyte in the sample and
    ``concentration`` in ``unit`` (``reported_as`` the formula when it is "as CaCO3");
    ``mass_fraction_percent`` is None. For a weighed sample: ``mass_fraction_percent``
    (% w/w, of ``reported_as`` when set), and the others None. ``value`` and ``unit`` are
    the reported quantity either way, which ``uncertainty`` (u, U, budget) is about.
    ``mg_per_ml``: the pharmacopoeial figure, mg of the reported species equivalent to
    1 mL of this titrant (of the excess reagent, in a back-titration: that is what the
    sample consumes).
    """

    analyte: str
    sample_is_mass: bool
    normality: float | None
    molarity: float | None
    concentration: float | None
    mass_fraction_percent: float | None
    value: float
    unit: str
    reported_as: str | None
    mg_per_ml: float
    back_titration: bool
    replicates: tuple[SampleReplicate, ...]
    stats: ReplicateStats
    uncertainty: UncertaintyResult

    @property
    def u(self) -> float:
        return self.uncertainty.u

    @property
    def U(self) -> float:  # noqa: N802 - the GUM's symbol
        return self.uncertainty.U


# ----------------------------------------------------------------------------- checks


def _number(value: object, what: str, *, positive: bool = False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(
            value):
        raise InvalidInput(f"{what} {value!r} is not a finite number")
    number = float(value)
    if positive and number <= 0:
        raise InvalidInput(f"{what} {number:g} must be positive")
    if number < 0:
        raise InvalidInput(f"{what} {number:g} must not be negative")
    return number


def _solution_u(solution: Solution) -> float | None:
    if solution.U is None:
        return None
    return _number(solution.U, f"expanded uncertainty of {solution.name}") / _number(
        solution.k, f"coverage factor of {solution.name}", positive=True)


def _check_analyte(analyte: Analyte) -> tuple[float, float, float]:
    if analyte.unit not in UNIT_SCALE:
        raise InvalidInput(f"unit {analyte.unit!r} is not one of {', '.join(UNIT_SCALE)}")
    _number(analyte.n_eq_per_mol, f"n of {analyte.name} (eq/mol)", positive=True)
    mass, u_mass, n = analyte.reported_molar_mass
    return (_number(mass, "molar mass (g/mol)", positive=True),
            _number(u_mass, "molar mass uncertainty (g/mol)"),
            _number(n, "n of the reported form (eq/mol)", positive=True))


# ----------------------------------------------------------------------------- the result


def sample_result(
    analyte: Analyte,
    titrant: Solution,
    sample_amounts: Sequence[float],
    titrant_ml: Sequence[float],
    *,
    sample_is_mass: bool = False,
    blank_ml: float = 0.0,
    excess: ExcessReagent | None = None,
    instruments: Instruments = DEFAULT_INSTRUMENTS,
    excluded: Collection[int] = (),
) -> SampleResult:
    """The analyte in a sample from replicate titrations with a standardized titrant.

    ``sample_amounts``: mL of aliquot (or g of sample when ``sample_is_mass``) for each
    replicate, or one amount for all. ``titrant_ml``: the titrant volume at each endpoint.
    ``blank_ml``: titrant taken by a blank, subtracted from each volume. ``excess``: the
    reagent of a back-titration. ``excluded``: 1-based replicates left out of the mean.
    """
    mass_reported, u_mass_reported, n_reported = _check_analyte(analyte)
    n_titrant = _number(titrant.normality, f"normality of {titrant.name}", positive=True)
    u_titrant = _solution_u(titrant)
    blank = _number(blank_ml, "blank (mL)")
    volumes = [_number(v, f"replicate {i}: titrant volume (mL)", positive=True)
               for i, v in enumerate(titrant_ml, start=1)]
    if not volumes:
        raise InvalidInput("no replicate titrant volume given")
    amounts = [_number(a, "sample mass (g)" if sample_is_mass else "aliquot (mL)",
                       positive=True) for a in sample_amounts]
    if len(amounts) == 1:
        amounts = amounts * len(volumes)
    if len(amounts) != len(volumes):
        raise InvalidInput(f"{len(amounts)} sample amounts for {len(volumes)} titrant volumes: "
                           "give one amount, or one per replicate")
    reagent_meq = 0.0
    if excess is not None:
        reagent_n = _number(excess.solution.normality,
                            f"normality of {excess.solution.name}", positive=True)
        reagent_meq = reagent_n * _number(excess.volume_ml, "excess reagent (mL)",
                                          positive=True)
    skip = check_excluded(len(volumes), excluded)

    def meq(volume: float) -> float:
        """Milliequivalents of analyte in one replicate (mmol of charge, electrons ...)."""
        found = n_titrant * (volume - blank)
        return reagent_meq - found if excess is not None else found

    per_rep: list[tuple[float, float | None, float]] = []
    for i, (amount, volume) in enumerate(zip(amounts, volumes, strict=True), start=1):
        if excess is None and volume <= blank:
            raise InvalidInput(f"replicate {i}: titrant volume {volume:g} mL is not greater "
                               f"than the blank {blank:g} mL")
        found = meq(volume)
        if found <= 0:
            raise InvalidInput(f"replicate {i}: the titrant ({n_titrant * (volume - blank):g} "
                               f"meq) used up all of the excess reagent ({reagent_meq:g} meq): "
                               "add more reagent")
        normality = None if sample_is_mass else found / amount
        value = _reported(found, amount, sample_is_mass, mass_reported, n_reported,
                          analyte.unit)
        per_rep.append((found, normality, value))
    stats = replicate_stats([v for _, _, v in per_rep], excluded=skip)
    flagged = stats.outlier.index if stats.outlier is not None else None
    replicates = tuple(
        SampleReplicate(index=i, sample_amount=amounts[i - 1], titrant_ml=volumes[i - 1],
                        equivalents_meq=found, normality=normality, value=value,
                        outlier=i == flagged, excluded=i in skip)
        for i, (found, normality, value) in enumerate(per_rep, start=1))
    kept = [r for r in replicates if not r.excluded]
    budget = _budget(
        analyte=analyte, titrant=titrant, u_titrant=u_titrant, blank=blank, excess=excess,
        instruments=instruments, sample_is_mass=sample_is_mass,
        mean_amount=statistics.fmean(r.sample_amount for r in kept),
        mean_volume=statistics.fmean(r.titrant_ml for r in kept),
        mass=(mass_reported, u_mass_reported, n_reported), stats=stats)
    mean_normality = (None if sample_is_mass
                      else statistics.fmean(r.normality or 0.0 for r in kept))
    return SampleResult(
        analyte=analyte.name,
        sample_is_mass=sample_is_mass,
        normality=mean_normality,
        molarity=None if mean_normality is None else mean_normality / analyte.n_eq_per_mol,
        concentration=None if sample_is_mass else stats.mean,
        mass_fraction_percent=stats.mean if sample_is_mass else None,
        value=stats.mean,
        unit="%" if sample_is_mass else analyte.unit,
        reported_as=analyte.report_as,
        # in a back-titration the sample consumes the excess reagent, not the titrant
        mg_per_ml=(reagent_meq / excess.volume_ml if excess is not None else n_titrant)
        * mass_reported / n_reported,
        back_titration=excess is not None,
        replicates=replicates,
        stats=stats,
        uncertainty=budget,
    )


def _reported(meq: float, amount: float, sample_is_mass: bool, molar_mass: float,
              n: float, unit: str) -> float:
    """The reported value from milliequivalents found in one sample amount."""
    grams = meq * molar_mass / n / 1000.0  # of the reported species
    if sample_is_mass:
        return 100.0 * grams / amount
    return grams / (amount / 1000.0) * UNIT_SCALE[unit]


def _budget(*, analyte: Analyte, titrant: Solution, u_titrant: float | None, blank: float,
            excess: ExcessReagent | None, instruments: Instruments, sample_is_mass: bool,
            mean_amount: float, mean_volume: float, mass: tuple[float, float, float],
            stats: ReplicateStats) -> UncertaintyResult:
    molar_mass, u_molar_mass, n = mass
    t_range = instruments.temperature_range_c
    missing: list[MissingTerm] = []
    inputs = [InputQuantity(f"titrant normality ({titrant.name})", "N_t", titrant.normality,
                            "eq/L", u_titrant or 0.0)]
    if u_titrant is None:
        missing.append(MissingTerm(
            f"titrant normality ({titrant.name})", "N_t", titrant.normality, "eq/L",
            "no uncertainty given for the titrant's normality (its standardization's U): "
            "the combined uncertainty lacks this term"))
    if sample_is_mass:
        inputs.append(InputQuantity("sample mass (balance)", "m", mean_amount, "g",
                                    mass_u_from_balance(instruments.balance_linearity_g)))
    else:
        inputs.append(InputQuantity("aliquot (pipette)", "V_s", mean_amount, "mL",
                                    volume_u_from_burette(instruments.pipette_tolerance_ml,
                                                          mean_amount, t_range)))
    inputs.append(InputQuantity("titrant volume (burette)", "V_t", mean_volume, "mL",
                                volume_u_from_burette(instruments.burette_tolerance_ml,
                                                      mean_volume, t_range)))
    inputs.append(InputQuantity("blank (burette)", "V_blank", blank, "mL",
                                volume_u_from_burette(instruments.burette_tolerance_ml, blank,
                                                      t_range) if blank > 0 else 0.0))
    if excess is not None:
        u_reagent = _solution_u(excess.solution)
        reagent = excess.solution
        inputs.append(InputQuantity(f"excess reagent normality ({reagent.name})", "N_r",
                                    reagent.normality, "eq/L", u_reagent or 0.0))
        if u_reagent is None:
            missing.append(MissingTerm(
                f"excess reagent normality ({reagent.name})", "N_r", reagent.normality,
                "eq/L", "no uncertainty given for the excess reagent's normality"))
        inputs.append(InputQuantity("excess reagent (pipette)", "V_r", excess.volume_ml, "mL",
                                    volume_u_from_burette(excess.pipette_tolerance_ml,
                                                          excess.volume_ml, t_range)))
    inputs.append(InputQuantity(f"molar mass ({analyte.report_as or analyte.formula})", "M",
                                molar_mass, "g/mol", u_molar_mass))
    rep = repeatability_term(instruments.u_rel_repeatability, stats.values)
    if rep.line is not None:
        inputs.append(rep.line)
    scale = 100.0 if sample_is_mass else UNIT_SCALE[analyte.unit]

    def model(n_t: Any, amount: Any, v_t: Any, v_b: Any, *rest: Any) -> Any:
        extra = list(rest)
        found = n_t * (v_t - v_b)
        if excess is not None:
            n_r, v_r = extra.pop(0), extra.pop(0)
            found = n_r * v_r - found
        m_molar = extra.pop(0)
        factor = extra.pop(0) if extra else 1.0
        grams_per_amount = found * m_molar / n / amount
        return (grams_per_amount / 1000.0 if sample_is_mass
                else grams_per_amount) * scale * factor

    notes = list(rep.notes)
    if stats.n > 1:
        notes.insert(0, f"evaluated at the mean sample amount and mean titrant volume of the "
                        f"{stats.n} included replicates")
    result = propagate(model, inputs, report_value=stats.mean, notes=notes,
                       missing=[*missing, *rep.missing])
    # A term given as missing, and a zero blank, are not shown as evaluated lines of zero.
    hidden = {term.symbol for term in missing}
    if blank == 0:
        hidden.add("V_blank")
    lines = tuple(line for line in result.budget
                  if line.missing is not None or line.symbol not in hidden)
    return msgspec.structs.replace(result, budget=lines)
