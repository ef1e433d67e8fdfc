"""Concentrate lots (issue 17): a lot of concentrated acid records its certified assay
and density, a batch made from it is computed from them and traced to it, and
`calc liquid` knows an acid's n from the catalog.

Every expected value is worked by hand in its comment from N = 1000 w rho n Vc / (M V)
(the mass-fraction/density/molarity relation of OpenStax Chemistry 2e, Appendix F, which
tabulates HCl 36 %, 1.18 g/mL, 11.6 M), with the conventional atomic weights of CIAAW 2021
(H 1.008, Cl 35.45, N 14.007, O 15.999); tolerances allow the fourth-decimal spread of
atomic weights between editions (REFERENCES.md).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from tests.conftest import Cli, row_counts


def _days(n: int) -> str:
    return (datetime.now(UTC).date() + timedelta(days=n)).isoformat()


@pytest.fixture
def lab(cli: Cli) -> Cli:
    cli.ok("init")
    cli.ok("user", "add", "ada", "--role", "admin", "--passphrase-stdin", user="ada",
           input="ada-passphrase\n")
    cli.ok("lot", "add", "HCl-conc", "--code", "HCL-37", "--assay", "37.2", "--density",
           "1.185", "--expires", _days(300), "--certificate", "CoA 4471", user="ada")
    return cli


def test_a_concentrate_lot_records_assay_and_density(lab: Cli) -> None:
    listed = {r["code"]: r for r in lab.json("lot", "list")}
    assert listed["HCL-37"]["material"] == "HCl-conc"
    assert (listed["HCL-37"]["purity_percent"], listed["HCL-37"]["density_g_per_ml"]) == (
        "37.2", "1.185")  # as typed from the certificate, not rounded
    text = lab.ok("lot", "list").stdout
    assert "1.185" in text


def test_a_batch_from_a_concentrate_lot_uses_its_assay_and_density(lab: Cli) -> None:
    made = lab.json("batch", "make", "HCl-1N", "--volume", "1000", "--stock-volume", "82",
                    "--solute-lot", "HCL-37", user="ada")
    # by hand: 1000 x 0.372 x 1.185 = 440.82 g/L; / 36.458 g/mol = 12.0912 mol/L;
    # x 82 mL / 1000 mL = 0.99148 eq/L (n = 1)
    assert made["theoretical_normality"] == pytest.approx(0.99148, rel=2e-4)
    assert not any("typical" in w for w in made["warnings"])
    assert any("fume hood" in c for c in made["cautions"])  # the concentrate's own cautions
    assert any("safety data sheet" in c for c in made["cautions"])
    shown = lab.json("batch", "show", made["batch"])
    assert shown["preparation"]["solute_lot"] == "HCL-37"
    assert "82 mL of concentrate from lot HCL-37" in lab.ok("batch", "show",
                                                            made["batch"]).stdout
    traced = lab.json("trace", made["batch"])
    lot = traced["upward"]["preparation"]["solute_lot"]
    assert (lot["code"], lot["purity_percent"], lot["certificate"]) == (
        "HCL-37", "37.2", "CoA 4471")


def test_without_a_lot_the_typical_values_are_used_and_said(lab: Cli) -> None:
    made = lab.json("batch", "make", "HCl-1N", "--volume", "1000", "--stock-volume", "82",
                    user="ada")
    # by hand (OpenStax 36 %, 1.18 g/mL): 1000 x 0.36 x 1.18 = 424.8 g/L; / 36.458 =
    # 11.6518 mol/L; x 0.082 = 0.95545 eq/L
    assert made["theoretical_normality"] == pytest.approx(0.95545, rel=2e-4)
    assert any("typical 36 % w/w and 1.18 g/mL" in w for w in made["warnings"])


def test_a_wrong_or_unsuitable_lot_is_refused_and_nothing_written(lab: Cli) -> None:
    lab.ok("lot", "add", "KHP", "--code", "KHP-1", "--purity", "99.98", "--expires",
           _days(300), user="ada")
    lab.ok("lot", "add", "H2SO4-conc", "--code", "SULF-1", "--assay", "95.8", "--density",
           "1.835", "--expires", _days(300), user="ada")
    before = row_counts(lab.db)
    for lot, words in (("KHP-1", "is KHP"), ("SULF-1", "is H2SO4-conc")):
        result = lab.refused("batch", "make", "HCl-1N", "--volume", "1000", "--stock-volume",
                             "82", "--solute-lot", lot, user="ada")
        assert words in result.stderr
    result = lab.refused("batch", "make", "HCl-1N", "--volume", "1000", "--from-batch", "X",
                         "--aliquot", "10", "--solute-lot", "HCL-37", user="ada")
    assert "--solute-lot goes with" in result.stderr
    assert row_counts(lab.db) == before


def test_an_expired_concentrate_lot_is_refused(lab: Cli) -> None:
    lab.ok("lot", "add", "HCl-conc", "--code", "HCL-OLD", "--assay", "36.5", "--density",
           "1.18", "--expires", _days(-1), user="ada")
    result = lab.refused("batch", "make", "HCl-1N", "--volume", "1000", "--stock-volume",
                         "82", "--solute-lot", "HCL-OLD", user="ada")
    assert "expired" in result.stderr


@pytest.mark.parametrize(("density", "words"), [
    ("0", "greater than zero"), ("11.8", "not a liquid"), ("abc", "density")])
def test_an_impossible_density_is_refused(lab: Cli, density: str, words: str) -> None:
    result = lab.refused("lot", "add", "HCl-conc", "--code", "HCL-X", "--assay", "37",
                         "--density", density, "--expires", _days(300), user="ada")
    assert words in result.stderr


def test_calc_liquid_takes_nitric_acids_n_from_the_catalog(cli: Cli) -> None:
    out = cli.json("calc", "liquid", "HNO3", "--normality", "1", "--volume", "1000")
    # by hand: 1 eq/L x 1 L x 63.012 g/mol / n 1 = 63.012 g HNO3; / 0.71 / 1.42 g/mL
    # = 63.012 / 1.0082 = 62.500 mL (OpenStax Appendix F: 71 %, 1.42 g/mL)
    assert out["n_eq_per_mol"] == 1
    assert out["volume_ml"] == pytest.approx(62.500, rel=2e-4)
    sulfuric = cli.json("calc", "liquid", "H2SO4", "--normality", "1", "--volume", "1000")
    # by hand: 1 eq/L / n 2 = 0.5 mol x 98.072 g/mol = 49.036 g; / 0.96 / 1.84 = 27.761 mL
    assert sulfuric["n_eq_per_mol"] == 2
    assert sulfuric["volume_ml"] == pytest.approx(27.761, rel=2e-4)


def test_calc_liquid_asks_for_n_where_it_depends_on_the_endpoint(cli: Cli) -> None:
    result = cli.refused("calc", "liquid", "H3PO4", "--normality", "1", "--volume", "1000")
    assert "--n" in result.stderr
