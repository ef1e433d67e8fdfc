"""`prepbook calc sample`: the titration equation both ways, as a user types it; bad input
refused in one line. Expected values are worked by hand in each test."""

from __future__ import annotations

import pytest

from tests.conftest import Cli


def test_unknown_acid_with_a_standardized_base(cli: Cli) -> None:
    """25.00 mL of sulfuric acid, 32.40 mL of 0.1000 N NaOH (hand-worked): N = 0.12960,
    c = 0.06480 mol/L, 0.06480 x 98.072 = 6.3551 g/L."""
    out = cli.json("calc", "sample", "--analyte", "sulfuric acid", "--titrant", "NaOH",
                   "--normality", "0.1000", "--aliquot", "25.00", "--rep", "32.40")
    assert out["normality"] == pytest.approx(0.12960)
    assert out["molarity"] == pytest.approx(0.06480)
    assert out["concentration"] == {"value": pytest.approx(6.3551, abs=0.001), "unit": "g/L",
                                    "as": None}


def test_unknown_base_with_a_standardized_diprotic_acid_by_molarity(cli: Cli) -> None:
    """20.00 mL of NaOH, 18.50 mL of 0.05000 M H2SO4 = 0.1000 N (hand-worked):
    0.1000 x 18.50 / 20.00 = 0.09250 mol/L NaOH."""
    out = cli.json("calc", "sample", "--analyte", "NaOH", "--titrant", "H2SO4",
                   "--molarity", "0.05000", "--aliquot", "20.00", "--rep", "18.50")
    assert out["titrant_normality"] == pytest.approx(0.1000)
    assert out["molarity"] == pytest.approx(0.09250)


def test_acid_with_barium_hydroxide_titrant(cli: Cli) -> None:
    """10.00 mL vinegar, 0.05000 M Ba(OH)2 (0.1000 N), 41.20 mL (hand-worked):
    4.120 meq x 60.052 mg = 247.41 mg in 10 mL = 2.4741 g/100 mL."""
    out = cli.json("calc", "sample", "--analyte", "vinegar acidity", "--titrant", "Ba(OH)2",
                   "--molarity", "0.05", "--aliquot", "10.00", "--rep", "41.20")
    assert out["concentration"]["unit"] == "g/100 mL"
    assert out["concentration"]["value"] == pytest.approx(2.4741, abs=0.0005)


def test_text_shows_result_budget_and_the_each_ml_figure(cli: Cli) -> None:
    text = cli.ok("calc", "sample", "--analyte", "alkalinity", "--titrant", "H2SO4",
                  "--normality", "0.02", "--normality-u", "0.0001", "--aliquot", "100",
                  "--rep", "8.40", "--rep", "8.45", "--rep", "8.38").stdout
    assert "mg/L as CaCO3" in text
    assert "Uncertainty budget" in text and "contrib. (mg/L)" in text
    for term in ("titrant normality", "aliquot (pipette)", "titrant volume (burette)",
                 "repeatability"):
        assert term in text
    # 0.02 N x 100.086 / 2 = 1.001 mg CaCO3 per mL (Standard Methods 2320 B's 1.00)
    assert "each mL of 0.02 N sulfuric acid is equivalent to 1.001 mg of CaCO3" in text


def test_weighed_sample_and_per_replicate_masses(cli: Cli) -> None:
    """Ascorbic acid powder, two weighings (hand-worked): 0.2000 g / 20.00 mL and
    0.2500 g / 25.00 mL of 0.1000 N iodine both give 176.12 x 2.000 / 2 / 200 = 88.06 %."""
    out = cli.json("calc", "sample", "--analyte", "ascorbic acid", "--titrant", "I2",
                   "--normality", "0.1000", "--mass", "0.2000", "--mass", "0.2500",
                   "--rep", "20.00", "--rep", "25.00")
    assert out["mass_fraction_percent"] == pytest.approx(88.06, abs=0.01)
    assert out["sd"] == pytest.approx(0.0, abs=1e-9)
    assert [r["sample"] for r in out["replicates"]] == ["0.2000", "0.2500"]


def test_back_titration_with_its_reagent(cli: Cli) -> None:
    """Volhard (hand-worked): 2.500 - 1.000 meq = 1.500 meq Cl in 50 mL = 1063.5 mg/L."""
    out = cli.json("calc", "sample", "--analyte", "chloride", "--titrant", "NH4SCN",
                   "--normality", "0.1000", "--aliquot", "50", "--rep", "10.00",
                   "--excess-volume", "25.00", "--excess-normality", "0.1000",
                   "--excess-normality-u", "0.0002")
    assert out["method"] == "Volhard"
    assert out["concentration"]["value"] == pytest.approx(1063.5, abs=0.1)
    assert {"N_r", "V_r"} <= {line["symbol"] for line in out["budget"]}


def test_burette_warning_and_missing_titrant_uncertainty(cli: Cli) -> None:
    out = cli.json("calc", "sample", "--analyte", "chloride", "--titrant", "AgNO3",
                   "--normality", "0.0141", "--aliquot", "100", "--rep", "7.65",
                   "--blank", "0.2", "--burette-capacity", "50")
    assert any("30 %" in w for w in out["warnings"])
    missing = [line["symbol"] for line in out["budget"] if line["missing"]]
    assert missing == ["N_t", "f_rep"]


@pytest.mark.parametrize("args", [
    ("--normality", "0.1", "--molarity", "0.05", "--aliquot", "25", "--rep", "20"),
    ("--normality", "0.1", "--rep", "20"),
    ("--normality", "0.1", "--aliquot", "25", "--mass", "1", "--rep", "20"),
    ("--normality", "-0.1", "--aliquot", "25", "--rep", "20"),
    ("--normality", "0.1", "--aliquot", "25", "--rep", "0.1", "--blank", "0.2"),
    ("--normality", "0.1", "--aliquot", "25", "--aliquot", "20", "--aliquot", "10",
     "--rep", "20", "--rep", "21"),
    ("--normality", "0.1", "--aliquot", "25", "--rep", "20", "--excess-volume", "5"),
])
def test_bad_input_is_refused_in_one_line(cli: Cli, args: tuple[str, ...]) -> None:
    cli.refused("calc", "sample", "--analyte", "HCl", "--titrant", "NaOH", *args)


def test_unknown_names_and_pairs_are_refused(cli: Cli) -> None:
    err = cli.refused("calc", "sample", "--analyte", "unobtainium", "--titrant", "NaOH",
                      "--normality", "0.1", "--aliquot", "25", "--rep", "20").stderr
    assert "no analyte" in err
    err = cli.refused("calc", "sample", "--analyte", "acetic acid", "--titrant", "HCl",
                      "--normality", "0.1", "--aliquot", "25", "--rep", "20").stderr
    assert "no method" in err


def test_salt_and_eqpoint_commands(cli: Cli) -> None:
    salt = cli.json("calc", "salt", "NH4+", "CN-")
    assert salt["nature"] == "basic" and salt["governing"] == "cyanide"
    text = cli.ok("calc", "salt", "Na+", "HCO3-").stdout
    assert "basic" in text and "hydrogen carbonate governs" in text
    cli.refused("calc", "salt", "Cl-", "Na+")
    cli.refused("calc", "eqpoint", "--titrant", "NaOH", "--concentration", "0.05")
    text = cli.ok("calc", "eqpoint", "--analyte", "phosphoric acid", "--titrant", "NaOH",
                  "--concentration", "0.05").stdout
    assert "equivalence point 1" in text and "equivalence point 3" in text


def test_the_readme_block_runs(tmp_path) -> None:
    """README.md, section "calc sample": its examples run as written."""
    from tests.test_readme import _block_after, _run_block

    done = _run_block(_block_after("calc sample"), tmp_path)
    assert done.returncode == 0, done.stdout + done.stderr
    assert "mg/L as CaCO3" in done.stdout and "cyanide governs" in done.stdout
