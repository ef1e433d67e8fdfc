"""Acid-base equilibria at 25 C: the pH at an equivalence point, and the indicator that fits it.

The model is a charge balance over one weak acid/base system (its pKa values and
total concentration) in water, plus a strong acid or strong base added as titrant.
The counter-ions of the form weighed (K+ of potassium hydrogen phthalate, Na+ of
sodium carbonate) and of the titrant (Na+ of NaOH, Cl- of HCl) take no part in any
equilibrium: they are spectator ions and enter the balance only as fixed charges.

Written as a proton condition (which is the charge balance with those spectator
charges substituted), the equation solved for [H+] is::

    [H+] - Kw/[H+] + C_sites * nbar([H+]) - C * initial_protons + C_base - C_acid = 0

where ``nbar`` is the mean number of protons bound per site, ``C`` the formula units
of the dissolved form per litre, ``C_sites = C * units_per_formula``, and C_base /
C_acid the strong base / strong acid added (mol/L in the mixture). The left side
rises monotonically with [H+], so there is exactly one root; it is bracketed on
log10[H+] and found by bisection (``_bisect``).

Simplifications, stated so nobody mistakes the result for more than it is:
concentrations stand for activities (no activity coefficients, no ionic-strength
correction); the temperature is 25 C (pKw = 14.00); the vessel is closed (no CO2
lost from a carbonate titration, none absorbed from air).

Pure computation, standard library only. The root finder is bisection, not
``scipy.optimize``: importing scipy's optimizers takes 0.3-1 s, longer than a command's
whole computation, and a single root of a monotone function on a known bracket is the
textbook case where bisection is enough (``_bisect``). The tests check it against
``scipy.optimize.brentq``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from typing import Any

from prepbook.errors import InvalidInput

PKW_25C = 14.00
"""-log10 Kw of water at 25 C (the value used throughout the analytical textbooks)."""

NERNST_SLOPE_25C_MV_PER_PH = 59.16
"""Ideal glass-electrode slope at 25 C: RT ln(10) / F = 59.16 mV per pH unit."""

# log10[H+] bracket for the root: pH -4 .. 20 holds every solution a titration vessel
# can contain (the residual changes sign inside it for any concentration below 1e4 mol/L).
_LOG_H_LOW = -20.0
_LOG_H_HIGH = 4.0


# ----------------------------------------------------------------------------- validation


def check_pkas(pkas: Sequence[float]) -> tuple[float, ...]:
    """Finite, ascending pKa values (pKa1 first); ascending is what the stepwise model assumes."""
    values = tuple(float(p) for p in pkas)
    if not values:
        raise InvalidInput("give at least one pKa value")
    if not all(math.isfinite(p) for p in values):
        raise InvalidInput(f"pKa values must be finite numbers, got {list(values)}")
    if any(b < a for a, b in zip(values, values[1:], strict=False)):
        raise InvalidInput(f"list pKa values in ascending order (pKa1 first), got {list(values)}")
    return values


def check_positive(value: float, what: str) -> float:
    """``value`` as a finite float > 0, or InvalidInput naming ``what``."""
    number = float(value)
    if not math.isfinite(number) or number <= 0:
        raise InvalidInput(f"{what} must be a positive number, got {value!r}")
    return number


def _check_non_negative(value: float, what: str) -> float:
    number = float(value)
    if not math.isfinite(number) or number < 0:
        raise InvalidInput(f"{what} must be zero or a positive number, got {value!r}")
    return number


def check_count(value: int, what: str, *, minimum: int) -> int:
    """``value`` as a whole number >= ``minimum`` (a bool is refused), or InvalidInput."""
    # bool is an int in Python; True protons would be a silent mistake.
    if isinstance(value, bool) or not isinstance(value, int) or value < minimum:
        raise InvalidInput(f"{what} must be a whole number >= {minimum}, got {value!r}")
    return value


# ----------------------------------------------------------------------------- the model


def mean_bound_protons(pkas: Sequence[float], ph: float) -> float:
    """Mean number of protons bound per site of the system at ``ph`` (0 .. len(pkas)).

    The species with j protons bound has the cumulative protonation constant
    log beta_j = pKa_n + pKa_(n-1) + ... + pKa_(n-j+1): the fully deprotonated
    form takes its first proton with the highest pKa. Worked in log space so no
    power of ten overflows at the ends of the pH scale.
    """
    values = check_pkas(pkas)
    return _nbar(values, -float(ph))


def _nbar(pkas: tuple[float, ...], log_h: float) -> float:
    log_terms = [0.0]
    cumulative = 0.0
    for j, pka in enumerate(reversed(pkas), start=1):
        cumulative += pka
        log_terms.append(cumulative + j * log_h)
    top = max(log_terms)
    weights = [10.0 ** (t - top) for t in log_terms]
    return sum(j * w for j, w in enumerate(weights)) / sum(weights)


def solution_ph(
    pkas: Sequence[float],
    concentration_mol_per_l: float,
    *,
    initial_protons: int,
    units_per_formula: int = 1,
    strong_base_mol_per_l: float = 0.0,
    strong_acid_mol_per_l: float = 0.0,
    pkw: float = PKW_25C,
) -> float:
    """pH of a weak acid/base system, as dissolved, with strong base or acid added.

    ``pkas``: ascending pKa values of the fully protonated acid (phthalic acid
    2.946, 5.409; carbonic acid 6.35, 10.33; TRIS-H+ 8.07).
    ``concentration_mol_per_l``: formula units of the form dissolved per litre of
    the mixture.
    ``initial_protons``: protons bound per formula unit in the form dissolved,
    counted from the fully deprotonated base: potassium hydrogen phthalate (HP-) 1,
    sodium carbonate (CO3 2-) 0, TRIS base 0, acetic acid 1, sodium acetate 0,
    ammonium chloride 1. Stating it is what tells KHP from phthalic acid.
    ``units_per_formula``: acid/base sites per formula unit (1 for most; 4 for borax,
    which dissolves as 2 B(OH)3 + 2 B(OH)4-: 4 boron sites bearing 2 protons).
    ``strong_base_mol_per_l`` / ``strong_acid_mol_per_l``: NaOH / HCl added, mol per
    litre of the mixture.
    """
    values = check_pkas(pkas)
    c = check_positive(concentration_mol_per_l, "concentration (mol/L)")
    units = check_count(units_per_formula, "units per formula", minimum=1)
    p0 = check_count(initial_protons, "initial protons", minimum=0)
    if p0 > len(values) * units:
        raise InvalidInput(
            f"initial protons {p0} exceed the {len(values) * units} acid/base sites "
            f"({len(values)} pKa values x {units} per formula)"
        )
    base = _check_non_negative(strong_base_mol_per_l, "strong base (mol/L)")
    acid = _check_non_negative(strong_acid_mol_per_l, "strong acid (mol/L)")
    return _solve_ph(values, c * units, c * p0 - base + acid, float(pkw))


def _bisect(f: Callable[[float], float], low: float, high: float, xtol: float) -> float:
    """The root of an increasing ``f`` with ``f(low) < 0 < f(high)``, to within ``xtol``.

    Bisection: halve the bracket, keep the half whose ends differ in sign, stop when it
    is narrower than ``xtol``; the midpoint is then within ``xtol / 2`` of the root. The
    method and its bound are in R. L. Burden and J. D. Faires, *Numerical Analysis*,
    section 2.1 (Theorem 2.1: after n halvings the error is at most (b - a) / 2^n).
    From the bracket -20..4 to 1e-12 that is 45 halvings."""
    while high - low > xtol:
        mid = 0.5 * (low + high)
        if mid in (low, high):  # the bracket is two adjacent floats: as close as it gets
            break
        if f(mid) < 0:
            low = mid
        else:
            high = mid
    return 0.5 * (low + high)


def _solve_ph(pkas: tuple[float, ...], sites_mol_per_l: float,
              proton_excess_mol_per_l: float, pkw: float) -> float:
    """Root of the proton condition; ``proton_excess`` = protons the system starts with
    plus strong acid minus strong base, all in mol/L."""
    return solve_systems_ph(((pkas, sites_mol_per_l),), proton_excess_mol_per_l, pkw)


def solve_systems_ph(systems: Sequence[tuple[tuple[float, ...], float]],
                     proton_excess_mol_per_l: float, pkw: float = PKW_25C) -> float:
    """pH of a solution of several independent acid/base systems, each given as (its
    ascending pKa values, its sites in mol/L): the root of the proton condition

        [H+] - Kw/[H+] + sum(sites_i nbar_i([H+])) - proton_excess = 0

    where ``proton_excess`` is the protons all systems carry as dissolved plus strong acid
    minus strong base (mol/L). A salt of a weak acid and a weak base is two systems."""
    kw = 10.0 ** (-pkw)
    checked = [(check_pkas(p), float(c)) for p, c in systems]

    def residual(log_h: float) -> float:
        h = 10.0**log_h
        bound = sum(c * _nbar(p, log_h) for p, c in checked)
        return h - kw / h + bound - proton_excess_mol_per_l

    low, high = residual(_LOG_H_LOW), residual(_LOG_H_HIGH)
    if not (low < 0 < high):
        raise InvalidInput("no pH between -4 and 20 satisfies the charge balance; "
                           "check the concentrations")
    return -_bisect(residual, _LOG_H_LOW, _LOG_H_HIGH, xtol=1e-12)


def equivalence_ph(
    pkas: Sequence[float],
    protons_transferred: int,
    concentration_mol_per_l: float,
    standard_is_acid: bool = True,
    *,
    initial_protons: int,
    units_per_formula: int = 1,
    pkw: float = PKW_25C,
) -> float:
    """pH at the equivalence point, where the standard has exchanged its protons.

    An acid standard gives ``protons_transferred`` protons per formula unit to a
    strong base titrant; a base standard takes that many from a strong acid.
    ``concentration_mol_per_l`` is the standard's formula units per litre in the
    vessel *at the equivalence point* (the amount weighed over the starting volume
    plus the titrant added). ``initial_protons`` (required, keyword) states the
    form weighed, counted from the fully deprotonated base; see ``solution_ph``.

    Examples (pKa values at 25 C):
    KHP with NaOH: ``equivalence_ph([2.946, 5.409], 1, 0.05, True, initial_protons=1)``;
    sodium carbonate with HCl to CO2: ``equivalence_ph([6.35, 10.33], 2, 0.05, False,
    initial_protons=0)``; to bicarbonate only: the same with 1 proton;
    TRIS with HCl: ``equivalence_ph([8.07], 1, 0.05, False, initial_protons=0)``;
    borax with HCl: ``equivalence_ph([9.24], 2, c, False, initial_protons=2,
    units_per_formula=4)``.

    Why it matters: the indicator must change colour at this pH; a carbonate
    counted as 2 equivalents per mole but titrated to phenolphthalein stops at the
    first equivalence point (bicarbonate) and gives half the equivalents.
    """
    values = check_pkas(pkas)
    k = check_count(protons_transferred, "protons transferred", minimum=1)
    p0 = check_count(initial_protons, "initial protons", minimum=0)
    units = check_count(units_per_formula, "units per formula", minimum=1)
    c = check_positive(concentration_mol_per_l, "concentration at equivalence (mol/L)")
    sites = len(values) * units
    if standard_is_acid and k > p0:
        raise InvalidInput(
            f"an acid standard bearing {p0} protons per formula cannot give up {k}"
        )
    if not standard_is_acid and p0 + k > sites:
        raise InvalidInput(
            f"a base standard with {p0} of {sites} sites protonated cannot take {k} more protons"
        )
    titrant = k * c
    return solution_ph(
        values, c, initial_protons=p0, units_per_formula=units,
        strong_base_mol_per_l=titrant if standard_is_acid else 0.0,
        strong_acid_mol_per_l=0.0 if standard_is_acid else titrant,
        pkw=pkw,
    )


def equivalence_ph_for(material: Any, reaction: Any, concentration_mol_per_l: float) -> float:
    """``equivalence_ph`` for a catalog material and reaction (duck-typed; chem does not
    import the catalog).

    Reads ``material.pka`` and ``material.acid_base`` ("acid" | "base"), and the
    protons of ``reaction.protons`` (else ``reaction.n``). The form weighed comes from
    ``material.initial_protons`` and ``material.acid_units`` (the catalog's names for
    ``initial_protons`` and ``units_per_formula``) when given; otherwise the usual case
    for a primary standard is assumed and said here: one unit per formula, an acid
    standard weighed bearing exactly the protons it gives up (KHP, benzoic acid), a base
    standard fully deprotonated (sodium carbonate, TRIS).
    """
    pkas = tuple(getattr(material, "pka", ()) or ())
    side = getattr(material, "acid_base", None)
    if side not in ("acid", "base"):
        raise InvalidInput(f"{getattr(material, 'name', material)!s} is not marked as an "
                           "acid or a base standard")
    protons = getattr(reaction, "protons", None)
    if protons is None:
        protons = getattr(reaction, "n", None)
    if protons is None or float(protons) != int(float(protons)) or float(protons) < 1:
        raise InvalidInput(f"reaction {getattr(reaction, 'name', reaction)!s} does not state "
                           f"a whole number of protons (got {protons!r})")
    k = int(float(protons))
    is_acid = side == "acid"
    initial = getattr(material, "initial_protons", None)
    if initial is None:
        initial = k if is_acid else 0
    units = getattr(material, "acid_units", None) or 1
    return equivalence_ph(pkas, k, concentration_mol_per_l, is_acid,
                          initial_protons=int(initial), units_per_formula=int(units))


# ----------------------------------------------------------------------------- curves


def simulate_titration(
    titrant_ml: Sequence[float],
    *,
    pkas: Sequence[float],
    sample_concentration_mol_per_l: float,
    sample_ml: float,
    titrant_concentration_mol_per_l: float,
    initial_protons: int,
    titrant_is_base: bool = True,
    units_per_formula: int = 1,
    pkw: float = PKW_25C,
) -> tuple[float, ...]:
    """pH after each volume of strong titrant added to a sample of a weak acid or base.

    Dilution is taken into account (the vessel holds ``sample_ml + titrant``); the
    model is ``solution_ph``'s. Used to build test curves whose equivalence volume is
    known from stoichiometry alone, and demonstration curves.
    """
    values = check_pkas(pkas)
    c_sample = check_positive(sample_concentration_mol_per_l, "sample concentration (mol/L)")
    v0 = check_positive(sample_ml, "sample volume (mL)")
    c_titrant = check_positive(titrant_concentration_mol_per_l,
                                "titrant concentration (mol/L)")
    units = check_count(units_per_formula, "units per formula", minimum=1)
    p0 = check_count(initial_protons, "initial protons", minimum=0)
    if p0 > len(values) * units:
        raise InvalidInput(f"initial protons {p0} exceed the {len(values) * units} sites")
    result = []
    for v in titrant_ml:
        v_ml = _check_non_negative(v, "titrant volume (mL)")
        total_ml = v0 + v_ml
        c = c_sample * v0 / total_ml
        added = c_titrant * v_ml / total_ml
        excess = c * p0 + (-added if titrant_is_base else added)
        result.append(_solve_ph(values, c * units, excess, float(pkw)))
    return tuple(result)


def glass_electrode_mv(
    ph: float,
    *,
    e0_mv: float = 7.0 * NERNST_SLOPE_25C_MV_PER_PH,
    slope_mv_per_ph: float = NERNST_SLOPE_25C_MV_PER_PH,
) -> float:
    """Reading of an ideal glass electrode: E = E0 - slope * pH (Nernst, 25 C).

    The default E0 puts 0 mV at pH 7, the zero point of a typical combination
    electrode (common practice, no source); real electrodes are calibrated.
    """
    return float(e0_mv) - float(slope_mv_per_ph) * float(ph)


# ----------------------------------------------------------------------------- indicators


def _check_indicators(indicators: Sequence[tuple[str, float, float]]
                      ) -> list[tuple[str, float, float]]:
    checked = []
    for entry in indicators:
        name, low, high = entry
        low_f, high_f = float(low), float(high)
        if not (math.isfinite(low_f) and math.isfinite(high_f)) or low_f >= high_f:
            raise InvalidInput(f"indicator {name}: transition range {low}-{high} is not a "
                               "range from low to high pH")
        checked.append((str(name), low_f, high_f))
    return checked


def indicator_fit(
    ph: float, indicators: Sequence[tuple[str, float, float]]
) -> tuple[tuple[str, ...], tuple[str, ...]]:
    """Split indicators (name, low pH, high pH) into those whose transition range covers
    ``ph`` (ends included) and those that do not, each in the order given.

    An indicator whose range misses the equivalence pH changes colour before or after
    the equivalence point, so the endpoint read is not the one the calculation assumes.
    This is the strict rule; ``prepbook.chem.indicators.indicator_advice`` judges each
    indicator by the titration error it would cause instead.
    """
    value = float(ph)
    if not math.isfinite(value):
        raise InvalidInput(f"pH must be a finite number, got {ph!r}")
    suitable: list[str] = []
    unsuitable: list[str] = []
    for name, low, high in _check_indicators(indicators):
        (suitable if low <= value <= high else unsuitable).append(name)
    return tuple(suitable), tuple(unsuitable)


def nearest_indicators(
    ph: float, indicators: Sequence[tuple[str, float, float]], count: int = 3
) -> tuple[tuple[str, float], ...]:
    """The ``count`` indicators nearest ``ph``, as (name, distance in pH units), nearest
    first; the distance is 0 inside the transition range, else to its nearer end.
    Ties go to the indicator whose range is centred nearer ``ph``.

    Lets a warning say what to use instead of the indicator that does not fit.
    """
    value = float(ph)
    if not math.isfinite(value):
        raise InvalidInput(f"pH must be a finite number, got {ph!r}")
    how_many = check_count(count, "count", minimum=1)
    ranked = []
    for name, low, high in _check_indicators(indicators):
        distance = max(low - value, 0.0, value - high)
        ranked.append((distance, abs((low + high) / 2 - value), name))
    ranked.sort()
    return tuple((name, distance) for distance, _, name in ranked[:how_many])
