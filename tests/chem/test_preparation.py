"""Preparation amounts against OpenStax Chemistry 2e Appendix F and pharmacopoeial
"1 mL of titrant is equivalent to x mg" statements."""

from __future__ import annotations

import pytest

from prepbook.chem import preparation as prep
from prepbook.chem.formula import molar_mass
from prepbook.errors import InvalidInput

# OpenStax Chemistry 2e, Appendix F: formula, density g/mL, mass fraction, molarity
OPENSTAX_F = [
    ("HCl", 1.18, 0.36, 11.6),
    ("H2SO4", 1.84, 0.96, 18.0),
    ("HNO3", 1.42, 0.71, 16.0),
    ("CH3COOH", 1.05, 0.995, 17.4),
    ("NH3", 0.90, 0.28, 14.8),
    ("H3PO4", 1.70, 0.85, 14.7),
]


@pytest.mark.parametrize(("formula", "density", "fraction", "molarity"), OPENSTAX_F)
def test_concentrated_reagent_molarity_openstax(formula, density, fraction, molarity) -> None:
    """OpenStax Appendix F; inputs are given to 2-3 figures, so agreement within 0.5 %
    (HCl: 1000 x 1.18 x 0.36 / 36.46 = 11.65 vs the printed 11.6)."""
    m = molar_mass(formula).value_g_per_mol
    assert prep.reagent_molarity_mol_per_l(fraction, density, m) == pytest.approx(molarity,
                                                                                 rel=0.005)


@pytest.mark.parametrize(("formula", "density", "fraction", "molarity"), OPENSTAX_F)
def test_liquid_volume_for_one_litre_of_1_m(formula, density, fraction, molarity) -> None:
    """OpenStax Appendix F: 1 L of 1 M needs 1000/molarity mL of the concentrate."""
    m = molar_mass(formula).value_g_per_mol
    volume = prep.liquid_volume_ml(1.0, 1000.0, m, 1.0, fraction, density)
    assert volume == pytest.approx(1000.0 / molarity, rel=0.005)


def test_sulfuric_acid_one_normal_needs_half_the_molar_volume() -> None:
    """n = 2 for H2SO4: 1 N is 0.5 M; OpenStax 18.0 M -> 1000/(2 x 18.0) = 27.8 mL per L."""
    m = molar_mass("H2SO4").value_g_per_mol
    assert prep.liquid_volume_ml(1.0, 1000.0, m, 2.0, 0.96, 1.84) == pytest.approx(27.8,
                                                                                   rel=0.005)


def test_solid_mass_usp_edetate() -> None:
    """USP 0.05 M Edetate Disodium VS: 'Dissolve 18.6 g of edetate disodium in water to
    make 1000 mL' (dihydrate; copy of the USP text, official 1-May-2021)."""
    m = molar_mass("C10H14N2Na2O8·2H2O").value_g_per_mol
    assert round(prep.solid_mass_g(0.05, 1000.0, m, 1.0), 1) == 18.6


def test_solid_mass_corrects_for_purity() -> None:
    """Hand check: 98 % pure needs 1/0.98 times the mass."""
    m = molar_mass("Na2CO3").value_g_per_mol
    assert prep.solid_mass_g(0.1, 1000, m, 2, 0.98) == pytest.approx(
        prep.solid_mass_g(0.1, 1000, m, 2) / 0.98)


# Pharmacopoeial equivalence statements: titrant normality, analyte, n, mg per mL, source
EQUIVALENCES = [
    # acid-base
    (1.0, "KHC8H4O4", 1, "204.2",
     "BP 1 M sodium hydroxide VS: 1 mL is equivalent to 204.2 mg of C8H5KO4 (BP text as "
     "quoted by a pharmaceutical SOP page)"),
    (0.1, "KHC8H4O4", 1, "20.42",
     "USP Sodium Hydroxide VS: each 204.2 mg of potassium biphthalate = 1 mL of 1 N "
     "(from memory), i.e. 20.42 mg per mL of 0.1 N"),
    # redox
    (0.03, "KMnO4", 5, "0.9482",
     "USP 29 Potassium Permanganate, Assay: 0.9482 mg of KMnO4 in each mL of 0.03 N"),
    (0.1, "Na2C2O4", 2, "6.700",
     "USP Potassium Permanganate 0.1 N VS: each 6.700 mg of sodium oxalate = 1 mL "
     "(from memory); 0.02 M KMnO4 is 0.1 N"),
    (0.1, "FeCl3·6H2O", 1, "27.03",
     "USP 41 Ferric Chloride CS: each mL of 0.1 N sodium thiosulfate = 27.03 mg FeCl3·6H2O"),
    # precipitation
    (0.05, "NaCl", 1, "2.922",
     "BP 0.05 M silver nitrate VS: each mL = 2.922 mg of NaCl (BP text as quoted by a "
     "pharmaceutical SOP page)"),
    (0.1, "NaCl", 1, "5.844", "USP Silver Nitrate 0.1 N VS: 5.844 mg NaCl (from memory)"),
    (0.1, "AgNO3", 1, "16.99",
     "USP 28 Toughened Silver Nitrate, Assay: each mL of 0.1 N ammonium thiocyanate = "
     "16.99 mg of AgNO3"),
    # complexation (1:1, molar basis: n = 1)
    (0.05, "CaCO3", 1, "5.004",
     "USP 0.05 M Edetate Disodium VS: M = g CaCO3 x 1000 / (100.09 x mL), i.e. 5.004 mg "
     "per mL of 0.05 M"),
    (0.1, "Zn", 1, "6.538",
     "Ph. Eur. 4.2.2 sodium edetate 0.1 M: 1 mL = 6.538 mg of Zn (from memory)"),
]


@pytest.mark.parametrize(("normality", "analyte", "n", "published", "source"), EQUIVALENCES)
def test_titer_against_pharmacopoeial_equivalences(normality, analyte, n, published,
                                                   source) -> None:
    """Each case names its source; agreement to the printed digits (half a unit)."""
    decimals = len(published.split(".")[1])
    mg = prep.titer_mg_per_ml(normality, molar_mass(analyte).value_g_per_mol, n)
    assert abs(mg - float(published)) <= 0.55 * 10**-decimals, source


def test_dilution_hand_check() -> None:
    """N1 V1 = N2 V2: 100 mL of 1 N made up to 1000 mL gives 0.1 N."""
    d = prep.dilution(1.0, 0.1, 1000.0)
    assert d.stock_ml == pytest.approx(100.0) and d.water_ml == pytest.approx(900.0)


def test_dilution_cannot_strengthen() -> None:
    """USP Volumetric Solutions: a solution may be adjusted downward only."""
    with pytest.raises(InvalidInput):
        prep.dilution(0.1, 1.0, 1000.0)


def test_adjust_too_strong_adds_water() -> None:
    """Hand check: 1000 mL of 0.1050 N to 0.1000 N needs 50 mL of water (volumes additive,
    common practice, no source)."""
    a = prep.adjust(0.1050, 0.1000, 1000.0)
    assert a.add == "water"
    assert a.volume_ml == pytest.approx(50.0) and a.final_volume_ml == pytest.approx(1050.0)


def test_adjust_too_weak_adds_stock() -> None:
    """Hand check: 1000 mL of 0.0950 N with 1.0 N stock: 1000 x 0.005/0.9 = 5.556 mL."""
    a = prep.adjust(0.0950, 0.1000, 1000.0, stock_n=1.0)
    assert a.add == "stock" and a.volume_ml == pytest.approx(1000 * 0.005 / 0.9)


@pytest.mark.parametrize("stock", [None, 0.1, 0.05])
def test_adjust_too_weak_needs_a_stronger_stock(stock) -> None:
    """A stock not stronger than the target cannot raise the batch to it."""
    with pytest.raises(InvalidInput):
        prep.adjust(0.0950, 0.1000, 1000.0, stock_n=stock)


@pytest.mark.parametrize(
    "call",
    [lambda: prep.solid_mass_g(0, 1000, 100, 1), lambda: prep.solid_mass_g(0.1, 1000, 100, 1, 1.2),
     lambda: prep.liquid_volume_ml(1, 1000, 36.46, 1, 36, 1.18),
     lambda: prep.titer_mg_per_ml(0.1, -1, 1), lambda: prep.dilution(1, 0.1, -5)],
)
def test_bad_input_is_refused(call) -> None:
    """Owner's rule: non-positive values, fractions over 1 (36 instead of 0.36) refused."""
    with pytest.raises(InvalidInput):
        call()


def test_concentrate_normality_openstax_hydrochloric_acid() -> None:
    """OpenStax Chemistry 2e, Appendix F: HCl 36 %, 1.18 g/mL, 11.6 M. By hand, 85.0 mL of
    it made up to 1000 mL: 11.6 x 1 x 85.0 / 1000 = 0.986 eq/L (n = 1), with the
    published molarity; sulfuric acid (18.0 M, n = 2), 27.8 mL to 1000 mL:
    18.0 x 2 x 27.8 / 1000 = 1.0008 eq/L."""
    assert prep.concentrate_normality(85.0, 1000.0, molarity_mol_per_l=11.6, n=1) == \
        pytest.approx(0.986, rel=1e-12)
    assert prep.concentrate_normality(27.8, 1000.0, molarity_mol_per_l=18.0, n=2) == \
        pytest.approx(1.0008, rel=1e-12)
    with pytest.raises(InvalidInput, match="n \\(eq/mol\\)"):
        prep.concentrate_normality(27.8, 1000.0, molarity_mol_per_l=18.0, n=0)
