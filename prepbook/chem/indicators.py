"""Indicator advice from the titration error each indicator would cause.

Why: "the transition range covers the equivalence pH" is stricter than chemistry needs.
Where the curve is steep, stopping a little off the equivalence pH costs almost no
titrant: phenolphthalein (8.2-10.0) serves a strong acid titrated with sodium hydroxide
although the equivalence pH is 7. What matters is the volume error.

The titration error of stopping at pH ``p`` is 100 (V(p) - Ve) / Ve, in % of the
equivalence volume, from the model of ``prepbook.chem.equilibria`` (a charge balance
over one acid/base system, concentrations for activities, 25 C). Multiplying that
balance by the volume in the vessel, V0 + V, makes it linear in the titrant volume V,
so V(p) is exact, without a search::

    V(p) = -V0 (D + c_s w(p)) / (D + s c_t),   D = [H+] - Kw/[H+]

with c_s the sample's formula units per litre as taken (volume V0), c_t the titrant,
s = +1 for a base titrant and -1 for an acid one, and w(p) = units nbar(p) - p0 the
protons the sample's system holds at p beyond those it started with. Ve = k c_s V0 / c_t
for k protons exchanged per formula unit.

**Carbon dioxide boiled off.** When a carbonate is titrated with a strong acid to its
second endpoint and the solution is boiled near the end (the pharmacopoeial practice),
the carbonic acid formed leaves as CO2. That case is modelled with the sample's fully
protonated form removed: the sample then acts as its k equivalents of strong base,
w(p) = k whatever the pH, and the equivalence pH is 7.00. The little carbonate not yet
neutralized near the endpoint is neglected (it is of the order of the error computed).

An indicator is taken to change colour at the middle of its transition range (its
pK(HIn), as in the textbook treatment of indicator error); the errors at the two ends
of the range are given too. It is advised (suitable) when the error at the middle is
within ``tolerance_percent``, by default 0.1 % of the equivalence volume (common
practice, no source: a tenth of the 0.2 % repeatability the pharmacopoeias ask of a
standardization).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import msgspec

from prepbook.chem.equilibria import (
    PKW_25C,
    check_count,
    check_pkas,
    check_positive,
    mean_bound_protons,
)
from prepbook.errors import InvalidInput

DEFAULT_TOLERANCE_PERCENT = 0.1
"""Titration error (% of the equivalence volume) within which an indicator is advised
(common practice, no source)."""


class Titration(msgspec.Struct, frozen=True):
    """A titration at stated concentrations.

    ``pkas``: ascending pKa values of the sample's acid/base system (fully protonated
    acid first). ``sample_mol_per_l``: formula units per litre of the sample as taken,
    in ``sample_ml`` before any titrant. ``initial_protons``: protons per formula unit
    in the form taken, counted from the fully deprotonated base (KHP 1, sodium
    carbonate 0). ``protons_transferred``: k, protons exchanged per formula unit up to
    the endpoint wanted (carbonate: 1 to bicarbonate, 2 to carbonic acid).
    ``titrant_is_base``: sodium hydroxide (True) or a strong acid (False).
    ``co2_removed``: the fully protonated form is boiled off near the endpoint (see the
    module docstring); only for a base sample titrated to its last endpoint.
    """

    pkas: tuple[float, ...]
    sample_mol_per_l: float
    sample_ml: float
    titrant_mol_per_l: float
    initial_protons: int
    protons_transferred: int
    titrant_is_base: bool
    units_per_formula: int = 1
    co2_removed: bool = False
    pkw: float = PKW_25C

    def __post_init__(self) -> None:
        pkas = check_pkas(self.pkas)
        check_positive(self.sample_mol_per_l, "sample concentration (mol/L)")
        check_positive(self.sample_ml, "sample volume (mL)")
        check_positive(self.titrant_mol_per_l, "titrant concentration (mol/L)")
        units = check_count(self.units_per_formula, "units per formula", minimum=1)
        p0 = check_count(self.initial_protons, "initial protons", minimum=0)
        k = check_count(self.protons_transferred, "protons transferred", minimum=1)
        sites = len(pkas) * units
        after = p0 - k if self.titrant_is_base else p0 + k
        if not 0 <= after <= sites:
            raise InvalidInput(f"a sample with {p0} of {sites} sites protonated cannot "
                               f"{'give up' if self.titrant_is_base else 'take'} {k} "
                               "protons")
        if self.co2_removed and (self.titrant_is_base or after != sites):
            raise InvalidInput("CO2 can be boiled off only when a base is titrated with "
                               "an acid to its last endpoint")

    @property
    def equivalence_ml(self) -> float:
        """Ve = k c_s V0 / c_t, mL."""
        return (self.protons_transferred * self.sample_mol_per_l * self.sample_ml
                / self.titrant_mol_per_l)


def titrant_ml_at_ph(titration: Titration, ph: float) -> float | None:
    """Titrant volume (mL) at which the model reaches ``ph``: 0.0 when the sample is
    already past it, None when no volume of this titrant reaches it."""
    value = float(ph)
    if not math.isfinite(value):
        raise InvalidInput(f"pH must be a finite number, got {ph!r}")
    t = titration
    h = 10.0 ** (-value)
    d = h - 10.0 ** (-float(t.pkw)) / h
    if t.co2_removed:
        w = float(t.protons_transferred)
    else:
        w = t.units_per_formula * mean_bound_protons(t.pkas, value) - t.initial_protons
    sign = 1.0 if t.titrant_is_base else -1.0
    denominator = d + sign * t.titrant_mol_per_l
    numerator = -t.sample_ml * (d + t.sample_mol_per_l * w)
    if denominator * sign <= 0:
        return None  # beyond what the titrant itself reaches
    volume = numerator / denominator
    return max(volume, 0.0)


def titration_error_percent(titration: Titration, ph: float) -> float | None:
    """100 (V(ph) - Ve) / Ve: negative when stopping at ``ph`` comes early, positive
    when late; None when the titrant never reaches ``ph``."""
    volume = titrant_ml_at_ph(titration, ph)
    if volume is None:
        return None
    ve = titration.equivalence_ml
    return 100.0 * (volume - ve) / ve


class IndicatorAdvice(msgspec.Struct, frozen=True):
    """One indicator judged for a titration.

    ``stop_ph``: the middle of its transition range; ``error_percent``: the titration
    error stopping there (None: never reached); ``error_range_percent``: the errors at
    the low and high ends of the range; ``suitable``: |error| within the tolerance."""

    name: str
    low_ph: float
    high_ph: float
    stop_ph: float
    error_percent: float | None
    error_range_percent: tuple[float | None, float | None]
    suitable: bool
    reason: str


def indicator_advice(
    titration: Titration,
    indicators: Sequence[tuple[str, float, float]],
    *,
    tolerance_percent: float = DEFAULT_TOLERANCE_PERCENT,
) -> tuple[IndicatorAdvice, ...]:
    """Each indicator (name, low pH, high pH) judged by the titration error it would
    cause, in the order given."""
    tolerance = float(tolerance_percent)
    if not math.isfinite(tolerance) or tolerance <= 0:
        raise InvalidInput(f"tolerance {tolerance_percent!r} % must be a positive number")
    advice = []
    for name, low, high in indicators:
        low_f, high_f = float(low), float(high)
        if not (math.isfinite(low_f) and math.isfinite(high_f)) or low_f >= high_f:
            raise InvalidInput(f"indicator {name}: transition range {low}-{high} is not a "
                               "range from low to high pH")
        stop = (low_f + high_f) / 2.0
        error = titration_error_percent(titration, stop)
        ends = (titration_error_percent(titration, low_f),
                titration_error_percent(titration, high_f))
        if error is None:
            suitable = False
            reason = f"the titrant never brings the solution to pH {stop:.2f}"
        else:
            suitable = abs(error) <= tolerance
            word = "within" if suitable else "beyond"
            reason = (f"stopping at pH {stop:.2f} gives {error:+.3f} % of the equivalence "
                      f"volume, {word} {tolerance:g} %")
        advice.append(IndicatorAdvice(str(name), low_f, high_f, stop, error, ends, suitable,
                                      reason))
    return tuple(advice)
