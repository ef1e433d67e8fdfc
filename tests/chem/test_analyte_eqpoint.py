"""Equivalence points of a sample's analyte (prepbook.lab.equilibrium_calcs.eqpoint over
prepbook.chem.equilibria) and property tests of the solver (hypothesis).

Expected pH values are worked by hand with the textbook formulas, written out in each
check (constants: the catalog's, 25 C, concentrations for activities). Indicator advice
is the textbook rule for a weak acid (phenolphthalein, not methyl orange) and a weak base
(methyl red, not phenolphthalein), from memory.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as s

from prepbook.chem.equilibria import simulate_titration, solution_ph
from prepbook.errors import InvalidInput
from prepbook.lab.equilibrium_calcs import eqpoint

KW = 1e-14


def _at(analyte: str, titrant: str, c: float = 0.05, **kw: str):
    return eqpoint(analyte=analyte, titrant=titrant, concentration_text=str(c), **kw)


def test_weak_acid_with_strong_base() -> None:
    """0.05 M acetate at equivalence: [OH-] = sqrt(Kw/Ka C) -> pH 8.73 (hand-worked)."""
    r = _at("acetic acid", "NaOH")
    assert r.ph == pytest.approx(14 + math.log10(math.sqrt(KW / 10**-4.756 * 0.05)), abs=0.01)
    assert "phenolphthalein" in r.suitable and "methyl orange" in r.unsuitable


def test_the_same_with_barium_hydroxide_a_diprotic_titrant() -> None:
    r = _at("acetic acid", "Ba(OH)2", titrant_concentration_text="0.1")
    assert r.method == "with hydroxide"
    assert r.ph == pytest.approx(14 + math.log10(math.sqrt(KW / 10**-4.756 * 0.05)), abs=0.01)


def test_weak_base_with_strong_acid() -> None:
    """0.05 M ammonium at equivalence: [H+] = sqrt(Ka C) -> pH 5.27 (hand-worked)."""
    r = _at("ammonia", "HCl")
    assert r.ph == pytest.approx(-math.log10(math.sqrt(10**-9.245 * 0.05)), abs=0.01)
    assert "methyl red" in r.suitable and "phenolphthalein" in r.unsuitable


@pytest.mark.parametrize(("analyte", "titrant"), [("HCl", "NaOH"), ("NaOH", "H2SO4")])
def test_strong_with_strong_is_neutral(analyte: str, titrant: str) -> None:
    """Strong acid and strong base: pH 7.00 at equivalence."""
    assert _at(analyte, titrant).ph == pytest.approx(7.00, abs=0.01)


def test_sulfuric_acid_s_equivalence_point_is_slightly_basic() -> None:
    """0.05 M sulfate: [OH-]^2 = Kb C + Kw with Kb = Kw / 10^-1.99 (hand-worked): pH 7.39,
    the small basicity of sulfate that a 'strong-strong' shortcut would miss."""
    kb = KW / 10**-1.99
    expected = 14 + math.log10(math.sqrt(kb * 0.05 + KW))
    r = _at("H2SO4", "NaOH")
    assert r.ph == pytest.approx(expected, abs=0.01)
    assert "phenolphthalein" in r.suitable


def test_carbonate_has_two_equivalence_points() -> None:
    """Carbonate with acid (hand-worked): the first point is hydrogen carbonate, pH about
    (6.35 + 10.33) / 2 = 8.34; the method's point is the second (n = 2), carbonic acid at
    0.05 M: [H+] = sqrt(Ka1 C) -> pH 3.83."""
    r = _at("sodium carbonate", "HCl")
    assert [p.protons for p in r.points] == [1, 2]
    assert r.points[0].ph == pytest.approx((6.35 + 10.33) / 2, abs=0.02)
    assert r.ph == pytest.approx(-math.log10(math.sqrt(10**-6.35 * 0.05)), abs=0.01)
    first = _at("sodium carbonate", "HCl", method="to hydrogen carbonate")
    assert first.ph == pytest.approx(8.34, abs=0.02) and first.n_eq_per_mol == 1


def test_phosphoric_acid_each_equivalence_point() -> None:
    """H3PO4 with NaOH (method to HPO4 2-, 0.05 M there, titrant 0.2 eq/L so the sample is
    0.1 M): points at C = 0.1/(1 + j/2): H2PO4- 0.0667 M, HPO4 2- 0.05 M, PO4 3- 0.04 M.
    pH 1 and 2 by the amphiprotic formula [H+] = sqrt((K1 K2 C + K1 Kw)/(K1 + C));
    pH 3 by the quadratic in Kb = Kw / Ka3 (hand-worked)."""
    r = _at("phosphoric acid", "NaOH")
    k1, k2, k3 = 10**-2.15, 10**-7.20, 10**-12.35

    def amph(ka: float, kb: float, c: float) -> float:
        return -math.log10(math.sqrt((ka * kb * c + ka * KW) / (ka + c)))

    kb = KW / k3
    oh = (-kb + math.sqrt(kb * kb + 4 * kb * 0.04)) / 2
    expected = [amph(k1, k2, 0.1 / 1.5), amph(k2, k3, 0.05), 14 + math.log10(oh)]
    assert [p.ph for p in r.points] == pytest.approx(expected, abs=0.02)
    assert r.ph == r.points[1].ph


def test_redox_and_back_titrations_have_no_equivalence_ph() -> None:
    with pytest.raises(InvalidInput, match="not a direct acid-base"):
        _at("hydrogen peroxide", "KMnO4")
    with pytest.raises(InvalidInput, match="not a direct acid-base"):
        _at("chloride", "NH4SCN")


# ----------------------------------------------------------------------------- properties

pka_lists = s.lists(s.floats(1.0, 13.0), min_size=1, max_size=3).map(sorted)


@settings(max_examples=60, deadline=None)
@given(pkas=pka_lists, c=s.floats(1e-3, 0.5), titrant=s.floats(0.01, 1.0),
       volumes=s.lists(s.floats(0.0, 60.0), min_size=2, max_size=12).map(sorted))
def test_ph_rises_with_base_added(pkas: list[float], c: float, titrant: float,
                                  volumes: list[float]) -> None:
    phs = simulate_titration(volumes, pkas=pkas, sample_concentration_mol_per_l=c,
                             sample_ml=25.0, titrant_concentration_mol_per_l=titrant,
                             initial_protons=len(pkas), titrant_is_base=True)
    assert all(b >= a - 1e-9 for a, b in zip(phs, phs[1:], strict=False))


@settings(max_examples=60, deadline=None)
@given(pkas=pka_lists, c=s.floats(1e-4, 0.5), base_fraction=s.floats(0.0, 1.5))
def test_charge_balance_holds(pkas: list[float], c: float, base_fraction: float) -> None:
    """An acid H_nA (fully protonated, n = len(pkas)) with NaOH: at the pH found,
    [Na+] + [H+] = [OH-] + sum_j (n - j) [H_jA], the species fractions computed here from
    the cumulative constants, not by the solver's code."""
    n = len(pkas)
    na = base_fraction * n * c
    ph = solution_ph(pkas, c, initial_protons=n, strong_base_mol_per_l=na)
    h = 10.0**-ph
    # [H_jA] proportional to beta_j h^j, beta_j = product of the j highest Ka^-1
    betas = [10 ** sum(sorted(pkas, reverse=True)[:j]) for j in range(n + 1)]
    terms = [b * h**j for j, b in enumerate(betas)]
    total = sum(terms)
    anions = sum((n - j) * c * t / total for j, t in enumerate(terms))
    assert na + h == pytest.approx(KW / h + anions, rel=1e-6, abs=1e-13)
