"""Plausibility at entry: readings and results that cannot be right (pure lab policy).

The acceptance checks (``rules.acceptance``) judge a run that makes sense; these
bounds stop what cannot make sense before it is recorded or computed: a mass and a
volume swapped, a mass typed in mg, a titrant volume of 0.0001 mL or 1,000,000 mL,
a purity of 0.0000001 %, a balance linearity of 1e9 mg, a factor of 2371. Each
function refuses (``InvalidInput``, one line naming what was probably meant) what
cannot be right and returns plain warning lines for what is merely unusual.

Sources of the bounds (each also named beside its constant):
- a titrant volume at or below 0.1 mL is no titration: the lab's rule, common practice,
  no source (a burette reads to about 0.02 mL, so 0.1 mL carries 20 % error at best);
- burettes and pipettes in common use hold at most 100 mL (common practice, no source;
  ISO 385 and ISO 648 sizes end there);
- one weighing of a primary standard for one titration is of the order of 0.1-1 g
  (it must consume 30-100 % of a burette of about 0.1 N titrant, USP <31>): above
  20 g it is not a titration's weighing (common practice, no source);
- a factor outside 0.5-2 of nominal is another solution, a wrong lot or wrong units,
  not a titrant that drifted (common practice, no source); the acceptance window
  (European Pharmacopoeia 4.2.2, 0.90-1.10 by default) stays the narrower check;
- a primary standard is certified at about 99.9 % or more: below 50 % it is no
  primary standard (common practice, no source), below 99 % it is unusual;
- an analytical balance's linearity is a few tenths of a mg (EURACHEM/CITAC CG4
  Example A2: 0.15 mg); 1 g or more cannot weigh a standard of about 0.5 g at all
  (common practice, no source), more than 1 mg is unusual;
- a burette's tolerance is a few hundredths of a mL (ISO 385 Class A 50 mL: 0.05 mL;
  Class B twice that); 1 mL or more is no volumetric burette (common practice, no
  source), more than 0.1 mL is unusual.
"""

from __future__ import annotations

from collections.abc import Sequence

import msgspec

from prepbook.errors import InvalidInput

MIN_TITRANT_ML = 0.1  # at or below: no titration (common practice, no source)
MAX_VOLUMETRIC_ML = 100.0  # largest burette or pipette in common use (common practice)
MAX_STANDARD_MASS_G = 20.0  # one weighing for one titration (common practice, no source)
USUAL_STANDARD_MASS_G = (0.02, 5.0)  # outside: unusual, a warning (common practice)
USUAL_MIN_TITRANT_ML = 5.0  # below: unusual, a warning (common practice, no source)
PLAUSIBLE_FACTOR = (0.5, 2.0)  # outside: not this solution (common practice, no source)
MIN_PRIMARY_PURITY_PERCENT = 50.0  # below: no primary standard (common practice)
USUAL_PRIMARY_PURITY_PERCENT = 99.0  # below: unusual, a warning (common practice)
MAX_LINEARITY_MG = 1000.0  # at or above: cannot weigh a standard (common practice)
USUAL_LINEARITY_MG = 1.0  # above: unusual for an analytical balance (CG4 A2: 0.15 mg)
MAX_BURETTE_TOLERANCE_ML = 1.0  # at or above: no volumetric burette (common practice)
USUAL_BURETTE_TOLERANCE_ML = 0.1  # above: unusual (ISO 385 Class A 50 mL: 0.05 mL)


def _g(x: float) -> str:
    return f"{x:.6g}"


class Replicate(msgspec.Struct, frozen=True):
    """One replicate as entered: the amount (g of standard, or mL of aliquot) and the
    titrant volume (mL), with the text typed for messages (1-based ``position``)."""

    position: int
    amount: float
    volume_ml: float
    amount_text: str
    volume_text: str


def _volume_limit(burette_capacity_ml: float | None) -> tuple[float, str]:
    if burette_capacity_ml is not None:
        return burette_capacity_ml, f"the burette's capacity ({_g(burette_capacity_ml)} mL)"
    return MAX_VOLUMETRIC_ML, (f"{_g(MAX_VOLUMETRIC_ML)} mL, the largest burette in common "
                               "use (common practice, no source)")


def titrant_volume(r: Replicate, burette_capacity_ml: float | None = None) -> tuple[str, ...]:
    """Refuse a titrant volume at or below 0.1 mL or beyond the burette; warn when small."""
    what = f"replicate {r.position} titrant volume {r.volume_text} mL"
    if r.volume_ml <= MIN_TITRANT_ML:
        raise InvalidInput(f"{what} is at or below {_g(MIN_TITRANT_ML)} mL: no titration "
                           "reads so little (was it in L, or a digit lost?)")
    limit, named = _volume_limit(burette_capacity_ml)
    if r.volume_ml > limit:
        hint = (f" (was it in µL? {r.volume_text} µL is {_g(r.volume_ml / 1000)} mL)"
                if MIN_TITRANT_ML < r.volume_ml / 1000 <= limit else "")
        raise InvalidInput(f"{what} exceeds {named}{hint}")
    if r.volume_ml < USUAL_MIN_TITRANT_ML:
        return (f"{what} is small: below {_g(USUAL_MIN_TITRANT_ML)} mL a burette's reading "
                "error weighs heavily (common practice, no source)",)
    return ()


def weighed_replicate(r: Replicate, burette_capacity_ml: float | None = None
                      ) -> tuple[str, ...]:
    """A weighed primary standard and its titrant volume: refuse a mass and volume
    swapped, a mass in mg, or a volume that cannot be read; warn when unusual."""
    limit, _ = _volume_limit(burette_capacity_ml)
    if r.amount > MAX_STANDARD_MASS_G:
        head = f"replicate {r.position} mass {r.amount_text} g"
        if r.volume_ml <= MAX_STANDARD_MASS_G and MIN_TITRANT_ML < r.amount <= limit:
            raise InvalidInput(f"{head} and titrant volume {r.volume_text} mL look swapped: "
                               f"did you mean --rep {r.volume_text}:{r.amount_text} "
                               "(grams of standard first, then mL of titrant)?")
        if r.amount / 1000 <= MAX_STANDARD_MASS_G:
            raise InvalidInput(f"{head} is more than one titration weighs "
                               f"({_g(MAX_STANDARD_MASS_G)} g): was it in mg? "
                               f"{r.amount_text} mg is {_g(r.amount / 1000)} g; type grams")
        raise InvalidInput(f"{head} is more than one titration weighs "
                           f"({_g(MAX_STANDARD_MASS_G)} g, common practice, no source)")
    warnings = list(titrant_volume(r, burette_capacity_ml))
    low, high = USUAL_STANDARD_MASS_G
    if not low <= r.amount <= high:
        warnings.append(f"replicate {r.position} mass {r.amount_text} g is unusual for one "
                        f"titration ({_g(low)}-{_g(high)} g is usual; common practice, "
                        "no source)")
    return tuple(warnings)


def pipetted_replicate(r: Replicate, burette_capacity_ml: float | None = None
                       ) -> tuple[str, ...]:
    """An aliquot of a standardized solution and its titrant volume."""
    what = f"replicate {r.position} aliquot {r.amount_text} mL"
    if r.amount <= MIN_TITRANT_ML:
        raise InvalidInput(f"{what} is at or below {_g(MIN_TITRANT_ML)} mL: no pipette "
                           "delivers so little (was it in L?)")
    if r.amount > MAX_VOLUMETRIC_ML:
        raise InvalidInput(f"{what} exceeds {_g(MAX_VOLUMETRIC_ML)} mL, the largest pipette "
                           "in common use (common practice, no source)")
    return titrant_volume(r, burette_capacity_ml)


def replicates(readings: Sequence[Replicate], *, weighed: bool,
               burette_capacity_ml: float | None = None) -> tuple[str, ...]:
    """Every replicate of a standardization; the warnings of all of them."""
    check = weighed_replicate if weighed else pipetted_replicate
    return tuple(w for r in readings for w in check(r, burette_capacity_ml))


def factor(value: float, *, nominal: float, unit: str,
           bounds: tuple[float, float] = PLAUSIBLE_FACTOR) -> None:
    """Refuse a result whose factor to nominal is outside the plausible range."""
    low, high = bounds
    if low <= value <= high:
        return
    ratio = value if value >= 1 else 1 / value
    if 500 <= ratio <= 2000:
        hint = ("a mass in mg typed as g, or a volume in L typed as mL?" if value > 1 else
                "a mass in g typed as mg, or a volume in mL typed as L?")
    else:
        hint = "check the units (g, mL), the order MASS:VOL, the lot and the batch's spec"
    raise InvalidInput(f"the result is {_g(value)} times the nominal {_g(nominal)} {unit}, "
                       f"outside the plausible {_g(low)}-{_g(high)} (common practice, no "
                       f"source): it cannot be this solution; {hint}")


def primary_purity(percent: float, text: str) -> tuple[str, ...]:
    """A primary standard's certified purity, % (already known to be in (0, 100])."""
    if percent < MIN_PRIMARY_PURITY_PERCENT:
        hint = (f" (a mass fraction? {text} as a fraction is {_g(percent * 100)} %)"
                if percent <= 1 else "")
        raise InvalidInput(f"purity {text} % cannot be a primary standard's (below "
                           f"{_g(MIN_PRIMARY_PURITY_PERCENT)} %, common practice, no "
                           f"source){hint}")
    if percent < USUAL_PRIMARY_PURITY_PERCENT:
        return (f"purity {text} % is unusual for a primary standard (about 99.9 % or more "
                "is usual; common practice, no source)",)
    return ()


def balance_linearity(mg: float, text: str) -> tuple[str, ...]:
    """A balance's linearity, +/- mg."""
    if mg >= MAX_LINEARITY_MG:
        raise InvalidInput(f"balance linearity {text} mg cannot serve the weighing of a "
                           f"standard (at or above {_g(MAX_LINEARITY_MG)} mg, common "
                           "practice, no source): was it in µg or g?")
    if mg > USUAL_LINEARITY_MG:
        return (f"balance linearity {text} mg is unusual for an analytical balance "
                "(0.15 mg in EURACHEM/CITAC CG4 Example A2)",)
    return ()


def burette_tolerance(ml: float, text: str, capacity_ml: float | None = None
                      ) -> tuple[str, ...]:
    """A burette's tolerance, +/- mL."""
    if ml >= MAX_BURETTE_TOLERANCE_ML or (capacity_ml is not None and ml >= capacity_ml / 10):
        raise InvalidInput(f"burette tolerance {text} mL is no volumetric burette's (ISO 385 "
                           "Class A 50 mL: 0.05 mL; at or above 1 mL or a tenth of the "
                           "capacity, common practice, no source)")
    if ml > USUAL_BURETTE_TOLERANCE_ML:
        return (f"burette tolerance {text} mL is unusual (ISO 385 Class A 50 mL: 0.05 mL)",)
    return ()
