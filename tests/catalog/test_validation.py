"""The loader refuses bad data, naming each problem (a validator that cannot fail is a defect).

Each case copies the packaged data files into tmp_path, breaks one thing, and expects
load_catalog() to refuse with a message naming it. Nothing here touches the real files.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import msgspec
import pytest

import prepbook.catalog.loader as loader
from prepbook.catalog import CatalogDataError, catalog, check_catalog, load_catalog

DATA = Path(loader.__file__).with_name("data")


@pytest.fixture
def data_dir(tmp_path: Path) -> Path:
    target = tmp_path / "data"
    shutil.copytree(DATA, target)
    return target


def _edit(directory: Path, name: str, old: str, new: str) -> None:
    path = directory / name
    text = path.read_text(encoding="utf-8")
    assert old in text, f"{old!r} not in {name}"
    path.write_text(text.replace(old, new, 1), encoding="utf-8")


def test_unaltered_copy_loads(data_dir: Path) -> None:
    assert len(load_catalog(data_dir).specs) == len(catalog().specs)


@pytest.mark.parametrize(
    ("name", "old", "new", "problem"),
    [
        ("materials.toml", 'formula = "KHC8H4O4"', 'formula = "KHC8Xq4O4"', "does not parse"),
        ("materials.toml", "n = 5\n", "n = 0\n", "n must be a positive number"),
        ("materials.toml", "n = 5\n", 'n = "five"\n', "must be a number"),
        ("materials.toml", "pka = [2.946, 5.409]", "pka = [5.409, 2.946]", "increasing order"),
        ("materials.toml", 'density = "from memory, a textbook value"\n', "", "'density'"),
        ("materials.toml", 'titrant = "NaOH"', 'titrant = "NaOHH"', "not a titrant solute"),
        ("materials.toml", 'indicator = "phenolphthalein"', 'indicator = "litmus"', "litmus"),
        ("materials.toml", 'aliases = ["THAM"', 'aliases = ["KHP"', "also a name of"),
        ("materials.toml", 'kind = "redox"', 'kind = "oxidation"', "kind must be one of"),
        ("materials.toml", 'drying = "120 C', 'dryng = "120 C', "unknown key"),
        ("materials.toml", "initial_protons = 1\n", "initial_protons = 3\n", "exceeds"),
        ("materials.toml", 'statements = ["H319"]', 'statements = ["H999"]', "H999"),
        ("materials.toml", 'pictograms = ["GHS07"]', 'pictograms = ["GHS10"]', "GHS10"),
        ("materials.toml", 'signal_word = "Warning"', 'signal_word = "Careful"', "signal_word"),
        (
            "indicators.toml",
            "low_ph = 8.2\nhigh_ph = 10.0",
            "low_ph = 10.0\nhigh_ph = 8.2",
            "ordered",
        ),
        (
            "indicators.toml",
            'kind = "redox"',
            'kind = "redox"\nlow_ph = 1.0\nhigh_ph = 2.0',
            "only acid-base",
        ),
        ("reagents.toml", "mass_fraction = 0.36", "mass_fraction = 36", "mass_fraction"),
        (
            "reagents.toml",
            "  \"Follow the safety data sheet, local regulations and the laboratory's own "
            'procedures.",\n',
            "",
            "defer",
        ),
        ("specs.toml", 'standard = "KHP"', 'standard = "KHQ"', "not a primary standard"),
        ("specs.toml", 'standard = "KHP"', 'standard = "NaCl"', "no acid-base reaction"),
        ("specs.toml", 'indicator = "phenolphthalein"', 'indicator = "litmus"', "litmus"),
        ("specs.toml", "factor_low = 0.90", "factor_low = 1.20", "factor window"),
        ("specs.toml", 'unit = "M"', 'unit = "mol/L"', "unit must be"),
        ("specs.toml", 'reaction = "redox-acid"', 'reaction = "redox-neutral"', "pairs with"),
        (
            "specs.toml",
            "restandardize_days = 7\nshelf_life_days = 90",
            "restandardize_days = 7\nshelf_life_days = 3",
            "shorter",
        ),
        ("specs.toml", 'solute = "NaOH"', 'solute = "KHP"', "not a titrant solute"),
        (
            "specs.toml",
            'standard = "KHP"\n',
            'standard = "KHP"\nmax_rsd_percent = 0.3\n',
            "without naming its source",
        ),
        ("specs.toml", 'max_rsd_percent = "European', 'max_rsd_pct = "European', "unknown key"),
        # issue 17: a non-aqueous titrant states its solvent's expansion, with a source
        ("specs.toml", "expansion_per_c = 0.0011\n", "", "cubic expansion coefficient"),
        ("specs.toml", "expansion_per_c = 0.0011", "expansion_per_c = 0.11",
         "not a liquid's cubic expansion"),
        ("specs.toml", "expansion_per_c = \"British", "expansion_per_cc = \"British",
         "no source named for 'expansion_per_c'"),
        (
            "specs.toml",
            'preparation_stock_spec = "H2SO4-0.1N"',
            'preparation_stock_spec = "HCl-0.1N"',
            "stronger spec",
        ),
    ],
)
def test_broken_data_is_refused_with_a_named_problem(
    data_dir: Path, name: str, old: str, new: str, problem: str
) -> None:
    _edit(data_dir, name, old, new)
    with pytest.raises(CatalogDataError) as err:
        load_catalog(data_dir)
    assert problem in str(err.value)


def test_invalid_toml_is_refused(data_dir: Path) -> None:
    (data_dir / "specs.toml").write_text("[[spec]\ncode = ", encoding="utf-8")
    with pytest.raises(CatalogDataError, match="not valid TOML"):
        load_catalog(data_dir)


def test_missing_file_is_refused(data_dir: Path) -> None:
    (data_dir / "indicators.toml").unlink()
    with pytest.raises(CatalogDataError, match="indicators.toml"):
        load_catalog(data_dir)


def test_check_catalog_finds_problems_in_built_objects() -> None:
    """The semantic checks work on objects too (a lab's own entries reuse them)."""
    cat = catalog()
    khp = cat.find_material("KHP")
    bad_rx = msgspec.structs.replace(khp.reactions[0], n=-1.0)
    bad_khp = msgspec.structs.replace(khp, reactions=(bad_rx, *khp.reactions[1:]))
    broken = msgspec.structs.replace(
        cat, materials=tuple(bad_khp if m is khp else m for m in cat.materials)
    )
    problems = check_catalog(broken)
    assert any("KHP" in p and "positive" in p for p in problems)
    assert check_catalog(cat) == ()


def test_all_problems_are_reported_at_once(data_dir: Path) -> None:
    _edit(data_dir, "materials.toml", 'formula = "KHC8H4O4"', 'formula = "KHC8Xq4O4"')
    _edit(data_dir, "specs.toml", "factor_low = 0.90", "factor_low = 1.20")
    with pytest.raises(CatalogDataError) as err:
        load_catalog(data_dir)
    assert "does not parse" in str(err.value) and "factor window" in str(err.value)


def test_a_bad_default_is_named_once_where_it_is(data_dir: Path) -> None:
    """A mistyped or unknown key in [defaults] is one problem at [defaults], not one per
    spec that inherits it (fifteen copies of a message hide the others)."""
    _edit(data_dir, "specs.toml", "factor_low = 0.90", 'factor_low = "0.90"\nfactr = 1')
    with pytest.raises(CatalogDataError) as err:
        load_catalog(data_dir)
    lines = str(err.value).splitlines()[1:]
    assert [line.strip() for line in lines] == [
        "specs.toml.defaults: 'factor_low' must be a number, not '0.90'",
        "specs.toml.defaults: unknown key(s) factr",
    ]
