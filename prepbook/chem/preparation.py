"""How much to weigh, measure, dilute or add to make a titrant of a given strength.

Why: the bench needs the amounts before the solution exists, and again when a
standardized batch must be brought to its nominal strength (USP Volumetric
Solutions: "an empirically prepared solution may be adjusted downward to a given
normality provided it is strong enough to permit dilution").

Conventions: normality N in eq/L, n in equivalents per mole, volumes in mL, mass
fraction and purity as fractions (not percent). Dilution and adjustment assume the
volumes add (common practice, no source; exact for dilute aqueous solutions to well
within a burette's tolerance).
"""

from __future__ import annotations

import math
from typing import Literal

import msgspec

from prepbook.errors import InvalidInput


class Dilution(msgspec.Struct, frozen=True):
    """Stock to measure and water to make up the final volume."""

    stock_ml: float
    water_ml: float


class Adjustment(msgspec.Struct, frozen=True):
    """What to add to a batch to bring it to the target normality."""

    add: Literal["water", "stock"]
    volume_ml: float
    final_volume_ml: float  # batch volume after the addition


def _positive(value: object, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise InvalidInput(f"{what} {value!r} is not a finite number")
    if value <= 0:
        raise InvalidInput(f"{what} {value:g} must be positive")
    return float(value)


def _fraction(value: object, what: str) -> float:
    v = _positive(value, what)
    if v > 1:
        raise InvalidInput(f"{what} {v:g} must be a fraction in (0, 1]")
    return v


def solid_mass_g(
    normality: float,
    volume_ml: float,
    molar_mass: float,
    n: float,
    purity_fraction: float = 1.0,
) -> float:
    """Mass of solid to dissolve and make up to ``volume_ml``: N V M / (1000 n P)."""
    nn = _positive(normality, "normality")
    v = _positive(volume_ml, "volume (mL)")
    m = _positive(molar_mass, "molar mass (g/mol)")
    eq = _positive(n, "n (eq/mol)")
    p = _fraction(purity_fraction, "purity")
    return nn * v / 1000.0 * m / eq / p


def reagent_molarity_mol_per_l(
    mass_fraction: float, density_g_per_ml: float, molar_mass: float
) -> float:
    """Molarity of a concentrated reagent: 1000 w rho / M."""
    w = _fraction(mass_fraction, "mass fraction")
    rho = _positive(density_g_per_ml, "density (g/mL)")
    m = _positive(molar_mass, "molar mass (g/mol)")
    return 1000.0 * w * rho / m


def liquid_volume_ml(
    normality: float,
    volume_ml: float,
    molar_mass: float,
    n: float,
    mass_fraction: float,
    density_g_per_ml: float,
) -> float:
    """Volume of a concentrated liquid reagent to make ``volume_ml`` of ``normality``."""
    solute_g = solid_mass_g(normality, volume_ml, molar_mass, n)
    w = _fraction(mass_fraction, "mass fraction")
    rho = _positive(density_g_per_ml, "density (g/mL)")
    return solute_g / w / rho


def concentrate_normality(concentrate_ml: float, volume_ml: float, *,
                          molarity_mol_per_l: float, n: float) -> float:
    """Normality of ``concentrate_ml`` of a concentrate of ``molarity_mol_per_l`` (see
    :func:`reagent_molarity_mol_per_l`) made up to ``volume_ml``: N = c n V_c / V."""
    vc = _positive(concentrate_ml, "concentrate volume (mL)")
    v = _positive(volume_ml, "volume (mL)")
    c = _positive(molarity_mol_per_l, "molarity of the concentrate (mol/L)")
    return c * _positive(n, "n (eq/mol)") * vc / v


def dilution(stock_n: float, target_n: float, volume_ml: float) -> Dilution:
    """Stock volume and water for ``volume_ml`` of ``target_n`` (N1 V1 = N2 V2)."""
    s = _positive(stock_n, "stock normality")
    t = _positive(target_n, "target normality")
    v = _positive(volume_ml, "volume (mL)")
    if t > s:
        raise InvalidInput(
            f"target normality {t:g} is stronger than the stock {s:g}; dilution cannot reach it"
        )
    stock_ml = v * t / s
    return Dilution(stock_ml=stock_ml, water_ml=v - stock_ml)


def adjust(
    normality: float, target: float, volume_ml: float, stock_n: float | None = None
) -> Adjustment:
    """Water to add when too strong; stock to add when too weak (needs a stronger stock)."""
    found = _positive(normality, "normality found")
    t = _positive(target, "target normality")
    v = _positive(volume_ml, "volume (mL)")
    if found >= t:
        water = v * (found / t - 1.0)
        return Adjustment(add="water", volume_ml=water, final_volume_ml=v + water)
    if stock_n is None:
        raise InvalidInput(
            f"normality {found:g} is below the target {t:g}; give a stronger stock to add"
        )
    s = _positive(stock_n, "stock normality")
    if s <= t:
        raise InvalidInput(
            f"stock normality {s:g} is not stronger than the target {t:g}; it cannot raise "
            "the batch to the target"
        )
    stock_ml = v * (t - found) / (s - t)
    return Adjustment(add="stock", volume_ml=stock_ml, final_volume_ml=v + stock_ml)


def titer_mg_per_ml(titrant_normality: float, analyte_molar_mass: float, analyte_n: float) -> float:
    """Milligrams of analyte equivalent to 1 mL of titrant: N M / n (mg/mL = meq/mL x mg/meq)."""
    nn = _positive(titrant_normality, "titrant normality")
    m = _positive(analyte_molar_mass, "analyte molar mass (g/mol)")
    eq = _positive(analyte_n, "analyte n (eq/mol)")
    return nn * m / eq
