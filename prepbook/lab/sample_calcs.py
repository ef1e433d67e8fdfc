"""The database-free sample calculation behind ``prepbook calc sample``.

Takes the values as typed (strings), finds the analyte, its method and the titrant in the
built-in catalog (``catalog.samples.analyte_titration``), computes with
``prepbook.chem.sample`` and returns a frozen record whose fields are the keys of the
command's JSON. No SQLAlchemy here.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import msgspec

from prepbook.errors import InvalidInput
from prepbook.inputs import Reading, parse_number, parse_percent

if TYPE_CHECKING:
    from prepbook.catalog.sample_models import AnalyteTitration
    from prepbook.chem.sample import SampleResult
    from prepbook.chem.uncertainty import BudgetLine

BURETTE_FRACTION = 0.30  # USP <31>: the titrant volume at least 30 % of the burette


class Concentration(msgspec.Struct, frozen=True):
    """A liquid sample's mass concentration: ``value`` in ``unit``, expressed as the
    formula ``as_formula`` where the trade reports it so (JSON key ``as``), else None."""

    value: float
    unit: str
    as_formula: str | None

    def to_json(self) -> dict[str, Any]:
        return {"value": self.value, "unit": self.unit, "as": self.as_formula}


class SampleRow(msgspec.Struct, frozen=True):
    """One replicate as typed and what it gives (``value``: in the result's unit)."""

    index: int
    sample: str  # mL of aliquot or g of sample, as typed
    titrant_ml: str  # as typed
    normality: float | None  # of the analyte in an aliquot; None for a weighed sample
    value: float
    outlier: bool
    excluded: bool


class ExcessFacts(msgspec.Struct, frozen=True):
    """A back-titration's reagent, as given."""

    reagent: str
    normality: float
    U: float | None
    volume_ml: float


class SampleCalc(msgspec.Struct, frozen=True):
    """``calc sample``: its fields are the keys of the command's JSON."""

    analyte: str
    analyte_name: str
    method: str
    titrant: str
    titrant_normality: float
    titrant_n_eq_per_mol: float
    sample_kind: str  # "aliquot" | "mass"
    blank_ml: float
    normality: float | None
    molarity: float | None
    concentration: Concentration | None
    mass_fraction_percent: float | None
    reported_as: str | None
    replicates: tuple[SampleRow, ...]
    sd: float | None
    rsd_percent: float | None
    u: float
    U: float
    k: float
    budget: tuple[BudgetLine, ...]
    warnings: tuple[str, ...]
    mg_per_ml: float
    equivalence_statement: str
    excess_reagent: ExcessFacts | None
    uncertainty_notes: tuple[str, ...]


def _number(text: str | None, what: str, **kind: bool) -> float | None:
    return None if text is None else parse_number(text, what, **kind).value


def _titrant_normality(found: AnalyteTitration, normality: str | None,
                       molarity: str | None, u_text: str | None) -> tuple[float, float | None]:
    """The titrant's normality (eq/L) and its expanded uncertainty in eq/L."""
    if (normality is None) == (molarity is None):
        raise InvalidInput("give the titrant's strength as --normality or --molarity (one)")
    n_t = found.titrant_n_eq_per_mol
    scale = 1.0 if normality is not None else n_t
    strength = parse_number(normality or molarity or "", "titrant strength", positive=True)
    big_u = _number(u_text, "titrant's expanded uncertainty", non_negative=True)
    return strength.value * scale, None if big_u is None else big_u * scale


def _amounts(aliquot: list[str], mass: list[str], count: int) -> tuple[list[Reading], bool]:
    if bool(aliquot) == bool(mass):
        raise InvalidInput("give the sample as --aliquot ML or --mass G (one of them)")
    texts, is_mass = (mass, True) if mass else (aliquot, False)
    what = "sample mass (g)" if is_mass else "aliquot (mL)"
    readings = [parse_number(t, what, positive=True) for t in texts]
    if len(readings) not in (1, count):
        raise InvalidInput(f"{len(readings)} sample amounts for {count} replicates: give one "
                           "for all, or one per --rep")
    return readings * (count if len(readings) == 1 else 1), is_mass


def _excess(found: AnalyteTitration, normality: str | None, u_text: str | None,
            volume: str | None) -> Any:
    from prepbook.chem.sample import ExcessReagent, Solution

    given = (normality, volume)
    if found.excess_reagent is None:
        if any(v is not None for v in (*given, u_text)):
            raise InvalidInput(f"the {found.method.name} method of {found.analyte.name} is not "
                               "a back-titration: leave out the excess reagent")
        return None
    if None in given:
        raise InvalidInput(
            f"the {found.method.name} method is a back-titration: give the "
            f"{found.excess_reagent.name} added as --excess-volume ML and --excess-normality N")
    return ExcessReagent(
        Solution(found.excess_reagent.name,
                 parse_number(normality or "", "excess reagent normality", positive=True).value,
                 _number(u_text, "excess reagent's expanded uncertainty", non_negative=True),
                 n_eq_per_mol=found.excess_reagent_n_eq_per_mol),
        parse_number(volume or "", "excess reagent volume (mL)", positive=True).value)


def sample(
    *,
    analyte: str,
    titrant: str,
    volumes: list[str],
    normality: str | None = None,
    molarity: str | None = None,
    normality_u: str | None = None,
    aliquot: list[str] | None = None,
    mass: list[str] | None = None,
    blank_ml: str = "0",
    method: str | None = None,
    excess_normality: str | None = None,
    excess_normality_u: str | None = None,
    excess_ml: str | None = None,
    burette_tolerance_ml: str = "0.05",
    pipette_tolerance_ml: str = "0.03",
    linearity_mg: str = "0.15",
    temperature_range_c: str = "3",
    repeatability_percent: str | None = None,
    burette_capacity_ml: str | None = None,
) -> SampleCalc:
    """The analyte in a sample titrated with a standardized titrant (see chem.sample)."""
    from prepbook.catalog.samples import analyte_titration
    from prepbook.chem import sample as chem

    found = analyte_titration(analyte, titrant, method)
    n_t, big_u = _titrant_normality(found, normality, molarity, normality_u)
    if not volumes:
        raise InvalidInput("at least one replicate (--rep ML of titrant) is required")
    readings = [parse_number(v, f"replicate {i}: titrant volume (mL)", positive=True)
                for i, v in enumerate(volumes, start=1)]
    amounts, is_mass = _amounts(list(aliquot or []), list(mass or []), len(readings))
    blank = parse_number(blank_ml, "blank (mL)", non_negative=True).value
    rsd = (parse_percent(repeatability_percent, "repeatability RSD (%)").value
           if repeatability_percent is not None else None)
    linearity = parse_number(linearity_mg, "balance linearity (mg)", non_negative=True).value
    instruments = chem.Instruments(
        burette_tolerance_ml=parse_number(burette_tolerance_ml, "burette tolerance (mL)",
                                          non_negative=True).value,
        pipette_tolerance_ml=parse_number(pipette_tolerance_ml, "pipette tolerance (mL)",
                                          non_negative=True).value,
        balance_linearity_g=linearity / 1000.0,
        temperature_range_c=parse_number(temperature_range_c, "temperature range (C)",
                                         non_negative=True).value,
        u_rel_repeatability=None if rsd is None else rsd / 100.0)
    excess = _excess(found, excess_normality, excess_normality_u, excess_ml)
    result = chem.sample_result(
        found.computed, chem.Solution(found.titrant.name, n_t, big_u,
                                      n_eq_per_mol=found.titrant_n_eq_per_mol),
        [a.value for a in amounts], [r.value for r in readings], sample_is_mass=is_mass,
        blank_ml=blank, excess=excess, instruments=instruments)
    capacity = _number(burette_capacity_ml, "burette capacity (mL)", positive=True)
    return _calc(found, result, n_t, blank, amounts, readings, excess, capacity)


def _warnings(result: SampleResult, readings: list[Reading],
              capacity: float | None) -> tuple[str, ...]:
    out = []
    flag = result.stats.outlier
    if flag is not None:
        out.append(f"replicate {flag.index} stands out by Grubbs' test (G = "
                   f"{flag.statistic:.3f} > {flag.critical:.3f} at 95 %); it is kept in the "
                   "mean")
    if capacity is not None:
        low = BURETTE_FRACTION * capacity
        out += [f"replicate {i}: {r.text} mL is under 30 % of the {capacity:g} mL burette "
                f"({low:.1f} mL), USP <31>: use a smaller burette or a larger sample"
                for i, r in enumerate(readings, start=1) if r.value < low]
    return tuple(out)


def _calc(found: AnalyteTitration, result: SampleResult, n_t: float, blank: float,
          amounts: list[Reading], readings: list[Reading], excess: Any,
          capacity: float | None) -> SampleCalc:
    what = found.analyte.report_as or found.analyte.formula
    if excess is None:
        statement = (f"each mL of {n_t:g} N {found.titrant.name} is equivalent to "
                     f"{result.mg_per_ml:.4g} mg of {what}")
    else:
        statement = (f"each mL of {excess.solution.normality:g} N {excess.solution.name} "
                     f"consumed by the sample is equivalent to {result.mg_per_ml:.4g} mg "
                     f"of {what}")
    facts = None
    if excess is not None:
        facts = ExcessFacts(excess.solution.name, excess.solution.normality, excess.solution.U,
                            excess.volume_ml)
    budget = result.uncertainty
    return SampleCalc(
        analyte=found.analyte.code, analyte_name=found.analyte.name, method=found.method.name,
        titrant=found.titrant.code, titrant_normality=n_t,
        titrant_n_eq_per_mol=found.titrant_n_eq_per_mol,
        sample_kind="mass" if result.sample_is_mass else "aliquot", blank_ml=blank,
        normality=result.normality, molarity=result.molarity,
        concentration=(None if result.concentration is None else
                       Concentration(result.concentration, result.unit, result.reported_as)),
        mass_fraction_percent=result.mass_fraction_percent, reported_as=result.reported_as,
        replicates=tuple(
            SampleRow(index=r.index, sample=amount.text, titrant_ml=reading.text,
                      normality=r.normality, value=r.value, outlier=r.outlier,
                      excluded=r.excluded)
            for r, amount, reading in zip(result.replicates, amounts, readings, strict=True)),
        sd=result.stats.sd, rsd_percent=result.stats.rsd_percent, u=budget.u, U=budget.U,
        k=budget.k, budget=budget.budget, warnings=_warnings(result, readings, capacity),
        mg_per_ml=result.mg_per_ml, equivalence_statement=statement, excess_reagent=facts,
        uncertainty_notes=budget.notes)
