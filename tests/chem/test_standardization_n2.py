"""A direct standardization whose reaction has n other than 1, worked by hand.

Sodium carbonate titrated with hydrochloric acid to the second endpoint (methyl
orange): CO3^2- + 2 H+ -> H2O + CO2, n = 2 eq/mol (the balanced equation; USP/Ph. Eur.
state each 52.99 mg of Na2CO3 is equivalent to 1 mL of 1 M HCl, from memory:
105.988 / 2 = 52.994). M(Na2CO3) with the atomic weights of CIAAW 2021
(Na 22.98976928, conventional C 12.011, O 15.999) = 45.97953856 + 12.011 + 47.997 =
105.98754 g/mol.
"""

from __future__ import annotations

import pytest

from prepbook.chem import standardization as st
from prepbook.rules import evaluation as ev

CARBONATE = st.PrimaryStandard("sodium carbonate", 105.98754, 0.0008, 2.0)


def test_carbonate_to_the_second_endpoint_counts_two_equivalents_per_mole() -> None:
    result = st.direct(CARBONATE, [(0.2650, 24.85), (0.2712, 25.44)])
    # by hand: N = 1000 m n / (M V)
    #   1000 x 0.2650 x 2 = 530.0; 105.98754 x 24.85 = 2633.7904; 530.0 / 2633.7904 = 0.2012309
    #   1000 x 0.2712 x 2 = 542.4; 105.98754 x 25.44 = 2696.3230; 542.4 / 2696.3230 = 0.2011628
    #   mean (0.2012309 + 0.2011628) / 2 = 0.2011969
    assert [r.normality for r in result.replicates] == pytest.approx([0.2012309, 0.2011628],
                                                                    abs=1e-7)
    assert result.normality == pytest.approx(0.2011969, abs=1e-7)


def test_the_catalogs_reaction_gives_n_2_for_carbonate_with_hydrochloric_acid() -> None:
    """The same standardization through the evaluation the runs use, the reaction (and n)
    chosen from the catalog: 0.2650 g, 24.85 mL -> 0.20123 eq/L as above (the catalog's
    molar mass may differ from 105.98754 in the fifth figure: atomic-weight editions)."""
    e = ev.evaluate(ev.Standardization(
        readings=(ev.Reading(0.2650, 24.85, "0.2650", "24.85"),),
        titrant="HCl", standard=ev.Weighed("Na2CO3", 1.0)))
    assert e.standard is not None and e.standard.n_eq_per_mol == 2
    assert e.normality == pytest.approx(0.2012309, rel=2e-5)
    # equivalent weight by hand: 105.98754 / 2 = 52.99377 g/eq (USP's 52.99 mg per mL of 1 M)
    assert e.standard.equivalent_weight_g_per_eq == pytest.approx(52.99377, rel=2e-5)
