"""A titrant in a solvent other than water is carried between temperatures with its
solvent's cubic expansion (issue 17), checked against the pharmacopoeial statement.

British Pharmacopoeia, Appendix I B, Perchloric Acid VS: "the volume used in the assay
becomes Vc = V[1 + 0.0011(t1 - t2)], where t1 is the temperature during
standardisation, t2 the temperature during the assay". The same amount of acid read in
V at t2 and in Vc at t1 gives N(t2) = N(t1) [1 + 0.0011 (t1 - t2)].
"""

from __future__ import annotations

import pytest

from prepbook.catalog import catalog
from prepbook.chem import corrections as c
from prepbook.errors import InvalidInput
from prepbook.lab.preparing import spec_expansion
from prepbook.records import as_data

ACETIC = c.Expansion(per_c=0.0011, solvent="glacial acetic acid", source="BP Appendix I B")


def test_perchloric_acid_from_25_to_20_c_is_the_pharmacopoeial_correction() -> None:
    """BP Appendix I B: standardized at 25 C, used at 20 C, the 0.1 M titrant is worth
    by hand 1 + 0.0011 x (25 - 20) = 1.0055 times as much: 0.10000 -> 0.100550."""
    assert c.normality_at_temperature(0.1, 25.0, 20.0, ACETIC) == pytest.approx(0.100550,
                                                                                 rel=1e-12)
    # Water would have given about 0.1 % only (Tanaka 2001: 998.2067 / 997.0470 = 1.001163).
    water = c.normality_at_temperature(0.1, 25.0, 20.0)
    assert water == pytest.approx(0.1001163, rel=1e-6)


def test_the_correction_runs_both_ways_and_is_nil_at_the_same_temperature() -> None:
    """BP Appendix I B, by hand: used warmer (20 -> 28 C) the titrant is weaker by
    0.0011 x 8 = 0.88 %: 0.1 -> 0.099120."""
    assert c.normality_at_temperature(0.1, 20.0, 28.0, ACETIC) == pytest.approx(0.099120,
                                                                                 rel=1e-12)
    assert c.normality_at_temperature(0.1, 22.5, 22.5, ACETIC) == 0.1


@pytest.mark.parametrize("gamma", [0.0, -0.0011, 0.05, float("nan")])
def test_an_impossible_coefficient_is_refused(gamma: float) -> None:
    with pytest.raises(InvalidInput, match="expansion coefficient"):
        c.normality_at_temperature(0.1, 25.0, 20.0, c.Expansion(gamma, "x", "y"))


def test_a_temperature_outside_the_range_is_refused() -> None:
    with pytest.raises(InvalidInput, match="outside 0-40 C"):
        c.normality_at_temperature(0.1, 25.0, 45.0, ACETIC)


def test_every_non_aqueous_spec_states_its_coefficient_and_source() -> None:
    """Each titrant spec in a solvent other than water carries the cubic coefficient of
    that solvent and where it comes from; the perchloric acid one is the pharmacopoeias'."""
    non_aqueous = [s for s in catalog().specs if s.solvent != "water"]
    assert non_aqueous, "the catalog has a non-aqueous titrant"
    for spec in non_aqueous:
        assert spec.expansion_per_c is not None and 0 < spec.expansion_per_c < 0.01
        assert spec.source_of("expansion_per_c")
    perchloric = catalog().find_spec("HClO4-0.1N")
    assert perchloric.solvent == "glacial acetic acid"
    assert perchloric.expansion_per_c == 0.0011  # BP Appendix I B, Perchloric Acid VS
    assert "Pharmacopoeia" in (perchloric.source_of("expansion_per_c") or "")


def test_aqueous_specs_use_the_water_density_formula() -> None:
    for spec in catalog().specs:
        if spec.solvent == "water":
            assert spec.expansion_per_c is None
            assert spec_expansion(as_data(spec)) is None


def test_a_spec_stored_before_the_coefficient_takes_the_catalogs() -> None:
    """A built-in spec copied into a database before the field existed (no
    expansion_per_c in its JSON) still gets its solvent's coefficient, never water's."""
    data = as_data(catalog().find_spec("HClO4-0.1N"))
    del data["expansion_per_c"]
    found = spec_expansion(data)
    assert found is not None and found.per_c == 0.0011
    assert found.solvent == "glacial acetic acid"


def test_a_non_aqueous_spec_without_a_coefficient_is_refused() -> None:
    with pytest.raises(InvalidInput, match="no cubic expansion coefficient"):
        spec_expansion({"code": "X-0.1N", "solvent": "methanol"})


def test_the_description_names_coefficient_solvent_and_source() -> None:
    assert ACETIC.describe() == ("glacial acetic acid's cubic expansion 0.0011 per C "
                                 "(BP Appendix I B)")


def test_an_aqueous_spec_with_a_coefficient_is_a_catalog_problem() -> None:
    """Water's expansion is its density formula; a coefficient on an aqueous spec would
    be a second, conflicting statement of it."""
    import msgspec

    from prepbook.catalog import check_catalog

    cat = catalog()
    naoh = cat.find_spec("NaOH-0.1N")
    bad = msgspec.structs.replace(naoh, expansion_per_c=2.1e-4)
    broken = msgspec.structs.replace(cat, specs=tuple(bad if s is naoh else s for s in cat.specs))
    assert any("NaOH-0.1N" in p and "leave expansion_per_c" in p
               for p in check_catalog(broken))


def test_a_builtin_spec_stored_before_the_solvent_takes_the_catalogs() -> None:
    data = as_data(catalog().find_spec("HClO4-0.1N"))
    del data["solvent"], data["expansion_per_c"]
    found = spec_expansion(data)
    assert found is not None and found.per_c == 0.0011
    assert found.solvent == "glacial acetic acid"


def test_a_labs_spec_stored_without_a_solvent_is_not_carried_as_water() -> None:
    """A lab's perchloric acid spec from before `spec add --solvent`: the catalog makes
    perchloric acid titrants only in glacial acetic acid, so the run is refused; an
    aqueous titrant's old spec stays aqueous."""
    with pytest.raises(InvalidInput, match="states no solvent.*glacial acetic acid"):
        spec_expansion({"code": "HClO4-0.05N-LAB", "solute": "HClO4"})
    assert spec_expansion({"code": "NaOH-0.5N-LAB", "solute": "NaOH"}) is None
