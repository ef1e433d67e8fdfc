"""The pH of a salt's solution (prepbook.chem.salts, ions from the catalog): textbook
classifications, hand-worked pH values, the governing ion, and the solver's charge
balance (hypothesis).

Classifications are those of the general-chemistry chapters on the acid-base properties
of salts (from memory): a salt of a strong acid and a strong base is neutral; of a weak
base's conjugate acid (or a small highly charged hydrated metal ion) acidic; of a weak
acid's conjugate base basic; of both, decided by comparing Ka and Kb; an amphiprotic
anion by comparing its own Ka with its Kb. pH values are worked by hand in each case
with the textbook formulas written out (the constants are the catalog's, 25 C).
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as s

from prepbook.catalog.samples import find_ion
from prepbook.chem.salts import Ion, salt_ph

KW = 1e-14


def _ion(query: str) -> Ion:
    i = find_ion(query)
    return Ion(i.name, i.charge, i.pka, i.protons)


def _salt(cation: str, anion: str, c: float = 0.10):
    return salt_ph(_ion(cation), _ion(anion), c)


CLASSIFIED = [
    ("Na+", "Cl-", "neutral"), ("K+", "NO3-", "neutral"), ("K+", "ClO4-", "neutral"),
    ("Na+", "Br-", "neutral"), ("Ca2+", "Cl-", "neutral"), ("Ba2+", "NO3-", "neutral"),
    ("NH4+", "Cl-", "acidic"), ("NH4+", "NO3-", "acidic"), ("NH4+", "SO4", "acidic"),
    ("Al3+", "Cl-", "acidic"), ("Fe3+", "NO3-", "acidic"), ("anilinium", "Cl-", "acidic"),
    ("Na+", "acetate", "basic"), ("K+", "CN-", "basic"), ("Na+", "F-", "basic"),
    ("Na+", "CO3", "basic"), ("Na+", "PO4", "basic"), ("Na+", "NO2-", "basic"),
    ("Na+", "ClO-", "basic"), ("Na+", "benzoate", "basic"),
    ("Na+", "HCO3-", "basic"), ("Na+", "HPO4", "basic"), ("Na+", "H2PO4-", "acidic"),
    ("Na+", "HSO4-", "acidic"), ("K+", "hydrogen phthalate", "acidic"),
    ("NH4+", "acetate", "neutral"), ("NH4+", "CN-", "basic"), ("NH4+", "F-", "acidic"),
]


@pytest.mark.parametrize(("cation", "anion", "nature"), CLASSIFIED,
                         ids=[f"{c}-{a}" for c, a, _ in CLASSIFIED])
def test_textbook_classification(cation: str, anion: str, nature: str) -> None:
    assert _salt(cation, anion).nature == nature


def _weak(k: float, c: float) -> float:
    """x from x^2 / (c - x) = k (the quadratic, positive root)."""
    return (-k + math.sqrt(k * k + 4 * k * c)) / 2


def _amphiprotic(ka_low: float, ka_high: float, c: float) -> float:
    """pH of an amphiprotic salt: [H+] = sqrt((K1 K2 C + K1 Kw) / (K1 + C)), the
    textbook formula (from memory), K1 the step that forms it, K2 the one it loses."""
    return -math.log10(math.sqrt((ka_low * ka_high * c + ka_low * KW) / (ka_low + c)))


HAND_WORKED = [
    # 0.10 M sodium acetate: [OH-] = sqrt(Kb C), Kb = Kw / 10^-4.756
    ("Na+", "acetate", 14 + math.log10(math.sqrt(KW / 10**-4.756 * 0.10))),
    # 0.10 M ammonium chloride: [H+] = sqrt(Ka C)
    ("NH4+", "Cl-", -math.log10(math.sqrt(10**-9.245 * 0.10))),
    # 0.10 M sodium carbonate: first step only, quadratic in Kb1 = Kw / 10^-10.33
    ("Na+", "CO3", 14 + math.log10(_weak(KW / 10**-10.33, 0.10))),
    # 0.10 M potassium cyanide: quadratic in Kb = Kw / 10^-9.21
    ("K+", "CN-", 14 + math.log10(_weak(KW / 10**-9.21, 0.10))),
    # 0.10 M sodium hydrogen sulfate: quadratic in Ka2 = 10^-1.99 (a strong first step)
    ("Na+", "HSO4-", -math.log10(_weak(10**-1.99, 0.10))),
    # 0.10 M aluminium chloride: quadratic in the first hydrolysis, 10^-4.97
    ("Al3+", "Cl-", -math.log10(_weak(10**-4.97, 0.10))),
    # amphiprotic anions
    ("Na+", "HCO3-", _amphiprotic(10**-6.35, 10**-10.33, 0.10)),
    ("Na+", "H2PO4-", _amphiprotic(10**-2.15, 10**-7.20, 0.10)),
    ("Na+", "HPO4", _amphiprotic(10**-7.20, 10**-12.35, 0.10)),
    # a salt of a weak acid and a weak base: pH = (pKa(cation) + pKa(acid of the anion)) / 2
    ("NH4+", "acetate", (9.245 + 4.756) / 2),
    ("NH4+", "CN-", (9.245 + 9.21) / 2),
    ("NH4+", "F-", (9.245 + 3.17) / 2),
    ("Na+", "Cl-", 7.00),
]


@pytest.mark.parametrize(("cation", "anion", "ph"), HAND_WORKED,
                         ids=[f"{c}-{a}" for c, a, _ in HAND_WORKED])
def test_hand_worked_ph(cation: str, anion: str, ph: float) -> None:
    # 0.01: the hand formulas neglect water's own ions and the further steps.
    assert _salt(cation, anion).ph == pytest.approx(ph, abs=0.01)


def test_the_governing_ion_follows_the_larger_constant() -> None:
    assert _salt("NH4+", "CN-").governing == "cyanide"  # Kb 1.6e-5 > Ka 5.7e-10
    assert _salt("NH4+", "F-").governing == "ammonium"  # Ka 5.7e-10 > Kb 1.5e-11
    hco3 = _salt("Na+", "HCO3-")
    assert hco3.governing == "hydrogen carbonate"
    assert {(x.acts_as, round(x.pk, 2)) for x in hco3.strengths} == {("acid", 10.33),
                                                                   ("base", 7.65)}
    assert _salt("Na+", "HSO4-").governing == "hydrogen sulfate"
    assert _salt("NH4+", "acetate").governing is None  # Ka = Kb: neither
    assert _salt("Na+", "Cl-").governing is None
    assert "spectator" in _salt("Na+", "Cl-").reason


def test_stoichiometry_from_the_charges() -> None:
    r = _salt("Al3+", "SO4")
    assert (r.cations_per_formula, r.anions_per_formula) == (2, 3)
    assert _salt("Na+", "PO4").cations_per_formula == 3


pkas = s.floats(-1.0, 13.0)


@given(cation_pka=pkas, anion_pkas=s.lists(pkas, min_size=1, max_size=3),
       protons=s.integers(0, 3), c=s.floats(1e-4, 1.0))
def test_charge_balance_holds_at_the_salt_s_ph(cation_pka: float, anion_pkas: list[float],
                                               protons: int, c: float) -> None:
    """At the pH found, the charges computed independently from the species fractions
    (alpha_j = beta_j h^j / sum) balance: sum of positive = sum of negative."""
    steps = tuple(sorted(anion_pkas))
    p = min(protons, len(steps))
    # an anion whose most protonated form still carries -1 (as HSO4- does), so every
    # (steps, protons) drawn is a charged ion
    anion = Ion("A", p - len(steps) - 1, steps, p)
    cation = Ion("BH", 1, (cation_pka,), 1)
    r = salt_ph(cation, anion, c)
    h = 10.0 ** -r.ph
    nu_plus, nu_minus = r.cations_per_formula, r.anions_per_formula

    def charge_per_unit(pk: tuple[float, ...], top_charge: int) -> float:
        n = len(pk)
        # species with j protons: log beta_j = sum of the j highest pKa values
        logs = [sum(sorted(pk, reverse=True)[:j]) - j * r.ph for j in range(n + 1)]
        big = max(logs)
        weights = [10 ** (x - big) for x in logs]
        total = sum(weights)
        return sum(w / total * (top_charge - (n - j)) for j, w in enumerate(weights))

    anion_charge_fully_protonated = anion.charge + (len(steps) - p)
    positive = h + nu_plus * c * charge_per_unit((cation_pka,), 1)
    negative = KW / h - nu_minus * c * charge_per_unit(steps, anion_charge_fully_protonated)
    assert positive == pytest.approx(negative, rel=1e-6, abs=1e-12)
