"""The one evaluation of a standardization, checked against published and hand-worked values.

Sources: EURACHEM/CITAC CG4 (3rd ed., 2012) Example A2 (0.3888 g KHP, 18.64 mL of NaOH,
c = 0.10214 mol/L; purity 1.0 +/- 0.0005 rectangular, u = 0.00029; balance linearity
+/- 0.15 mg rectangular, counted twice); NIST IR 6969 SOP 2 (air buoyancy, KHP density
1.636 g/cm3 from memory); the CIPM water density (Tanaka et al. 2001: 998.2067 kg/m3 at
20 C, 997.0470 at 25 C); USP "each 52.99 mg of sodium carbonate is equivalent to 1 mL of
1 N" (from memory); N1 V1 = N2 V2 (definition).
"""

from __future__ import annotations

import math
from datetime import date

import pytest

from prepbook.errors import InvalidInput, NotFound
from prepbook.rules.acceptance import AcceptanceRules
from prepbook.rules.evaluation import (
    Judgement,
    Reading,
    Reference,
    Standardization,
    Weighed,
    evaluate,
)

A2 = Reading(amount=0.3888, volume_ml=18.64, amount_text="0.3888", volume_text="18.64")


def _reading(mass: float, volume: float) -> Reading:
    return Reading(amount=mass, volume_ml=volume, amount_text=f"{mass}", volume_text=f"{volume}")


def _khp(*readings: Reading, **kw: object) -> Standardization:
    fields: dict = {"readings": readings or (A2,), "titrant": "NaOH",
                    "standard": Weighed(material="KHP", purity_fraction=1.0)}
    fields.update(kw)
    return Standardization(**fields)


def _judged(nominal: float = 0.1, unit: str = "N", **kw: object) -> Judgement:
    return Judgement(rules=AcceptanceRules(), nominal=nominal, unit=unit,
                     run_date=date(2026, 12, 1), **kw)  # type: ignore[arg-type]


def test_cg4_a2_normality_and_its_defaults() -> None:
    """CG4 A2: 0.3888 g KHP (P = 1.0) in 18.64 mL -> 0.10214 mol/L (n = 1, so eq/L)."""
    e = evaluate(_khp())
    assert round(e.normality, 5) == 0.10214
    assert e.normality_20c == e.normality  # titrated at 20 C
    assert e.titrant == "NaOH" and e.titrant_n_eq_per_mol == 1
    assert e.standard is not None and e.standard.code == "KHP"
    assert e.standard.n_eq_per_mol == 1 and e.reaction == "acid-base"
    assert e.standard.equivalent_weight_g_per_eq == e.standard.molar_mass_g_per_mol
    # every default the run does not record is stated, in this order
    assert e.notes == (
        "no burette tolerance on record: +/-0.05 mL (Class A 50 mL) assumed",
        "purity uncertainty not on record: +/-0.05 % assumed",
        "no balance tolerance on record: +/-0.15 mg linearity assumed",
    )
    assert e.factor is None and e.checks == () and e.verdict is None  # not judged


def test_cg4_a2_budget_rows_for_purity_and_mass() -> None:
    """CG4 A2: purity +/-0.0005 rectangular -> u = 0.0005/sqrt 3 = 0.000288675 (the guide
    rounds to 0.00029); one net mass by difference, linearity 0.15 mg rectangular counted
    twice -> u = sqrt 2 x 0.15 mg / sqrt 3 = 0.122474 mg (hand-worked)."""
    e = evaluate(_khp())
    rows = {line.symbol: line for line in e.budget}
    assert rows["P"].value == 1.0
    assert rows["P"].u == pytest.approx(0.000288675, rel=1e-5)
    assert round(rows["P"].u, 5) == 0.00029
    assert rows["m"].value == 0.3888
    assert rows["m"].u == pytest.approx(0.000122474, rel=1e-5)
    assert sum(line.share_percent for line in e.budget) == pytest.approx(100.0)


def test_a_given_purity_uncertainty_replaces_the_default() -> None:
    """A certificate's own standard uncertainty is used as given, and no default is noted."""
    e = evaluate(_khp(standard=Weighed(material="KHP", purity_fraction=0.9998,
                                       u_purity_fraction=0.0001)))
    rows = {line.symbol: line for line in e.budget}
    assert rows["P"].u == 0.0001 and rows["P"].value == 0.9998
    assert not any("purity" in n for n in e.notes)
    # P enters linearly: 0.9998 x the A2 value (hand-worked)
    assert e.normality == pytest.approx(0.9998 * 0.3888 / 204.2212 / 18.64 * 1000, rel=2e-5)


def test_recorded_instruments_leave_no_default_notes() -> None:
    e = evaluate(_khp(standard=Weighed(material="KHP", purity_fraction=1.0,
                                       u_purity_fraction=0.00029),
                      balance_linearity_g=0.00015, burette_tolerance_ml=0.05))
    assert e.notes == ()


def test_buoyancy_by_nist_sop_2() -> None:
    """NIST IR 6969 SOP 2: 0.3888 g read, KHP 1.636 g/cm3, air 0.0012, weights 8.0 ->
    0.3888 x 0.99985 / 0.999266504 = 0.389027 g (hand-worked)."""
    e = evaluate(_khp(buoyancy="on"))
    assert e.replicates[0].true_mass_g == pytest.approx(0.389027, abs=1e-6)
    assert e.normality == pytest.approx(0.389027 / 204.2212 / 18.64 * 1000, rel=2e-5)


def test_buoyancy_of_a_substance_without_density() -> None:
    """Asked for on the command line, it is refused; a lab-wide setting notes it instead.
    (The catalog gives no density for hydrochloric acid, a liquid.)"""
    hcl = Weighed(material="HCl", purity_fraction=1.0)
    with pytest.raises(InvalidInput, match="density"):
        evaluate(_khp(standard=hcl, buoyancy="on"))
    e = evaluate(_khp(standard=hcl, buoyancy="if-known"))
    assert any("buoyancy not corrected" in n for n in e.notes)
    assert e.replicates[0].true_mass_g is None


def test_burette_capacity_refuses_a_reading_beyond_it() -> None:
    with pytest.raises(InvalidInput, match=r"replicate 2 .*41\.67 mL exceeds .*BUR-9 \(25 mL\)"):
        evaluate(_khp(A2, _reading(0.8596, 41.67), burette_capacity_ml=25.0, burette="BUR-9"))


def test_blank_not_below_a_reading_is_refused() -> None:
    with pytest.raises(InvalidInput, match="blank 20 mL is not smaller than replicate 1"):
        evaluate(_khp(blank_ml=20.0, blank_text="20"))


def test_every_replicate_excluded_is_refused() -> None:
    with pytest.raises(InvalidInput, match="every replicate would be excluded"):
        evaluate(_khp(A2, A2, excluded=frozenset({1, 2})))


def test_exactly_one_standard() -> None:
    ref = Reference(batch="B", run="R", normality_20c=0.1, u=None)
    with pytest.raises(InvalidInput, match="exactly one"):
        evaluate(_khp(reference=ref))
    with pytest.raises(InvalidInput, match="exactly one"):
        evaluate(_khp(standard=None))


def test_an_unpaired_standard_and_titrant_are_refused() -> None:
    """KHP has no redox reaction to standardize permanganate (catalog rule)."""
    with pytest.raises(NotFound, match="redox"):
        evaluate(_khp(titrant="KMnO4"))


def test_judged_run_factor_and_checks() -> None:
    """Factor = N(20 C) / nominal = 0.10214 / 0.1000 = 1.0214 (CG4 A2 value); one replicate
    fails the minimum of three (common practice, no source)."""
    e = evaluate(_khp(judgement=_judged()))
    assert e.factor is not None and round(e.factor, 4) == 1.0214
    names = {c.name: c for c in e.checks}
    assert not names["replicate-count"].passed
    assert names["factor-window"].passed
    assert e.verdict == "fail"


def test_judged_run_indicator_against_the_equivalence_ph() -> None:
    """1.9038 mmol KHP in 18.64 + 50 mL water = 0.02774 mol/L of phthalate at the end;
    pH = 7 + (pKa2 + log c) / 2 = 7 + (5.408 - 1.557) / 2 = 8.93 (weak-base salt formula,
    pKa2 of phthalic acid 5.408, from memory). Phenolphthalein (8.2-10) covers it; methyl
    orange does not. Without an indicator named, the reaction's own is used."""
    e = evaluate(_khp(judgement=_judged()))
    assert e.equivalence_ph == pytest.approx(8.93, abs=0.05)
    assert e.indicator == "phenolphthalein"
    assert {c.name: c.passed for c in e.checks}["indicator"] is True
    e = evaluate(_khp(judgement=_judged(indicator="methyl orange")))
    assert {c.name: c.passed for c in e.checks}["indicator"] is False
    e = evaluate(_khp(judgement=_judged(indicator="my own dye")))
    assert e.indicator == "my own dye"
    assert "indicator 'my own dye' is not in the catalog: not checked" in e.notes


def test_temperature_correction_to_20_c() -> None:
    """A dilute aqueous solution titrated at 25 C: N(20) = N(25) x rho(20)/rho(25) =
    N x 998.2067/997.0470 (CIPM formula values)."""
    e = evaluate(_khp(temperature_c=25.0))
    assert e.normality_20c / e.normality == pytest.approx(998.2067 / 997.0470, rel=1e-6)


def test_factor_of_a_molar_spec_divides_by_n() -> None:
    """0.2650 g Na2CO3 at 52.99 mg per meq (USP, from memory) = 5.0009 meq in 50.00 mL ->
    0.100019 N; sulfuric acid has n = 2, so 0.0500094 M, factor 1.000189 against 0.05 M."""
    s = Standardization(readings=(_reading(0.2650, 50.00),), titrant="H2SO4",
                        standard=Weighed(material="Na2CO3", purity_fraction=1.0),
                        judgement=_judged(nominal=0.05, unit="M"))
    e = evaluate(s)
    assert e.titrant_n_eq_per_mol == 2
    assert e.normality == pytest.approx(0.100019, rel=1e-4)
    assert e.factor == pytest.approx(1.000189, rel=1e-4)


def test_secondary_against_a_reference() -> None:
    """N1 V1 = N2 V2: 25.00 mL of 0.1000 N takes 24.50 mL -> 2.5/24.5 = 0.10204 eq/L; the
    reference is named in the notes, no mass enters."""
    ref = Reference(batch="NAOH-0001", run="R261201-1", normality_20c=0.1000, u=0.00008)
    s = Standardization(readings=(Reading(25.00, 24.50, "25.00", "24.50"),), titrant="HCl",
                        reference=ref, burette_tolerance_ml=0.05, judgement=_judged())
    e = evaluate(s)
    assert round(e.normality, 5) == 0.10204
    assert e.standard is None and e.equivalence_ph is None
    assert e.notes == ("no pipette tolerance on record: +/-0.03 mL (Class A 25 mL) assumed",
                       "reference NAOH-0001 at 0.10000 eq/L (20 C), u = 0.000080 eq/L "
                       "(0.080 %), from its run R261201-1")
    assert "min-weight" not in {c.name for c in e.checks}
    # the reference's own uncertainty is in the budget: u_rel 0.0008 (hand-worked)
    assert any(line.u_relative == pytest.approx(0.0008) for line in e.budget)


def test_excluded_replicate_stays_visible() -> None:
    e = evaluate(_khp(A2, A2, _reading(0.3888, 19.50), excluded=frozenset({3})))
    assert [r.excluded for r in e.replicates] == [False, False, True]
    assert e.n == 2 and round(e.normality, 5) == 0.10214


def test_input_and_output_are_frozen() -> None:
    e = evaluate(_khp())
    with pytest.raises(AttributeError):
        e.normality = 1.0  # type: ignore[misc]
    with pytest.raises(AttributeError):
        _khp().blank_ml = 1.0  # type: ignore[misc]
    assert math.isfinite(e.normality)
