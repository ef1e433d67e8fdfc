"""Equivalence-point pH and indicator choice, checked against textbook formulas.

Constants used below (25 C):
- pKa acetic acid 4.756, ammonium 9.245: NIST critically selected constants as
  tabulated in a standard analytical chemistry textbook.
- pKa phthalic acid 2.946, 5.409 (same tabulation).
- pKa carbonic acid 6.35, 10.33 (same tabulation).
- pKa TRIS-H+ 8.07 (8.072, from memory).
- pKa boric acid 9.24 (9.237, from memory).
- pKw 14.00 at 25 C (every general chemistry text, e.g. OpenStax Chemistry 2e, ch. 14).
- Indicator transition ranges: bromocresol green 3.8-5.4, bromothymol blue 6.0-7.6
  (AOAC appendix); methyl orange 3.1-4.4, methyl red 4.4-6.2, phenolphthalein
  8.2-10.0, thymol blue 8.0-9.6 (from memory).

The textbook formulas are the simplifications taught for the pH of salt solutions
(OpenStax Chemistry 2e, "Hydrolysis of Salts" and "Acid-Base Titrations"; the section
numbers 14.4 and 14.7 from memory): for the salt of a weak acid, Kb = Kw/Ka and
[OH-] = sqrt(Kb C), i.e. pH = 7 + (pKa + log C)/2; for the salt of a weak base,
[H+] = sqrt(Ka C), pH = (pKa - log C)/2; for an amphiprotic ion, pH = (pKa1 + pKa2)/2.
The model solves the full charge balance, so each check allows a tolerance for
what the formula neglects, stated beside it.
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from prepbook.chem import equilibria
from prepbook.chem.equilibria import (
    equivalence_ph,
    equivalence_ph_for,
    glass_electrode_mv,
    indicator_fit,
    mean_bound_protons,
    nearest_indicators,
    simulate_titration,
    solution_ph,
)
from prepbook.errors import InvalidInput

ACETIC = (4.756,)
AMMONIUM = (9.245,)
PHTHALIC = (2.946, 5.409)
CARBONIC = (6.35, 10.33)
TRIS = (8.07,)
BORIC = (9.24,)
PKW = 14.00

INDICATORS = (
    ("methyl orange", 3.1, 4.4),
    ("bromocresol green", 3.8, 5.4),
    ("methyl red", 4.4, 6.2),
    ("bromothymol blue", 6.0, 7.6),
    ("thymol blue", 8.0, 9.6),
    ("phenolphthalein", 8.2, 10.0),
)


# ----------------------------------------------------------------------------- salt hydrolysis


def test_sodium_acetate_matches_weak_acid_salt_formula() -> None:
    """0.1 M acetate (acetic acid titrated to its equivalence point): pH = 7 + (pKa + log C)/2
    (OpenStax Chemistry 2e, Hydrolysis of Salts). The formula neglects [HA] against C
    (here 1e-4 relative) and [H+] against [OH-]: 0.002 pH covers both."""
    c = 0.1
    expected = 7 + (ACETIC[0] + math.log10(c)) / 2
    got = equivalence_ph(ACETIC, 1, c, True, initial_protons=1)
    assert got == pytest.approx(expected, abs=0.002)
    assert 8.85 < got < 8.90  # the usual quoted "about 8.87-8.88" (from memory)


def test_ammonium_chloride_matches_weak_base_salt_formula() -> None:
    """0.05 M NH4Cl (ammonia titrated with HCl to equivalence): pH = (pKa - log C)/2
    (OpenStax Chemistry 2e, Hydrolysis of Salts); the neglected terms are below 0.001 pH."""
    c = 0.05
    expected = (AMMONIUM[0] - math.log10(c)) / 2
    got = equivalence_ph(AMMONIUM, 1, c, False, initial_protons=0)
    assert got == pytest.approx(expected, abs=0.002)


def test_khp_equivalence_is_phthalate_hydrolysis() -> None:
    """KHP (HP-, 1 proton bound) with NaOH ends as phthalate P2-: pH = 7 + (pKa2 + log C)/2
    (weak-acid salt formula, OpenStax Chemistry 2e). Phenolphthalein is the indicator the
    pharmacopoeias prescribe for this standardization (Ph. Eur. 4.2.2, from memory)."""
    c = 0.05
    expected = 7 + (PHTHALIC[1] + math.log10(c)) / 2
    got = equivalence_ph(PHTHALIC, 1, c, True, initial_protons=1)
    assert got == pytest.approx(expected, abs=0.005)
    suitable, _ = indicator_fit(got, INDICATORS)
    assert "phenolphthalein" in suitable


def test_starting_form_matters_khp_versus_phthalic_acid() -> None:
    """Phthalic acid (2 protons bound) titrated by one proton stops at the amphiprotic HP-:
    pH = (pKa1 + pKa2)/2 (amphiprotic formula, OpenStax Chemistry 2e / any analytical text),
    not the phthalate pH of KHP. The formula ignores C-dependence: 0.05 pH at 0.05 M."""
    c = 0.05
    got = equivalence_ph(PHTHALIC, 1, c, True, initial_protons=2)
    assert got == pytest.approx((PHTHALIC[0] + PHTHALIC[1]) / 2, abs=0.05)
    khp = equivalence_ph(PHTHALIC, 1, c, True, initial_protons=1)
    assert khp - got > 4


def test_carbonate_to_carbonic_acid_matches_weak_acid_formula() -> None:
    """Na2CO3 + 2 HCl ends as H2CO3 (closed vessel): pH = (pKa1 - log C)/2, the weak-acid
    approximation [H+] = sqrt(Ka1 C) (OpenStax Chemistry 2e, weak acids). Neglected: the
    dissociated fraction (about 0.3 % at 0.05 M) and the second step: 0.005 pH."""
    c = 0.05
    expected = (CARBONIC[0] - math.log10(c)) / 2
    got = equivalence_ph(CARBONIC, 2, c, False, initial_protons=0)
    assert got == pytest.approx(expected, abs=0.005)
    assert 3.7 < got < 4.0  # "about pH 3.9" in the brief; textbook figure (from memory)


def test_carbonate_to_bicarbonate_matches_amphiprotic_formula() -> None:
    """Na2CO3 + 1 HCl ends as HCO3-. Exact check against the intermediate-form formula
    [H+] = sqrt((K1 K2 F + K1 Kw) / (K1 + F)) (Harris, Quantitative Chemical Analysis,
    polyprotic equilibria, from memory), which neglects only the change of [HCO3-] from F
    (a 1 % effect on [H+] here: 0.005 pH); it is close to (pKa1 + pKa2)/2."""
    f = 0.05
    k1, k2, kw = 10 ** -CARBONIC[0], 10 ** -CARBONIC[1], 10**-PKW
    expected = -math.log10(math.sqrt((k1 * k2 * f + k1 * kw) / (k1 + f)))
    got = equivalence_ph(CARBONIC, 1, f, False, initial_protons=0)
    assert got == pytest.approx(expected, abs=0.005)
    assert got == pytest.approx(sum(CARBONIC) / 2, abs=0.01)


def test_tris_with_hcl_matches_weak_base_salt_formula() -> None:
    """TRIS + HCl ends as TRIS-H+: pH = (pKa - log C)/2 (OpenStax Chemistry 2e, Hydrolysis
    of Salts; pKa 8.07 from memory); the brief's "about 4.6-5" for 0.05 M."""
    c = 0.05
    expected = (TRIS[0] - math.log10(c)) / 2
    got = equivalence_ph(TRIS, 1, c, False, initial_protons=0)
    assert got == pytest.approx(expected, abs=0.002)
    assert 4.6 <= got <= 5.0
    suitable, _ = indicator_fit(got, INDICATORS)
    assert "methyl red" in suitable


def test_borax_with_hcl_is_boric_acid_at_four_sites_per_formula() -> None:
    """Borax dissolves as 2 B(OH)3 + 2 B(OH)4- (4 boron sites, 2 protons bound) and takes
    2 HCl to 4 B(OH)3 (any analytical text, from memory): pH = (pKa - log 4C)/2 (weak-acid
    approximation, OpenStax Chemistry 2e); methyl red is the usual indicator (from memory)."""
    c = 0.025
    expected = (BORIC[0] - math.log10(4 * c)) / 2
    got = equivalence_ph(BORIC, 2, c, False, initial_protons=2, units_per_formula=4)
    assert got == pytest.approx(expected, abs=0.002)
    suitable, unsuitable = indicator_fit(got, INDICATORS)
    assert "methyl red" in suitable
    assert "phenolphthalein" in unsuitable


# ----------------------------------------------------------------------------- indicator warning


def test_carbonate_counted_as_two_equivalents_is_not_seen_by_phenolphthalein() -> None:
    """The warning case: sodium carbonate counted as 2 eq/mol must be titrated to the
    second equivalence point (methyl orange 3.1-4.4 covers it); phenolphthalein 8.2-10.0
    covers only the first (bicarbonate), so an endpoint read with it gives 1 eq/mol.
    Ranges: methyl orange, phenolphthalein (from memory, REFERENCES list)."""
    second = equivalence_ph(CARBONIC, 2, 0.05, False, initial_protons=0)
    first = equivalence_ph(CARBONIC, 1, 0.05, False, initial_protons=0)
    suitable_2, unsuitable_2 = indicator_fit(second, INDICATORS)
    suitable_1, unsuitable_1 = indicator_fit(first, INDICATORS)
    assert "methyl orange" in suitable_2
    assert "phenolphthalein" in unsuitable_2
    assert "phenolphthalein" in suitable_1
    assert "methyl orange" in unsuitable_1


def test_indicator_fit_includes_the_range_ends_and_keeps_order() -> None:
    """Covering means low <= pH <= high; the split is a partition in the order given
    (definition of a transition range; no source needed beyond the ranges themselves)."""
    suitable, unsuitable = indicator_fit(4.4, INDICATORS)
    assert suitable == ("methyl orange", "bromocresol green", "methyl red")
    assert set(suitable) | set(unsuitable) == {name for name, _, _ in INDICATORS}
    assert not set(suitable) & set(unsuitable)


def test_nearest_indicators_rank_by_distance_to_the_range() -> None:
    """At the second carbonate equivalence the nearest ranges are methyl orange and
    bromocresol green; phenolphthalein is its lower end (8.2) minus the pH away."""
    ph = equivalence_ph(CARBONIC, 2, 0.05, False, initial_protons=0)
    ranked = nearest_indicators(ph, INDICATORS, count=len(INDICATORS))
    names = [name for name, _ in ranked]
    assert set(names[:2]) == {"methyl orange", "bromocresol green"}
    assert dict(ranked)["phenolphthalein"] == pytest.approx(8.2 - ph)
    assert [d for _, d in ranked] == sorted(d for _, d in ranked)


def test_indicator_range_must_run_low_to_high() -> None:
    with pytest.raises(InvalidInput, match="transition range"):
        indicator_fit(7.0, [("backwards", 9.0, 8.0)])


# ----------------------------------------------------------------------------- the model itself


@settings(max_examples=60, deadline=None)
@given(
    pka=st.floats(min_value=2.0, max_value=6.0),
    log_c=st.floats(min_value=-3.0, max_value=0.0),
)
def test_weak_acid_solution_matches_quadratic(pka: float, log_c: float) -> None:
    """A weak acid alone: [H+] = (-Ka + sqrt(Ka^2 + 4 Ka C)) / 2, the exact solution when
    water's own ions are negligible (OpenStax Chemistry 2e, weak acid equilibria). Over
    this range [OH-] stays below 1e-5 of [H+], so the full charge balance and the
    quadratic agree to well within 1e-4 pH."""
    ka, c = 10.0**-pka, 10.0**log_c
    expected = -math.log10((-ka + math.sqrt(ka * ka + 4 * ka * c)) / 2)
    assert solution_ph([pka], c, initial_protons=1) == pytest.approx(expected, abs=1e-4)


@settings(max_examples=60, deadline=None)
@given(ph=st.floats(min_value=0.0, max_value=14.0))
def test_mean_bound_protons_matches_fractional_composition(ph: float) -> None:
    """Diprotic fractional composition: nbar = (2 h^2 + K1 h) / (h^2 + K1 h + K1 K2)
    (Harris, Quantitative Chemical Analysis, fractional composition equations, from
    memory); at pH = pKa of a monoprotic acid nbar = 1/2 (Henderson-Hasselbalch)."""
    k1, k2 = 10 ** -CARBONIC[0], 10 ** -CARBONIC[1]
    h = 10.0**-ph
    expected = (2 * h * h + k1 * h) / (h * h + k1 * h + k1 * k2)
    assert mean_bound_protons(CARBONIC, ph) == pytest.approx(expected, rel=1e-9, abs=1e-12)
    assert mean_bound_protons(ACETIC, ACETIC[0]) == pytest.approx(0.5)


def test_half_neutralized_acetic_acid_is_at_pka() -> None:
    """Henderson-Hasselbalch: halfway to the equivalence point pH = pKa (OpenStax
    Chemistry 2e, Acid-Base Titrations); at 0.1 M the neglected [H+] shifts it < 0.001."""
    (ph,) = simulate_titration(
        [12.5], pkas=ACETIC, sample_concentration_mol_per_l=0.1, sample_ml=25.0,
        titrant_concentration_mol_per_l=0.1, initial_protons=1,
    )
    assert ph == pytest.approx(ACETIC[0], abs=0.002)


def test_excess_strong_acid_sets_the_ph_after_carbonate_equivalence() -> None:
    """Past the second equivalence point, [H+] = C_HCl (V - Ve) / (V0 + V) (stoichiometry of
    the excess titrant; Harris, titration of a weak base, region after Ve, from memory);
    the bicarbonate left adds < 0.2 % at 30 mL: 0.002 pH."""
    c_sample, v0, c_hcl, v = 0.05, 25.0, 0.1, 30.0
    ve2 = 2 * c_sample * v0 / c_hcl
    (ph,) = simulate_titration(
        [v], pkas=CARBONIC, sample_concentration_mol_per_l=c_sample, sample_ml=v0,
        titrant_concentration_mol_per_l=c_hcl, initial_protons=0, titrant_is_base=False,
    )
    assert ph == pytest.approx(-math.log10(c_hcl * (v - ve2) / (v0 + v)), abs=0.002)


def test_strong_base_alone_gives_pkw_minus_poh() -> None:
    """Excess NaOH: [OH-] = C, pH = pKw + log C (definition of Kw, OpenStax Chemistry 2e)."""
    got = solution_ph(ACETIC, 1e-6, initial_protons=0, strong_base_mol_per_l=0.01)
    assert got == pytest.approx(PKW + math.log10(0.01), abs=1e-3)


def test_nernst_slope_agrees_with_codata_constants() -> None:
    """RT ln(10)/F at 298.15 K from the CODATA constants in scipy.constants (an independent
    oracle) is 59.16 mV per pH; the electrode reading falls by that much per pH unit."""
    from scipy import constants

    slope_mv = constants.R * 298.15 * math.log(10) / constants.value("Faraday constant") * 1000
    assert slope_mv == pytest.approx(equilibria.NERNST_SLOPE_25C_MV_PER_PH, abs=0.005)
    assert glass_electrode_mv(4.0) - glass_electrode_mv(5.0) == pytest.approx(slope_mv, abs=0.005)
    assert glass_electrode_mv(7.0) == pytest.approx(0.0)  # zero point at pH 7 (common practice)


# ----------------------------------------------------------------------------- catalog adapter


def test_equivalence_ph_for_reads_a_catalog_material() -> None:
    """The duck-typed adapter assumes an acid standard is weighed bearing the protons it
    gives (KHP): the phthalate formula of the test above applies (OpenStax Chemistry 2e)."""
    khp = SimpleNamespace(name="potassium hydrogen phthalate", pka=PHTHALIC, acid_base="acid")
    reaction = SimpleNamespace(name="acid-base", n=1.0, protons=1)
    expected = 7 + (PHTHALIC[1] + math.log10(0.05)) / 2
    assert equivalence_ph_for(khp, reaction, 0.05) == pytest.approx(expected, abs=0.005)


def test_equivalence_ph_for_borax_needs_its_sites_stated() -> None:
    """Without acid_units (the catalog's name for units per formula) borax (one pKa,
    2 protons) cannot be modelled: refused, not guessed; with it, the boric acid formula
    of the borax test applies."""
    borax = SimpleNamespace(name="borax", pka=BORIC, acid_base="base")
    reaction = SimpleNamespace(name="acid-base", n=2.0, protons=2)
    with pytest.raises(InvalidInput, match="cannot take"):
        equivalence_ph_for(borax, reaction, 0.025)
    stated = SimpleNamespace(**vars(borax), initial_protons=2, acid_units=4)
    expected = (BORIC[0] - math.log10(4 * 0.025)) / 2
    assert equivalence_ph_for(stated, reaction, 0.025) == pytest.approx(expected, abs=0.002)


# ----------------------------------------------------------------------------- refusals


def test_the_starting_form_must_be_stated() -> None:
    """initial_protons is a required keyword: KHP and phthalic acid differ only by it."""
    with pytest.raises(TypeError):
        equivalence_ph(PHTHALIC, 1, 0.05, True)  # type: ignore[call-arg]


@pytest.mark.parametrize(
    ("args", "kwargs", "message"),
    [
        ((PHTHALIC, 2, 0.05, True), {"initial_protons": 1}, "cannot give up 2"),
        ((CARBONIC, 3, 0.05, False), {"initial_protons": 0}, "cannot take 3"),
        (((5.4, 2.9), 1, 0.05, True), {"initial_protons": 1}, "ascending"),
        (((), 1, 0.05, True), {"initial_protons": 1}, "at least one pKa"),
        (((float("nan"),), 1, 0.05, True), {"initial_protons": 1}, "finite"),
        ((ACETIC, 1, 0.0, True), {"initial_protons": 1}, "positive"),
        ((ACETIC, 1, -0.1, True), {"initial_protons": 1}, "positive"),
        ((ACETIC, 0, 0.1, True), {"initial_protons": 1}, "whole number >= 1"),
        ((ACETIC, True, 0.1, True), {"initial_protons": 1}, "whole number"),
        ((ACETIC, 1, 0.1, True), {"initial_protons": -1}, "whole number >= 0"),
    ],
)
def test_equivalence_ph_refuses_impossible_input(args: tuple, kwargs: dict, message: str) -> None:
    with pytest.raises(InvalidInput, match=message):
        equivalence_ph(*args, **kwargs)


def test_simulate_titration_refuses_negative_volume() -> None:
    with pytest.raises(InvalidInput, match="titrant volume"):
        simulate_titration([-1.0], pkas=ACETIC, sample_concentration_mol_per_l=0.1,
                           sample_ml=25.0, titrant_concentration_mol_per_l=0.1,
                           initial_protons=1)


@settings(max_examples=200, deadline=None)
@given(pkas=st.lists(st.floats(min_value=1.0, max_value=13.0), min_size=1, max_size=3),
       log_c=st.floats(min_value=-6.0, max_value=0.0),
       protons=st.integers(min_value=0, max_value=3),
       log_base=st.floats(min_value=-8.0, max_value=-0.5))
def test_bisection_finds_the_root_scipy_brentq_finds(pkas: list[float], log_c: float,
                                                     protons: int, log_base: float) -> None:
    # Reference: scipy.optimize.brentq (a general-purpose root finder) on the same
    # proton condition; the solver itself is plain bisection, which imports nothing.
    from scipy.optimize import brentq

    values = tuple(sorted(pkas))
    c, base = 10.0**log_c, 10.0**log_base
    p0 = min(protons, len(values))
    kw = 10.0**-PKW

    def residual(log_h: float) -> float:
        h = 10.0**log_h
        return h - kw / h + c * mean_bound_protons(values, -log_h) - (c * p0 - base)

    expected = -brentq(residual, -20.0, 4.0, xtol=1e-13, rtol=1e-15, maxiter=500)
    got = solution_ph(values, c, initial_protons=p0, strong_base_mol_per_l=base)
    assert got == pytest.approx(expected, abs=1e-9)


def test_bisection_stops_within_its_tolerance_of_a_known_root() -> None:
    # x**3 - 2 on [0, 2]: the root is the cube root of 2 (math.cbrt, Python 3.11).
    root = equilibria._bisect(lambda x: x**3 - 2.0, 0.0, 2.0, xtol=1e-12)
    assert abs(root - math.cbrt(2.0)) <= 0.5e-12
