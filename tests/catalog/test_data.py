"""The built-in catalog loads, validates, and answers lookups.

Sources of the expected values are named beside each check. Lookup tests use spellings
a bench chemist types, not strings copied from the data files where avoidable.
"""

from __future__ import annotations

import subprocess
import sys

import pytest

from prepbook.catalog import (
    catalog,
    check_catalog,
    find_indicator,
    find_material,
    find_reagent,
    find_spec,
    indicators,
    load_catalog,
    materials,
    reagents,
    specs,
)
from prepbook.catalog.checks import check_samples
from prepbook.catalog.samples import load_samples, samples
from prepbook.errors import NotFound

# The spec codes the project brief requires to exist (exact spelling).
REQUIRED_SPECS = (
    "NaOH-0.1N",
    "NaOH-1N",
    "HCl-0.1N",
    "HCl-1N",
    "H2SO4-0.1N",
    "H2SO4-0.02N",
    "KMnO4-0.1N",
    "Na2S2O3-0.1N",
    "I2-0.1N",
    "AgNO3-0.1N",
    "EDTA-0.05M",
)


def test_packaged_catalog_passes_its_own_validation() -> None:
    """Loading validates; check it again explicitly so a skipped check would show."""
    assert check_catalog(catalog()) == ()
    fresh = load_catalog()  # uncached path, same data
    assert [m.code for m in fresh.materials] == [m.code for m in materials()]
    assert check_samples(samples(), catalog()) == ()
    assert load_samples() == samples()  # uncached path, same data


@pytest.mark.parametrize("code", REQUIRED_SPECS)
def test_required_spec_codes_exist(code: str) -> None:
    assert find_spec(code).code == code


def test_spec_code_names_solute_and_strength() -> None:
    """A spec's code reads "<solute>-<nominal><unit>", so the label and record agree."""
    for s in specs():
        assert s.code == f"{s.solute}-{s.nominal:g}{s.unit}"


def test_specs_carry_pharmacopoeial_acceptance_defaults() -> None:
    """European Pharmacopoeia 4.2.2: RSD not over 0.2 %; within 10 % of the stated strength.
    Three replicates: common practice, no source."""
    for s in specs():
        assert s.max_rsd_percent == 0.2
        assert (s.factor_low, s.factor_high) == (0.90, 1.10)
        assert s.min_replicates == 3
        assert "4.2.2" in (s.source_of("max_rsd_percent") or "")
        assert "4.2.2" in (s.source_of("factor_low") or "")
        assert s.source_of("min_replicates") == "common practice, no source"


def test_every_spec_default_names_a_source() -> None:
    for s in specs():
        for key in ("drift_limit_percent", "restandardize_days", "shelf_life_days", "storage"):
            assert s.source_of(key), (s.code, key)
        assert s.hazard.source


def test_sodium_hydroxide_is_restandardized_more_often_than_hydrochloric_acid() -> None:
    """Hydroxide takes up CO2 (DESIGN: solutions drift); acid is stable.
    Common practice, no source."""
    assert find_spec("NaOH-0.1N").restandardize_days < find_spec("HCl-0.1N").restandardize_days


def test_light_sensitive_titrants_are_stored_dark() -> None:
    """Permanganate, silver nitrate, iodine, thiosulfate: amber glass, dark. From memory."""
    for code in ("KMnO4-0.1N", "AgNO3-0.1N", "I2-0.1N", "Na2S2O3-0.1N"):
        storage = find_spec(code).storage.lower()
        assert "amber" in storage and "dark" in storage, code
    assert "soda-lime" in find_spec("NaOH-0.1N").storage


@pytest.mark.parametrize(
    ("query", "code"),
    [
        ("KHP", "KHP"),
        ("khp", "KHP"),
        ("KHPh", "KHP"),
        ("Potassium Hydrogen Phthalate", "KHP"),
        ("potassium  hydrogen phthalate ", "KHP"),
        ("KHC8H4O4", "KHP"),
        ("khc8h4o4", "KHP"),
        ("THAM", "TRIS"),
        ("tromethamine", "TRIS"),
        ("sodium carbonate", "Na2CO3"),
        ("na2co3", "Na2CO3"),
        ("borax", "borax"),
        ("Na2B4O7.10H2O", "borax"),
        ("Na2B4O7·10H2O", "borax"),
        ("sodium thiosulfate", "Na2S2O3"),
        ("Na2S2O3 * 5H2O", "Na2S2O3"),
        ("EDTA", "EDTA"),
        ("disodium edetate dihydrate", "EDTA"),
        ("ARSENIC TRIOXIDE", "As2O3"),
        ("ceric sulfate", "Ce(SO4)2"),
    ],
)
def test_find_material_by_code_formula_name_or_alias(query: str, code: str) -> None:
    assert find_material(query).code == code


def test_unknown_material_names_close_matches() -> None:
    with pytest.raises(NotFound) as err:
        find_material("KHPP")
    assert "KHP" in str(err.value)
    assert isinstance(err.value, LookupError)


def test_unknown_spec_names_close_matches() -> None:
    with pytest.raises(NotFound, match="NaOH-0.1N"):
        find_spec("NaOH-0.1")


def test_find_spec_is_case_and_space_insensitive() -> None:
    assert find_spec(" naoh-0.1n ").code == "NaOH-0.1N"


def test_find_reagent_and_indicator() -> None:
    assert find_reagent("concentrated hydrochloric acid").code == "HCl-conc"
    assert find_reagent("H2SO4").code == "H2SO4-conc"
    assert find_indicator("Phenolphthalein").name == "phenolphthalein"
    assert find_indicator("EBT").name == "eriochrome black T"
    assert find_indicator("Mohr").name == "potassium chromate"
    assert find_indicator("ferric alum").name == "ferric ammonium sulfate"
    with pytest.raises(NotFound):
        find_indicator("litmus paper")


@pytest.mark.parametrize(
    ("name", "low", "high"),
    [
        # AOAC Official Methods, appendix on indicators.
        ("bromocresol green", 3.8, 5.4),
        ("bromothymol blue", 6.0, 7.6),
        # From memory (REFERENCES.md marks them so).
        ("methyl orange", 3.1, 4.4),
        ("methyl red", 4.4, 6.2),
        ("phenolphthalein", 8.2, 10.0),
        ("thymol blue", 8.0, 9.6),
    ],
)
def test_indicator_transition_ranges(name: str, low: float, high: float) -> None:
    assert find_indicator(name).ph_range == (low, high)


def test_only_acid_base_indicators_have_a_ph_range() -> None:
    for ind in indicators():
        if ind.kind != "acid-base":
            assert ind.ph_range is None, ind.name
    starch = find_indicator("starch")
    with pytest.raises(NotFound):
        starch.covers(7.0)
    assert find_indicator("phenolphthalein").covers(8.2)
    assert not find_indicator("phenolphthalein").covers(8.19)


def test_specs_use_the_indicators_the_brief_lists() -> None:
    used = {find_indicator(s.indicator).name for s in specs()}
    used |= {
        find_indicator(r.indicator).name for m in materials() for r in m.reactions if r.indicator
    }
    for name in (
        "starch",
        "ferroin",
        "potassium chromate",
        "ferric ammonium sulfate",
        "eriochrome black T",
        "murexide",
        "self-indicating (permanganate)",
    ):
        assert name in used, name
    assert find_indicator("potentiometric").kind == "instrumental"


def test_weighed_forms_protonation_state() -> None:
    """The weighed form's protons (pKa values: REFERENCES.md; NIST constants as tabulated
    in a standard analytical textbook, TRIS from memory)."""
    khp = find_material("KHP")
    assert khp.pka == (2.946, 5.409) and khp.initial_protons == 1  # HP-, one of two
    carbonate = find_material("Na2CO3")
    assert carbonate.pka == (6.35, 10.33) and carbonate.initial_protons == 0  # CO3 2-
    tris = find_material("TRIS")
    assert tris.pka == (8.07,) and tris.initial_protons == 0 and tris.acid_base == "base"
    borax = find_material("borax")
    # B4O7 2- + 5 H2O -> 2 B(OH)4- + 2 B(OH)3: four boric-acid units, two protonated.
    assert (borax.acid_units, borax.initial_protons, borax.pka) == (4, 2, (9.24,))


def test_reagent_pka_values() -> None:
    """Acetic acid 4.756, ammonium 9.245: NIST critically selected constants as tabulated
    in a standard analytical textbook (REFERENCES.md)."""
    assert find_reagent("glacial acetic acid").pka == (4.756,)
    assert find_reagent("ammonia 28 %").pka == (9.245,)


def test_every_material_with_a_value_names_its_source() -> None:
    for m in materials():
        if m.drying:
            assert m.source_of("drying"), m.code
        if m.density_g_per_cm3 is not None:
            assert m.source_of("density"), m.code
        if m.pka:
            assert m.source_of("pka"), m.code
        assert m.hazard.source
        for r in m.reactions:
            assert r.source, (m.code, r.name)


def test_khp_drying_and_density() -> None:
    """KHP 120 C 2 h (from memory); density about 1.636 g/cm3 (REFERENCES.md, from memory)."""
    khp = find_material("KHP")
    assert khp.density_g_per_cm3 == 1.636
    assert "120 C" in (khp.drying or "") and "2 h" in (khp.drying or "")


def test_hazards_expand_codes_to_label_text() -> None:
    """GHS wording (UN GHS Annex 3, from memory): H314 and the corrosion pictogram."""
    naoh = find_material("NaOH").hazard
    assert naoh.signal_word == "Danger"
    assert "H314 Causes severe skin burns and eye damage." in naoh.statements
    assert naoh.pictograms == ("GHS05 corrosion",)
    assert naoh.statement_codes == ("H290", "H314")
    assert not find_material("NaCl").hazard.classified


def test_concentrate_cautions_and_toxic_standards() -> None:
    """Owner's safety rule: add acid to water, fume hood, defer to the SDS."""
    for g in reagents():
        text = " ".join(g.cautions).lower()
        assert "safety data sheet" in text, g.code
        assert "eye" in text, g.code
    sulfuric = " ".join(find_reagent("H2SO4-conc").cautions).lower()
    assert "acid to water" in sulfuric and "heat" in sulfuric and "fume hood" in sulfuric
    for code in ("As2O3", "K2Cr2O7"):
        assert find_material(code).hazard.signal_word == "Danger"
        assert any("H350" in s for s in find_material(code).hazard.statements)


def test_dilute_solution_hazard_is_lighter_than_the_solid() -> None:
    """0.1 N NaOH is not classified corrosive to skin, 1 N and the solid are (from memory;
    concentration limits of the harmonised classification)."""
    assert "H314" not in find_spec("NaOH-0.1N").hazard.statement_codes
    assert "H314" in find_spec("NaOH-1N").hazard.statement_codes


def test_cerium_titrant_says_which_salt_it_weighs() -> None:
    ce = find_material("Ce(SO4)2")
    assert ce.formula == "Ce(SO4)2(H2O)4"
    assert "ammonium cerium(iv) sulfate" in ce.note.lower()


def test_importing_the_catalog_reads_nothing_heavy() -> None:
    """Fast start-up: the loader imports tomllib and periodictable only when data is used."""
    code = (
        "import sys, prepbook.catalog; "
        "print(sorted(m for m in ('periodictable', 'tomllib', 'difflib') if m in sys.modules))"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    ).stdout
    assert out.strip() == "[]"
