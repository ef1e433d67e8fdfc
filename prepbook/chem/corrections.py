"""Physical corrections: water density, air buoyancy, normality at another temperature.

Why: a balance reading is not a mass until the air's buoyancy is allowed for, and a
titrant standardized at one temperature has another strength at another (volumetric
solutions are standardized and used at 20 C or corrected, British Pharmacopoeia
Appendix I B).

- Water density: the CIPM formula of Tanaka et al., Metrologia 38 (2001) 301, for
  air-free pure water at 101.325 kPa, valid 0-40 C.
- Buoyancy: NIST IR 6969 (2019), SOP 2, m = W (1 - rho_air/rho_weights) /
  (1 - rho_air/rho_sample), with rho_air = 0.0012 g/cm3 and conventional weights of
  8.0 g/cm3 unless given.
- Temperature: a dilute aqueous titrant is taken to expand like water, so its
  normality scales with the water density, N(t2) = N(t1) rho(t2)/rho(t1). (EURACHEM CG4
  uses the linear coefficient 2.1e-4 /C, :data:`EXPANSION_PER_C`, for the same effect.)
  A titrant in another solvent expands like that solvent, with the cubic coefficient
  its spec states (:class:`Expansion`): the pharmacopoeias correct the volume of
  perchloric acid in glacial acetic acid as Vc = V [1 + 0.0011 (t1 - t2)] (British
  Pharmacopoeia, Appendix I B, Perchloric Acid VS), so N(t2) = N(t1) [1 + gamma (t1 - t2)]:
  the same amount of acid in the volume the solvent takes at t2.
"""

from __future__ import annotations

import math

import msgspec

from prepbook.errors import InvalidInput

# Tanaka et al. 2001, Table 1 (CIPM 2001 formula)
TANAKA_A1_C = -3.983035
TANAKA_A2_C = 301.797
TANAKA_A3_C2 = 522528.9
TANAKA_A4_C = 69.34881
TANAKA_A5_KG_PER_M3 = 999.974950
WATER_FORMULA_RANGE_C = (0.0, 40.0)

AIR_G_PER_CM3 = 0.0012  # NIST IR 6969 SOP 2, nominal air density
WEIGHTS_G_PER_CM3 = 8.0  # conventional density of stainless-steel weights
EXPANSION_PER_C = 2.1e-4  # EURACHEM/CITAC CG4 Example A2, dilute aqueous solutions

#: A liquid's cubic expansion coefficient, per C, lies in this open range: water's is
#: about 2.1e-4, organic solvents' about 1e-3 (common practice, no source).
EXPANSION_RANGE_PER_C = (0.0, 0.01)


def plausible_expansion(gamma: float) -> bool:
    """Whether ``gamma`` (per C) can be a liquid's cubic expansion coefficient."""
    low, high = EXPANSION_RANGE_PER_C
    return math.isfinite(gamma) and low < gamma < high
CORRECTION_RANGE_C = (0.0, 40.0)  # where a titrant's temperature correction is applied


class Expansion(msgspec.Struct, frozen=True):
    """A non-aqueous titrant's cubic expansion: the coefficient (per C) of its solvent,
    as its spec states it, and where the value comes from."""

    per_c: float
    solvent: str
    source: str

    def describe(self) -> str:
        """One line for output: which coefficient was used, and its source."""
        return (f"{self.solvent}'s cubic expansion {self.per_c:g} per C "
                f"({self.source})")


#: Where an aqueous titrant's correction (water's density) comes from, for output.
WATER_DENSITY_SOURCE = "CIPM formula, Tanaka et al., Metrologia 38 (2001) 301"


def _number(name: str, value: float) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise InvalidInput(f"{name} {value!r} is not a finite number")
    return float(value)


def water_density_kg_per_m3(t_c: float) -> float:
    """Density of air-free water at 101.325 kPa (CIPM, Tanaka et al. 2001), 0-40 C."""
    t = _number("temperature (C)", t_c)
    low, high = WATER_FORMULA_RANGE_C
    if not low <= t <= high:
        raise InvalidInput(
            f"temperature {t:g} C is outside {low:g}-{high:g} C, where the CIPM water "
            "density formula applies"
        )
    return TANAKA_A5_KG_PER_M3 * (
        1.0
        - (t + TANAKA_A1_C) ** 2 * (t + TANAKA_A2_C) / (TANAKA_A3_C2 * (t + TANAKA_A4_C))
    )


def buoyancy_true_mass(
    mass_g: float,
    sample_density: float,
    air: float = AIR_G_PER_CM3,
    weights: float = WEIGHTS_G_PER_CM3,
) -> float:
    """True mass from a balance reading (NIST IR 6969 SOP 2); densities in g/cm3."""
    w = _number("mass (g)", mass_g)
    rho_s = _number("sample density (g/cm3)", sample_density)
    rho_a = _number("air density (g/cm3)", air)
    rho_w = _number("weights density (g/cm3)", weights)
    if w <= 0:
        raise InvalidInput(f"mass {w:g} g must be positive")
    if rho_a < 0:
        raise InvalidInput(f"air density {rho_a:g} g/cm3 must not be negative")
    if rho_s <= rho_a or rho_w <= rho_a:
        raise InvalidInput(
            "the densities of the sample and of the weights must exceed the air density "
            f"({rho_a:g} g/cm3)"
        )
    return w * (1.0 - rho_a / rho_w) / (1.0 - rho_a / rho_s)


def normality_at_temperature(n: float, from_c: float, to_c: float,
                             expansion: Expansion | None = None) -> float:
    """Normality at ``to_c`` of a titrant known at ``from_c``: a dilute aqueous one
    (``expansion`` None) scales with water's density; one in another solvent with
    N(t2) = N(t1) [1 + gamma (t1 - t2)], gamma its solvent's cubic coefficient."""
    normality = _number("normality", n)
    if normality <= 0:
        raise InvalidInput(f"normality {normality:g} must be positive")
    if expansion is None:
        return normality * water_density_kg_per_m3(to_c) / water_density_kg_per_m3(from_c)
    gamma = _number("expansion coefficient (per C)", expansion.per_c)
    if not plausible_expansion(gamma):
        low, high = EXPANSION_RANGE_PER_C
        raise InvalidInput(f"expansion coefficient {gamma:g} per C is not a liquid's "
                           f"(expected between {low:g} and {high:g})")
    t1, t2 = _number("temperature (C)", from_c), _number("temperature (C)", to_c)
    low, high = CORRECTION_RANGE_C
    for t in (t1, t2):
        if not low <= t <= high:
            raise InvalidInput(f"temperature {t:g} C is outside {low:g}-{high:g} C, where "
                               "a titrant's temperature correction is applied")
    return normality * (1.0 + gamma * (t1 - t2))
