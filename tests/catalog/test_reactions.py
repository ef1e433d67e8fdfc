"""n per reaction, checked three independent ways.

1. Every equation in the catalog balances in atoms and charge (periodictable parses the
   species; nothing is taken from the stored n).
2. n follows from those balanced equations: coefficients of the partner species times
   what each partner exchanges, over the standard's coefficient.
3. For redox, n follows from the change of oxidation state written here by hand
   (textbook oxidation states, from memory).
And the product M/n is checked against pharmacopoeial equivalence statements
("1 mL of 0.1 N titrant is equivalent to x mg of standard"), from memory.
"""

from __future__ import annotations

import re
from collections import Counter
from fractions import Fraction

import periodictable
import pytest

from prepbook.catalog import find_material, materials, reaction_for_pair
from prepbook.errors import NotFound

_TERM = re.compile(r"(?:(\d+)\s+)?(\S+)")
_CHARGE = re.compile(r"(.+?)\^(\d*)([+-])")


def _species(token: str) -> tuple[str, Counter[str], int]:
    """(formula, atoms, charge) of one species such as "C2O4^2-" or "e^-"."""
    m = _CHARGE.fullmatch(token)
    formula, charge = token, 0
    if m:
        formula = m.group(1)
        charge = int(m.group(2) or 1) * (1 if m.group(3) == "+" else -1)
    if formula == "e":
        return formula, Counter(), charge
    atoms = Counter({str(el): int(k) for el, k in periodictable.formula(formula).atoms.items()})
    return formula, atoms, charge


def _side(text: str) -> list[tuple[int, str, Counter[str], int]]:
    out = []
    for term in text.split(" + "):
        m = _TERM.fullmatch(term.strip())
        assert m, term
        formula, atoms, charge = _species(m.group(2))
        out.append((int(m.group(1) or 1), m.group(2), atoms, charge))
    return out


def _parse(equation: str) -> tuple[list, list]:
    left, right = equation.split(" -> ")
    return _side(left), _side(right)


def _coefficient(equation: str, token: str) -> int:
    left, right = _parse(equation)
    for coeff, tok, _, _ in left + right:
        if tok == token:
            return coeff
    raise AssertionError(f"{token} not in {equation}")


ALL_REACTIONS = [(m.code, r) for m in materials() for r in m.reactions]


@pytest.mark.parametrize(
    ("code", "reaction"), ALL_REACTIONS, ids=[f"{c}-{r.name}" for c, r in ALL_REACTIONS]
)
def test_every_catalog_equation_balances(code: str, reaction) -> None:
    left, right = _parse(reaction.equation)
    assert total(left) == total(right), reaction.equation


def total(side: list) -> tuple[Counter[str], int]:
    """Atoms and charge of one side of an equation, as ``_side`` parsed it."""
    atoms: Counter[str] = Counter()
    charge = 0
    for coeff, _, a, q in side:
        for el, k in a.items():
            atoms[el] += coeff * k
        charge += coeff * q
    return atoms, charge


# (material, reaction): (species of the material, partner species, what one partner
# species exchanges: protons, electrons or 1 for a 1:1 ion). Partner "e^-" means a
# half-reaction: n = electrons per material species.
FROM_EQUATION = {
    ("KHP", "acid-base"): ("HC8H4O4^-", "OH^-", 1),
    ("KHP", "acid-base-nonaqueous"): ("KHC8H4O4", "HClO4", 1),
    ("Na2CO3", "acid-base"): ("Na2CO3", "HCl", 1),
    ("Na2CO3", "acid-base-first"): ("Na2CO3", "HCl", 1),
    ("TRIS", "acid-base"): ("(HOCH2)3CNH2", "H^+", 1),
    ("benzoic-acid", "acid-base"): ("C6H5COOH", "OH^-", 1),
    ("sulfamic-acid", "acid-base"): ("NH2SO3H", "OH^-", 1),
    ("borax", "acid-base"): ("Na2B4O7(H2O)10", "HCl", 1),
    # 2 MnO4- + 5 C2O4 2- + 16 H+ -> 2 Mn2+ + 10 CO2 + 8 H2O; each MnO4- takes 5 e-.
    ("Na2C2O4", "redox"): ("C2O4^2-", "MnO4^-", 5),
    ("Na2C2O4", "redox-cerium"): ("C2O4^2-", "Ce^4+", 1),
    # Iodometric: each I- gives up one electron on its way to I2.
    ("K2Cr2O7", "redox-iodometric"): ("Cr2O7^2-", "I^-", 1),
    ("KIO3", "redox-iodometric"): ("IO3^-", "I2", 2),
    ("As2O3", "redox-iodine"): ("As2O3", "I2", 2),
    ("As2O3", "redox-permanganate"): ("As2O3", "MnO4^-", 5),
    ("As2O3", "redox-cerium"): ("As2O3", "Ce^4+", 1),
    ("NaCl", "precipitation"): ("Cl^-", "Ag^+", 1),
    ("CaCO3", "complexation"): ("Ca^2+", "C10H14N2O8^2-", 1),
    ("Zn", "complexation"): ("Zn^2+", "C10H14N2O8^2-", 1),
    ("NaOH", "acid-base"): ("OH^-", "H^+", 1),
    ("KOH", "acid-base"): ("OH^-", "H^+", 1),
    ("HCl", "acid-base"): ("H^+", "OH^-", 1),
    ("H2SO4", "acid-base"): ("H2SO4", "OH^-", 1),
    ("HClO4", "acid-base"): ("HClO4", "CH3COOH", 1),
    ("KMnO4", "redox-acid"): ("MnO4^-", "e^-", 1),
    ("KMnO4", "redox-neutral"): ("MnO4^-", "e^-", 1),
    ("Na2S2O3", "redox"): ("S2O3^2-", "e^-", 1),
    ("I2", "redox"): ("I2", "e^-", 1),
    ("Ce(SO4)2", "redox"): ("Ce^4+", "e^-", 1),
    ("AgNO3", "precipitation"): ("Ag^+", "Cl^-", 1),
    ("NH4SCN", "precipitation"): ("SCN^-", "Ag^+", 1),
    ("EDTA", "complexation"): ("C10H14N2O8^2-", "Zn^2+", 1),
    ("Ba(OH)2", "acid-base"): ("Ba(OH)2", "H^+", 1),
    ("Ca(OH)2", "acid-base"): ("Ca(OH)2", "H^+", 1),
}


def test_every_reaction_has_an_equation_derivation() -> None:
    assert {(c, r.name) for c, r in ALL_REACTIONS} == set(FROM_EQUATION)


@pytest.mark.parametrize(("code", "name"), sorted(FROM_EQUATION))
def test_n_follows_from_the_balanced_equation(code: str, name: str) -> None:
    """Stoichiometry of the published reaction equations, as written in the catalog
    (their balance is checked above)."""
    reaction = find_material(code).reaction(name=name)
    own, partner, per_partner = FROM_EQUATION[(code, name)]
    expected = Fraction(
        _coefficient(reaction.equation, partner) * per_partner,
        _coefficient(reaction.equation, own),
    )
    assert reaction.n == float(expected)


# Oxidation-state bookkeeping (textbook oxidation states, from memory):
# (material, reaction): (atoms changing per formula unit, state before, state after).
OXIDATION = {
    ("KMnO4", "redox-acid"): (1, 7, 2),  # MnO4- -> Mn2+ in acid: n = 5
    ("KMnO4", "redox-neutral"): (1, 7, 4),  # MnO4- -> MnO2: n = 3
    ("Na2C2O4", "redox"): (2, 3, 4),  # C2O4 2- -> 2 CO2: n = 2
    ("Na2C2O4", "redox-cerium"): (2, 3, 4),
    ("K2Cr2O7", "redox-iodometric"): (2, 6, 3),  # Cr2O7 2- -> 2 Cr3+: n = 6
    ("KIO3", "redox-iodometric"): (1, 5, -1),  # IO3- -> (I2 ->) I- after thiosulfate: n = 6
    ("As2O3", "redox-iodine"): (2, 3, 5),  # As(III) -> As(V): n = 4
    ("As2O3", "redox-permanganate"): (2, 3, 5),
    ("As2O3", "redox-cerium"): (2, 3, 5),
    ("Na2S2O3", "redox"): (2, Fraction(2), Fraction(5, 2)),  # S2O3 2- -> 1/2 S4O6 2-: n = 1
    ("I2", "redox"): (2, 0, -1),  # I2 -> 2 I-: n = 2
    ("Ce(SO4)2", "redox"): (1, 4, 3),  # Ce4+ -> Ce3+: n = 1
}


@pytest.mark.parametrize(("code", "name"), sorted(OXIDATION))
def test_redox_n_equals_the_change_of_oxidation_state(code: str, name: str) -> None:
    atoms, before, after = OXIDATION[(code, name)]
    assert find_material(code).reaction(name=name).n == float(abs(atoms * (after - before)))


def test_every_redox_reaction_has_an_oxidation_state_check() -> None:
    redox = {(c, r.name) for c, r in ALL_REACTIONS if r.kind == "redox"}
    assert redox == set(OXIDATION)


# Pharmacopoeial equivalence statements, from memory: "1 mL of 0.1 N <titrant> is
# equivalent to x mg of <standard>" (0.05 M for EDTA). x = 0.1 * M / n (mg per mL), so
# these check the formula mass and n together. Tolerance: half a unit in the last digit
# quoted, plus the atomic-weight uncertainty (periodictable's abridged values).
EQUIVALENCE_MG_PER_ML = [
    ("KHP", "NaOH", 0.1, "20.42"),
    ("Na2CO3", "HCl", 0.1, "5.300"),
    ("TRIS", "HCl", 0.1, "12.11"),
    ("borax", "HCl", 0.1, "19.07"),
    ("benzoic-acid", "NaOH", 0.1, "12.21"),
    ("Na2C2O4", "KMnO4", 0.1, "6.700"),
    ("KIO3", "Na2S2O3", 0.1, "3.567"),
    ("K2Cr2O7", "Na2S2O3", 0.1, "4.903"),
    ("As2O3", "I2", 0.1, "4.946"),
    ("NaCl", "AgNO3", 0.1, "5.844"),
    ("Zn", "EDTA", 0.05, "3.269"),
    ("CaCO3", "EDTA", 0.05, "5.004"),
]


def _half_last_digit(text: str) -> float:
    decimals = len(text.split(".")[1]) if "." in text else 0
    return 0.5 * 10.0**-decimals


@pytest.mark.parametrize(("standard", "titrant", "strength", "mg"), EQUIVALENCE_MG_PER_ML)
def test_equivalence_statements(standard: str, titrant: str, strength: float, mg: str) -> None:
    std = find_material(standard)
    rx, _ = reaction_for_pair(std, find_material(titrant))
    f = periodictable.formula(std.formula)
    u_mass = sum(k * el._mass_unc for el, k in f.atoms.items())
    computed = strength * f.mass / rx.n
    tol = _half_last_digit(mg) + strength * u_mass / rx.n
    assert computed == pytest.approx(float(mg), abs=tol)


def test_carbonate_n_depends_on_the_endpoint() -> None:
    """Na2CO3: 2 to the CO2 endpoint (methyl orange), 1 to the first (phenolphthalein)."""
    na2co3 = find_material("Na2CO3")
    second = na2co3.reaction(name="acid-base")
    first = na2co3.reaction(name="acid-base-first")
    assert (second.n, second.indicator) == (2.0, "methyl orange")
    assert (first.n, first.indicator) == (1.0, "phenolphthalein")
    assert second.protons == second.n
    assert na2co3.reaction() == second  # the primary reaction is the CO2 endpoint


def test_reaction_lookup_refuses_what_the_material_lacks() -> None:
    with pytest.raises(NotFound, match="acid-base"):
        find_material("KHP").reaction(kind="redox")
    with pytest.raises(NotFound):
        find_material("KMnO4").reaction(name="redox-alkaline")
    assert find_material("KMnO4").reaction(kind="redox").name == "redox-acid"


@pytest.mark.parametrize(
    ("standard", "titrant", "std_reaction", "titrant_reaction"),
    [
        ("KHP", "NaOH", "acid-base", "acid-base"),
        ("KHP", "KOH", "acid-base", "acid-base"),  # no reaction names KOH: first acid-base
        ("KHP", "HClO4", "acid-base-nonaqueous", "acid-base"),
        ("Na2CO3", "HCl", "acid-base", "acid-base"),
        ("Na2CO3", "H2SO4", "acid-base", "acid-base"),
        ("Na2C2O4", "KMnO4", "redox", "redox-acid"),  # permanganate means redox in acid
        ("Na2C2O4", "Ce(SO4)2", "redox-cerium", "redox"),
        ("As2O3", "I2", "redox-iodine", "redox"),
        ("As2O3", "KMnO4", "redox-permanganate", "redox-acid"),
        ("KIO3", "Na2S2O3", "redox-iodometric", "redox"),
        ("NaCl", "AgNO3", "precipitation", "precipitation"),
        ("Zn", "EDTA", "complexation", "complexation"),
    ],
)
def test_reaction_for_pair(standard: str, titrant: str, std_reaction: str, titrant_reaction: str):
    std_rx, t_rx = reaction_for_pair(find_material(standard), find_material(titrant))
    assert std_rx.name == std_reaction
    assert t_rx is not None and t_rx.name == titrant_reaction
    assert std_rx.kind == t_rx.kind


def test_reaction_for_pair_without_titrant_is_the_standards_primary() -> None:
    khp = find_material("KHP")
    assert reaction_for_pair(khp, None) == (khp.reactions[0], None)


@pytest.mark.parametrize(
    ("standard", "titrant"),
    [
        ("KHP", "HCl"),  # an acid does not standardize an acid
        ("borax", "NaOH"),  # nor a base a base
        ("NaCl", "KMnO4"),  # no redox reaction at all
        ("Na2C2O4", "Na2S2O3"),  # a reductant against a reductant
    ],
)
def test_reaction_for_pair_refuses_nonsense(standard: str, titrant: str) -> None:
    with pytest.raises(NotFound):
        reaction_for_pair(find_material(standard), find_material(titrant))


def test_edta_convention_is_one_to_one_in_molarity() -> None:
    """EDTA: 1 mol per mol of metal; its spec is in M so normality equals molarity."""
    from prepbook.catalog import find_spec

    spec = find_spec("EDTA-0.05M")
    assert spec.unit == "M"
    assert find_material(spec.solute).reaction(name=spec.reaction_name).n == 1.0
    for metal in ("Zn", "CaCO3"):
        std_rx, _ = reaction_for_pair(find_material(metal), find_material("EDTA"))
        assert std_rx.n == 1.0
