"""`lab.preparing.titrant_expansion`: the one path from what a user states (a spec, a
solvent, a coefficient with its source) to how a titrant is carried between
temperatures (issue 17).

British Pharmacopoeia, Appendix I B, Perchloric Acid VS: Vc = V[1 + 0.0011(t1 - t2)],
so 0.1 N at 25 C is 0.1 x (1 + 0.0011 x 5) = 0.100550 N at 20 C (by hand).
"""

from __future__ import annotations

import pytest

from prepbook.chem.corrections import normality_at_temperature
from prepbook.errors import InvalidInput
from prepbook.lab.preparing import catalog_solvent, known_solvents, titrant_expansion


def test_the_catalog_knows_glacial_acetic_acid_with_the_pharmacopoeias_coefficient() -> None:
    acetic = known_solvents()["glacial acetic acid"]
    assert acetic.per_c == 0.0011
    assert "British Pharmacopoeia, Appendix I B" in acetic.source
    assert "water" not in known_solvents()


def test_perchloric_acid_is_made_only_in_acetic_acid_sodium_hydroxide_in_water() -> None:
    assert catalog_solvent("HClO4") == ("glacial acetic acid", ("HClO4-0.1N",))
    assert catalog_solvent("NaOH") is None
    assert catalog_solvent("no-such-solute") is None


def test_a_solvent_stated_by_name_carries_with_its_coefficient() -> None:
    acetic = titrant_expansion(solvent="glacial acetic acid", solute="HClO4")
    assert acetic is not None
    assert normality_at_temperature(0.1, 25.0, 20.0, acetic) == pytest.approx(0.100550,
                                                                              rel=1e-12)
    assert titrant_expansion(spec="HClO4-0.1N") == acetic


def test_water_and_an_aqueous_titrant_unstated_are_waters_density() -> None:
    assert titrant_expansion(solvent="Water", solute="HClO4") is None
    assert titrant_expansion(solute="NaOH") is None
    assert titrant_expansion() is None


def test_a_coefficient_stated_is_kept_with_its_source() -> None:
    own = titrant_expansion(solvent="ethanol", per_c="0.0011", source="from memory")
    assert own is not None
    assert (own.solvent, own.per_c, own.source) == ("ethanol", 0.0011, "from memory")


@pytest.mark.parametrize("stated", [
    {"solute": "HClO4"},
    {"solvent": "dioxane"},
    {"solvent": "dioxane", "per_c": "0.001"},
    {"solvent": "dioxane", "per_c": "0", "source": "x"},
    {"solvent": "dioxane", "per_c": "0.01", "source": "x"},
    {"per_c": "0.001", "source": "x"},
    {"solvent": "water", "per_c": "0.001", "source": "x"},
    {"spec": "HClO4-0.1N", "solvent": "water"},
    {"solvent": "  "},
    {"solvent": "dioxane", "per_c": "0.001", "source": "  "},
])
def test_what_cannot_be_carried_is_refused(stated: dict[str, str]) -> None:
    with pytest.raises(InvalidInput):
        titrant_expansion(**stated)
