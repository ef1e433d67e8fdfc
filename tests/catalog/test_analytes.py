"""The analyte catalog (analytes.toml): its equations balance, n follows from them, the
loader refuses bad entries naming the problem, and a titrant finds its method."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

import prepbook.catalog.loader as loader
from prepbook.catalog import CatalogDataError, find_material, load_catalog
from prepbook.catalog.sample_models import method_for
from prepbook.catalog.samples import analyte_titration, analytes, find_analyte, load_samples
from prepbook.errors import NotFound
from tests.catalog.test_reactions import _coefficient, _parse, total

DATA = Path(loader.__file__).with_name("data")
METHODS = [(a.code, m) for a in analytes() for m in a.methods]


@pytest.mark.parametrize(("code", "method"), METHODS, ids=[f"{c}-{m.name}" for c, m in METHODS])
def test_every_analyte_equation_balances(code: str, method) -> None:
    left, right = _parse(method.equation)
    assert total(left) == total(right), method.equation


# (analyte, method): the partner species whose coefficient gives n (H+/OH- per analyte,
# electrons per analyte, or 1 for a 1:1 ion), by hand from the balanced equations.
N_FROM_EQUATION = {
    ("acetic-acid", "with hydroxide"): ("OH^-", 1),
    ("H2SO4", "with hydroxide"): ("OH^-", 2),
    ("H3PO4", "to hydrogen phosphate"): ("OH^-", 2),
    ("H3PO4", "to dihydrogen phosphate"): ("OH^-", 1),
    ("NaOH", "with acid"): ("H^+", 1),
    ("NH3", "with acid"): ("H^+", 1),
    ("Na2CO3", "to carbon dioxide"): ("H^+", 2),
    ("Na2CO3", "to hydrogen carbonate"): ("H^+", 1),
    ("alkalinity", "to pH 4.5"): ("H^+", 2),
    ("HCl", "with hydroxide"): ("OH^-", 1),
    ("oxalate", "with permanganate"): ("e^-", 2),
    ("H2O2", "with permanganate"): ("e^-", 2),
    ("Fe2+", "with dichromate"): ("e^-", 1),
    ("Fe2+", "with cerium(IV)"): ("e^-", 1),
    ("ascorbic-acid", "with iodine"): ("e^-", 2),
}


@pytest.mark.parametrize(("code", "method"), METHODS, ids=[f"{c}-{m.name}" for c, m in METHODS])
def test_n_follows_from_the_equation(code: str, method) -> None:
    if method.kind in ("precipitation", "complexation"):
        assert method.n == 1  # 1:1 with Ag+ or EDTA (the catalog's convention)
        return
    partner, expected = N_FROM_EQUATION[(code, method.name)]
    assert _coefficient(method.equation, partner) == expected == method.n


def test_the_brief_s_analytes_are_there() -> None:
    for name in ("vinegar acidity", "hydrochloric acid", "sulfuric acid", "sodium hydroxide",
                 "sodium carbonate", "total alkalinity as CaCO3", "chloride",
                 "total hardness as CaCO3", "calcium", "oxalate", "hydrogen peroxide",
                 "iron(II)", "ascorbic acid"):
        assert find_analyte(name)
    chloride = find_analyte("Cl-")
    assert {m.name for m in chloride.methods} == {"Mohr", "Fajans", "Volhard"}
    assert [m.indicator for m in chloride.methods] == [
        "potassium chromate", "dichlorofluorescein", "ferric ammonium sulfate"]


def test_method_follows_the_titrant() -> None:
    chloride = find_analyte("chloride")
    assert method_for(chloride, find_material("AgNO3")).name == "Mohr"
    assert method_for(chloride, find_material("AgNO3"), "fajans").name == "Fajans"
    assert method_for(chloride, find_material("NH4SCN")).is_back_titration
    # any strong base serves an acid-base method written for sodium hydroxide
    assert method_for(find_analyte("acetic acid"), find_material("KOH")).name == "with hydroxide"
    with pytest.raises(NotFound, match="no method"):
        method_for(find_analyte("acetic acid"), find_material("HCl"))
    with pytest.raises(NotFound, match="Mohr"):
        method_for(chloride, find_material("EDTA"))


def test_back_titration_names_its_reagent_and_its_n() -> None:
    found = analyte_titration("chloride", "NH4SCN")
    assert found.excess_reagent is not None and found.excess_reagent.code == "AgNO3"
    assert found.excess_reagent_n_eq_per_mol == 1
    assert analyte_titration("chloride", "AgNO3").excess_reagent is None


def test_titrant_n_comes_from_the_reaction_paired() -> None:
    # permanganate in acid is 5 electrons; dichromate 6; sulfuric acid 2 protons
    assert analyte_titration("H2O2", "KMnO4").titrant_n_eq_per_mol == 5
    assert analyte_titration("Fe2+", "K2Cr2O7").titrant_n_eq_per_mol == 6
    assert analyte_titration("NaOH", "H2SO4").titrant_n_eq_per_mol == 2


@pytest.fixture
def data_dir(tmp_path: Path) -> Path:
    target = tmp_path / "data"
    shutil.copytree(DATA, target)
    return target


@pytest.mark.parametrize(("old", "new", "problem"), [
    ('titrant = "EDTA"', 'titrant = "EDTAX"', "not a material"),
    ('excess_reagent = "AgNO3"', 'excess_reagent = "AgNO4"', "not a material"),
    ('unit = "mg/L"', 'unit = "ppm"', "unit"),
    ("report_as_n = 2\n", "", "go together"),
    ('report_as = "Standard Methods 2320 B', 'reprt_as = "x', "unknown key"),
    ('indicator = "murexide"', 'indicator = "litmus"', "litmus"),
    ('formula = "C2O4"', 'formula = "C2Qq4"', "does not parse"),
    ("n = 2\nequation = \"H2O2", "n = 0\nequation = \"H2O2", "positive"),
    ("pka = [6.35, 10.33]", "pka = [10.33, 6.35]", "increasing order"),
    ('kind = "redox"\ntitrant = "I2"', 'kind = "acid-base"\ntitrant = "I2"', "kind"),
    ('aliases = ["peroxide"', 'aliases = ["Cl"', "also a name of"),
    ('unit = "common practice, no source"\n', "", "no source named for 'unit'"),
])
def test_bad_analyte_entries_are_refused(data_dir: Path, old: str, new: str,
                                         problem: str) -> None:
    path = data_dir / "analytes.toml"
    text = path.read_text(encoding="utf-8")
    assert old in text, old
    path.write_text(text.replace(old, new, 1), encoding="utf-8")
    assert load_catalog(data_dir).materials  # preparing and standardizing read no analyte
    with pytest.raises(CatalogDataError, match=problem):
        load_samples(data_dir)


@pytest.mark.parametrize(("old", "new", "problem"), [
    ("pka = [9.245]\nprotons = 1", "pka = [9.245]\nprotons = 2", "protons must lie"),
    ("charge = -2\npka = [6.35, 10.33]", "charge = 0\npka = [6.35, 10.33]", "not be zero"),
    ("pka = [2.15, 7.20, 12.35]", "pka = [7.20, 2.15, 12.35]", "increasing order"),
    ('aliases = ["HCO3-"', 'aliases = ["CO3"', "also a name of"),
    ('source = "from memory (oxalic', 'sorce = "from memory (oxalic', "unknown key"),
])
def test_bad_ion_entries_are_refused(data_dir: Path, old: str, new: str, problem: str) -> None:
    path = data_dir / "ions.toml"
    text = path.read_text(encoding="utf-8")
    assert old in text, old
    path.write_text(text.replace(old, new, 1), encoding="utf-8")
    assert load_catalog(data_dir).materials  # preparing and standardizing read no analyte
    with pytest.raises(CatalogDataError, match=problem):
        load_samples(data_dir)
