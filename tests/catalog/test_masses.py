"""Formula masses of the catalog's formulas, concentrated reagents, preparation hints.

Tolerances reflect the atomic-weight uncertainty (REFERENCES.md: masses differ in the
fourth decimal between editions and libraries): the sum over atoms of count x the
abridged uncertainty periodictable carries, plus half a unit in the last quoted digit.
"""

from __future__ import annotations

import molmass
import periodictable
import pytest

from prepbook.catalog import find_material, find_reagent, find_spec, materials, reagents, specs


def _mass_and_tolerance(formula: str) -> tuple[float, float]:
    f = periodictable.formula(formula)
    return f.mass, sum(k * el._mass_unc for el, k in f.atoms.items())


def _half_last_digit(text: str) -> float:
    decimals = len(text.split(".")[1]) if "." in text else 0
    return 0.5 * 10.0**-decimals


# Published or recalled molar masses, g/mol, as quoted (strings keep the digits).
MOLAR_MASS = {
    # EURACHEM/CITAC CG4 (2012), Example A2: M(KHP) = 204.2212 g/mol.
    "KHP": "204.2212",
    # The rest from memory (values as printed on reagent labels and in handbooks).
    "Na2CO3": "105.99",
    "TRIS": "121.14",
    "benzoic-acid": "122.12",
    "sulfamic-acid": "97.09",
    "borax": "381.37",
    "Na2C2O4": "134.00",
    "K2Cr2O7": "294.18",
    "KIO3": "214.00",
    "As2O3": "197.84",
    "NaCl": "58.44",
    "CaCO3": "100.09",
    "Zn": "65.38",
    "NaOH": "40.00",
    "KOH": "56.11",
    "HCl": "36.46",
    "H2SO4": "98.08",
    "HClO4": "100.46",
    "KMnO4": "158.03",
    "Na2S2O3": "248.18",
    "I2": "253.81",
    "Ce(SO4)2": "404.30",
    "AgNO3": "169.87",
    "NH4SCN": "76.12",
    "EDTA": "372.24",
    "Ba(OH)2": "315.46",
    "Ca(OH)2": "74.09",
}


def test_every_material_has_a_reference_mass() -> None:
    assert {m.code for m in materials()} == set(MOLAR_MASS)


@pytest.mark.parametrize("code", sorted(MOLAR_MASS))
def test_molar_mass_matches_the_published_value(code: str) -> None:
    mass, tol = _mass_and_tolerance(find_material(code).formula)
    quoted = MOLAR_MASS[code]
    assert mass == pytest.approx(float(quoted), abs=tol + _half_last_digit(quoted))


@pytest.mark.parametrize("code", sorted(MOLAR_MASS))
def test_molar_mass_agrees_with_an_independent_library(code: str) -> None:
    """molmass is a second atomic-weight library (test oracle only)."""
    formula = find_material(code).formula
    mass, tol = _mass_and_tolerance(formula)
    assert molmass.Formula(formula).mass == pytest.approx(mass, abs=tol)


# OpenStax, Chemistry 2e, Appendix F: (density g/mL, mass %, molarity mol/L) as printed.
OPENSTAX = {
    "HCl-conc": ("1.18", "36", "11.6"),
    "H2SO4-conc": ("1.84", "96", "18.0"),
    "HNO3-conc": ("1.42", "71", "16.0"),
    "CH3COOH-glacial": ("1.05", "99.5", "17.4"),
    "NH3-aq": ("0.90", "28", "14.8"),
    "H3PO4-conc": ("1.70", "85", "14.7"),
}


@pytest.mark.parametrize("code", sorted(OPENSTAX))
def test_reagent_strength_is_as_published(code: str) -> None:
    density, percent, molarity = OPENSTAX[code]
    g = find_reagent(code)
    assert g.density_g_per_ml == float(density)
    assert g.mass_fraction == pytest.approx(float(percent) / 100, rel=1e-12)
    assert g.molarity_mol_per_l == float(molarity)
    assert "OpenStax" in g.source


@pytest.mark.parametrize("code", sorted(OPENSTAX))
def test_reagent_molarity_recomputed_from_mass_fraction_and_density(code: str) -> None:
    """c = 1000 rho w / M; OpenStax rounds rho, w and c, so the tolerance is the effect of
    half a unit in each printed last digit (plus the atomic-weight uncertainty)."""
    density, percent, molarity = OPENSTAX[code]
    g = find_reagent(code)
    mass, u_mass = _mass_and_tolerance(g.formula)
    rho, w = float(density), float(percent) / 100
    c = 1000 * rho * w / mass
    tol = c * (
        _half_last_digit(density) / rho + _half_last_digit(percent) / float(percent) + u_mass / mass
    ) + _half_last_digit(molarity)
    assert c == pytest.approx(float(molarity), abs=tol)


def test_every_published_reagent_is_checked() -> None:
    published = {g.code for g in reagents() if g.molarity_mol_per_l is not None}
    assert published == set(OPENSTAX)


# Preparation hints are common practice (no source): a little above the stoichiometric
# amount when the solute is impure (KOH pellets assay about 85 %), never much below.
HINT_BAND = (0.98, 1.20)


def _equivalents_per_litre(spec) -> float:
    n = find_material(spec.solute).reaction(name=spec.reaction_name).n
    return spec.nominal if spec.unit == "N" else spec.nominal * n


@pytest.mark.parametrize("code", [s.code for s in specs() if s.preparation_solid_g_per_l])
def test_solid_preparation_hint_fits_the_formula_mass_and_n(code: str) -> None:
    spec = find_spec(code)
    n = find_material(spec.solute).reaction(name=spec.reaction_name).n
    mass = periodictable.formula(find_material(spec.solute).formula).mass
    stoichiometric = _equivalents_per_litre(spec) / n * mass
    ratio = spec.preparation_solid_g_per_l / stoichiometric
    assert HINT_BAND[0] <= ratio <= HINT_BAND[1], (code, stoichiometric)


@pytest.mark.parametrize("code", [s.code for s in specs() if s.preparation_reagent])
def test_concentrate_preparation_hint_fits_the_reagent_strength(code: str) -> None:
    spec = find_spec(code)
    n = find_material(spec.solute).reaction(name=spec.reaction_name).n
    g = find_reagent(spec.preparation_reagent)
    # Molarity of the concentrate from its own mass fraction and density (HClO4 has no
    # published molarity in the table).
    molarity = 1000 * g.density_g_per_ml * g.mass_fraction / periodictable.formula(g.formula).mass
    stoichiometric_ml = _equivalents_per_litre(spec) / n / molarity * 1000
    ratio = spec.preparation_reagent_ml_per_l / stoichiometric_ml
    assert HINT_BAND[0] <= ratio <= HINT_BAND[1], (code, stoichiometric_ml)


@pytest.mark.parametrize("code", [s.code for s in specs() if s.preparation_stock_spec])
def test_dilution_hint_fits_the_stock_strength(code: str) -> None:
    """N1 V1 = N2 V2 for a dilution from a stronger spec of the same solute."""
    spec = find_spec(code)
    stock = find_spec(spec.preparation_stock_spec)
    assert spec.preparation_stock_ml_per_l == pytest.approx(1000 * spec.nominal / stock.nominal)
