"""Water density (CIPM, Tanaka 2001), air buoyancy (NIST IR 6969 SOP 2), temperature."""

from __future__ import annotations

import pytest

from prepbook.chem import corrections as c
from prepbook.errors import InvalidInput

# Tanaka et al., Metrologia 38 (2001) 301, values quoted in REFERENCES.md (kg/m3)
TANAKA = {15.0: 999.1026, 20.0: 998.2067, 25.0: 997.0470, 30.0: 995.6488}


@pytest.mark.parametrize(("t_c", "published"), sorted(TANAKA.items()))
def test_cipm_water_density(t_c: float, published: float) -> None:
    """Tanaka 2001 (CIPM formula), to the 4 decimals published."""
    assert abs(c.water_density_kg_per_m3(t_c) - published) <= 0.6e-4


def test_water_is_densest_near_4_c() -> None:
    """Tanaka 2001: the formula's maximum is at -a1 = 3.983035 C, where rho = a5."""
    at_max = c.water_density_kg_per_m3(3.983035)
    assert at_max == pytest.approx(999.974950, abs=1e-6)
    assert c.water_density_kg_per_m3(2.0) < at_max > c.water_density_kg_per_m3(6.0)


@pytest.mark.parametrize("t_c", [-1.0, 40.5, float("nan")])
def test_water_density_outside_formula_range_is_refused(t_c: float) -> None:
    """Tanaka 2001: the formula is stated for 0-40 C."""
    with pytest.raises(InvalidInput):
        c.water_density_kg_per_m3(t_c)


def test_buoyancy_of_water_is_about_1_05_mg_per_g() -> None:
    """NIST IR 6969 SOP 2 formula with 0.0012 and 8.0 g/cm3; for water (1.0 g/cm3) the
    correction is +1.05 mg per g (a textbook figure, from memory)."""
    true = c.buoyancy_true_mass(1.0, 1.0)
    assert round((true - 1.0) * 1000, 2) == 1.05


def test_buoyancy_vanishes_at_the_density_of_the_weights() -> None:
    """SOP 2: a sample as dense as the weights needs no correction (hand check)."""
    assert c.buoyancy_true_mass(0.5, 8.0) == pytest.approx(0.5, rel=1e-15)


def test_buoyancy_of_khp_is_positive_and_about_0_06_percent() -> None:
    """KHP about 1.636 g/cm3 (REFERENCES, from memory): SOP 2 gives
    (1 - 0.0012/8)/(1 - 0.0012/1.636) = 1.000584 (hand-computed)."""
    assert c.buoyancy_true_mass(0.3888, 1.636) / 0.3888 == pytest.approx(1.000584, abs=1e-6)


@pytest.mark.parametrize(
    "args", [(0.0, 1.6), (-1.0, 1.6), (1.0, 0.001), (1.0, 1.6, 0.0012, 0.001), (1.0, 1.6, -1)]
)
def test_buoyancy_refuses_bad_input(args: tuple) -> None:
    """Owner's rule: non-positive masses and impossible densities -> InvalidInput."""
    with pytest.raises(InvalidInput):
        c.buoyancy_true_mass(*args)


def test_normality_at_temperature_is_the_water_density_ratio() -> None:
    """Tanaka 2001 published densities: N(20) = N(25) x 998.2067 / 997.0470."""
    assert c.normality_at_temperature(0.1, 25.0, 20.0) == pytest.approx(
        0.1 * TANAKA[20.0] / TANAKA[25.0], rel=1e-7
    )
    assert c.normality_at_temperature(0.1, 20.0, 20.0) == 0.1


def test_water_expansion_matches_cg4_coefficient() -> None:
    """EURACHEM CG4's 2.1e-4 /C for dilute aqueous solutions: the CIPM densities between
    15 and 25 C give the same coefficient to within 3 %."""
    ratio = c.normality_at_temperature(1.0, 15.0, 25.0)
    coefficient = (1.0 - ratio) / 10.0
    assert coefficient == pytest.approx(c.EXPANSION_PER_C, rel=0.03)
