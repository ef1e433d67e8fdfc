"""Molar masses against CIAAW 2021, USP text, EURACHEM CG4 A2 and molmass (an independent
library with NIST/IUPAC atomic weights)."""

from __future__ import annotations

import math

import molmass
import periodictable
import pytest

from prepbook.chem.formula import molar_mass, molar_mass_from_table
from prepbook.errors import InvalidInput

# CIAAW, Standard Atomic Weights 2021 (abridged values, as listed in REFERENCES):
# symbol -> (value, half-width of the last digits given).
CIAAW_2021 = {
    "K": (39.0983, 0.0001),
    "Na": (22.98976928, 0.00000002),
    "Ca": (40.078, 0.004),
    "Mn": (54.938043, 0.000002),
    "Cr": (51.9961, 0.0006),
    "Ag": (107.8682, 0.0002),
    "I": (126.90447, 0.00003),
}
# CIAAW 2021 intervals and the conventional values chosen for them.
CIAAW_2021_INTERVALS = {
    "H": (1.00784, 1.00811, 1.008),
    "C": (12.0096, 12.0116, 12.011),
    "O": (15.99903, 15.99977, 15.999),
    "N": (14.00643, 14.00728, 14.007),
    "S": (32.059, 32.076, 32.06),
    "Cl": (35.446, 35.457, 35.45),
}


@pytest.mark.parametrize("symbol", sorted(CIAAW_2021))
def test_single_element_weights_are_ciaaw_2021(symbol: str) -> None:
    """CIAAW 2021: value to its stated digits, u = half-width/sqrt(3) (CG4 A2 rectangular)."""
    value, half_width = CIAAW_2021[symbol]
    result = molar_mass(symbol)
    assert result.value_g_per_mol == pytest.approx(value, abs=half_width / 10)
    assert result.u_g_per_mol == pytest.approx(half_width / math.sqrt(3), rel=1e-6)


@pytest.mark.parametrize("symbol", sorted(CIAAW_2021_INTERVALS))
def test_interval_elements_use_conventional_values(symbol: str) -> None:
    """CIAAW 2021 conventional atomic weights; the abridged half-width around that value
    covers the published interval (O's 15.999 itself lies just below 15.99903)."""
    low, high, conventional = CIAAW_2021_INTERVALS[symbol]
    value = molar_mass(symbol).value_g_per_mol
    half_width = getattr(periodictable, symbol)._mass_unc
    assert value == pytest.approx(conventional, abs=1e-9)
    assert value - half_width <= low and high <= value + half_width


def _half_width_sum(formula: str) -> float:
    """Worst case of the abridged atomic-weight half-widths: the tolerance for comparing
    two libraries whose atomic weights come from different editions."""
    atoms = molar_mass(formula).atoms
    return sum(n * getattr(periodictable, sym)._mass_unc for sym, n in atoms)


STANDARDS = [
    "KHC8H4O4",  # potassium hydrogen phthalate
    "Na2CO3",
    "Na2C2O4",
    "K2Cr2O7",
    "KIO3",
    "NaCl",
    "CaCO3",
    "AgNO3",
    "C4H11NO3",  # TRIS
    "As2O3",
    "KMnO4",
    "Na2S2O3·5H2O",
    "Na2B4O7.10H2O",
    "C10H14N2Na2O8.2H2O",  # disodium edetate dihydrate
    "FeCl3.6H2O",
    "K3Fe(CN)6",
    "H2SO4",
]


@pytest.mark.parametrize("formula", STANDARDS)
def test_agrees_with_molmass_within_atomic_weight_uncertainty(formula: str) -> None:
    """molmass (independent library, NIST atomic weights) as oracle; tolerance = the sum of
    the CIAAW abridged half-widths, since editions differ in the fourth decimal."""
    oracle = molmass.Formula(formula.replace("·", ".")).mass
    assert molar_mass(formula).value_g_per_mol == pytest.approx(
        oracle, abs=_half_width_sum(formula)
    )


@pytest.mark.parametrize("formula", ["KHC8H4O4", "Na2B4O7.10H2O", "K3Fe(CN)6", "FeCl3.6H2O"])
def test_hill_notation_matches_molmass(formula: str) -> None:
    """molmass's Formula.formula is Hill notation (independent oracle)."""
    assert molar_mass(formula).hill == molmass.Formula(formula).formula


@pytest.mark.parametrize(
    ("formula", "published"),
    [("H2SO4", 98.07), ("K3Fe(CN)6", 329.25)],
)
def test_usp_molar_solution_examples(formula: str, published: float) -> None:
    """USP 29, Volumetric Solutions, 'Molar Solutions': a liter of 1 M sulfuric acid contains
    98.07 g of H2SO4, of potassium ferricyanide 329.25 g of K3Fe(CN)6."""
    assert abs(molar_mass(formula).value_g_per_mol - published) <= 0.005


def test_khp_agrees_with_cg4_a2_within_its_uncertainty() -> None:
    """EURACHEM/CITAC CG4 A2: M(KHP) = 204.2212 g/mol, u = 0.0038 (older atomic weights);
    the CIAAW 2021 value must lie within 2u of it."""
    assert abs(molar_mass("KHC8H4O4").value_g_per_mol - 204.2212) <= 2 * 0.0038


def test_combination_rule_reproduces_cg4_a2_budget() -> None:
    """CG4 A2 combines count*U/sqrt(3) per element in quadrature and gets 204.2212 g/mol,
    u 0.0038 g/mol from the IUPAC atomic weights of its time: C 12.0107(8), H 1.00794(7),
    O 15.9994(3), K 39.0983(1) (those four values from memory)."""
    weights = {"C": (12.0107, 0.0008), "H": (1.00794, 0.00007), "O": (15.9994, 0.0003),
               "K": (39.0983, 0.0001)}
    value, u = molar_mass_from_table(molar_mass("KHC8H4O4").atoms, weights)
    assert round(value, 4) == 204.2212
    assert round(u, 4) == 0.0038


@pytest.mark.parametrize(
    "written", ["Na2B4O7·10H2O", "Na2B4O7.10H2O", "Na2B4O7*10H2O", "Na2B4O7+10H2O",
                "Na2B4O7 · 10 H2O"]
)
def test_hydrate_separators(written: str) -> None:
    """Borax decahydrate: every separator gives molmass's value for 'Na2B4O7.10H2O'."""
    oracle = molmass.Formula("Na2B4O7.10H2O").mass
    result = molar_mass(written)
    assert result.formula == written
    assert result.value_g_per_mol == pytest.approx(oracle, abs=_half_width_sum("Na2B4O7.10H2O"))
    assert dict(result.atoms) == {"B": 4, "H": 20, "Na": 2, "O": 17}


@pytest.mark.parametrize(
    "bad", ["", "   ", "Xx2", "na2co3", "NaCl.", "H0.5", "D2O", "Tc", "2", "CuSO4..5H2O",
            "0H2O"]
)
def test_unreadable_formulas_are_refused(bad: str) -> None:
    """Malformed input -> InvalidInput with the formula named (owner's rule)."""
    with pytest.raises(InvalidInput) as info:
        molar_mass(bad)
    assert "formula" in str(info.value)
