"""`prepbook calc ... --json` for every command, through the command line.

Each expected value is computed here from its published source, independently
of prepbook's own code path (the source is named beside each check).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from molmass import Formula

from tests.conftest import Cli

REPS = ["0.8085:39.16", "0.8116:39.29", "0.8596:41.67"]


def _rho_tanaka(t: float) -> float:
    """CIPM water density, Tanaka et al., Metrologia 38 (2001) 301, kg/m3."""
    a1, a2, a3, a4, a5 = -3.983035, 301.797, 522528.9, 69.34881, 999.974950
    return a5 * (1 - (t + a1) ** 2 * (t + a2) / (a3 * (t + a4)))


def test_calc_normality_matches_the_direct_standardization_equation(cli: Cli) -> None:
    """N = 1000 m P / (EW V) (EURACHEM/CITAC CG4 Example A2 model), M(KHP) from molmass."""
    args = ["calc", "normality", "--standard", "KHP", "--titrant", "NaOH", "--purity", "99.98"]
    for r in REPS:
        args += ["--rep", r]
    out = cli.json(*args)
    m = Formula("KHC8H4O4").mass
    per_rep = [1000 * float(a) * 0.9998 / (m * float(v)) for a, v in (r.split(":") for r in REPS)]
    assert [r["normality"] for r in out["replicates"]] == pytest.approx(per_rep, rel=1e-5)
    assert out["normality"] == pytest.approx(sum(per_rep) / 3, rel=1e-5)
    assert out["molarity"] == pytest.approx(out["normality"])  # NaOH: 1 eq/mol
    mean = sum(per_rep) / 3
    sd = math.sqrt(sum((x - mean) ** 2 for x in per_rep) / 2)
    assert out["sd"] == pytest.approx(sd, rel=1e-3)
    assert out["rsd_percent"] == pytest.approx(100 * sd / mean, rel=1e-3)
    assert out["k"] == 2 and out["U"] == pytest.approx(2 * out["u"])
    # A standardization like CG4 A2 has a relative standard uncertainty near 0.1 %.
    assert 0.0003 < out["u"] / out["normality"] < 0.003
    names = {b["quantity"] for b in out["budget"]}
    assert len(names) >= 4
    shares = sum(b["share_percent"] for b in out["budget"])
    assert shares == pytest.approx(100, abs=0.5)
    assert [r["mass_g"] for r in out["replicates"]] == ["0.8085", "0.8116", "0.8596"]


def test_calc_normality_redox_gives_molarity_over_five(cli: Cli) -> None:
    """Permanganate in acid takes 5 electrons (MnO4- + 8 H+ + 5 e- -> Mn2+ + 4 H2O);
    sodium oxalate gives 2 (C2O4 2- -> 2 CO2 + 2 e-)."""
    out = cli.json("calc", "normality", "--standard", "sodium oxalate", "--titrant", "KMnO4",
                   "--rep", "0.2500:37.30")
    m = Formula("Na2C2O4").mass
    assert out["normality"] == pytest.approx(1000 * 0.25 / (m / 2 * 37.30), rel=1e-5)
    assert out["molarity"] == pytest.approx(out["normality"] / 5)
    assert any("replicate" in w for w in out["warnings"])  # one replicate: fewer than 3


def test_calc_normality_flags_but_keeps_an_outlier(cli: Cli) -> None:
    reps = ["0.8085:39.16", "0.8116:39.29", "0.8596:41.67", "0.8200:39.70", "0.8300:41.10"]
    args = ["calc", "normality", "--standard", "KHP"]
    for r in reps:
        args += ["--rep", r]
    out = cli.json(*args)
    assert len(out["replicates"]) == 5
    assert [r["outlier"] for r in out["replicates"]] == [False] * 4 + [True]
    assert any("outlier" in w for w in out["warnings"])


def test_calc_secondary_is_n1v1_over_v2(cli: Cli) -> None:
    out = cli.json("calc", "secondary", "--reference-normality", "0.1005", "--aliquot", "25.00",
                   "--rep", "24.80", "--rep", "24.79", "--rep", "24.82")
    expected = [0.1005 * 25 / v for v in (24.80, 24.79, 24.82)]
    assert [r["normality"] for r in out["replicates"]] == pytest.approx(expected)
    assert out["normality"] == pytest.approx(sum(expected) / 3)


def test_calc_solid_weighs_n_times_equivalent_weight(cli: Cli) -> None:
    """Mass = N x V(L) x M / n; M from molmass. 1 N sulfuric acid holds 49.04 g/L of
    H2SO4 (USP Volumetric Solutions, 98.07 g/L for 1 M)."""
    out = cli.json("calc", "solid", "NaOH", "--normality", "0.1", "--volume", "1000")
    assert out["mass_g"] == pytest.approx(0.1 * Formula("NaOH").mass, rel=1e-5)
    out = cli.json("calc", "solid", "KHP", "--normality", "0.1", "--volume", "500", "--purity",
                   "99.5")
    assert out["mass_g"] == pytest.approx(0.05 * Formula("KHC8H4O4").mass / 0.995, rel=1e-5)


def test_calc_liquid_matches_openstax_molarity(cli: Cli) -> None:
    """OpenStax Chemistry 2e, Appendix F: concentrated HCl 11.6 M; H2SO4 18.0 M."""
    out = cli.json("calc", "liquid", "HCl", "--normality", "1", "--volume", "1000")
    assert out["volume_ml"] == pytest.approx(1000 / 11.6, rel=0.005)
    out = cli.json("calc", "liquid", "H2SO4", "--normality", "1", "--volume", "1000")
    assert out["volume_ml"] == pytest.approx(1000 / (2 * 18.0), rel=0.005)
    text = cli.ok("calc", "liquid", "H2SO4", "--normality", "1", "--volume", "1000").stdout
    assert "never water to the acid" in text
    assert "safety data sheet" in text


def test_calc_dilute_and_adjust(cli: Cli) -> None:
    """N1 V1 = N2 V2 (equivalents are conserved on dilution)."""
    out = cli.json("calc", "dilute", "--stock", "1.0131", "--normality", "0.1", "--volume",
                   "1000")
    assert out["stock_ml"] == pytest.approx(0.1 * 1000 / 1.0131)
    assert out["water_ml"] == pytest.approx(1000 - 0.1 * 1000 / 1.0131)
    out = cli.json("calc", "adjust", "--normality", "0.1047", "--target", "0.1", "--volume",
                   "950")
    assert out["add"] == "water"
    assert out["volume_ml"] == pytest.approx(0.1047 * 950 / 0.1 - 950)
    out = cli.json("calc", "adjust", "--normality", "0.0950", "--target", "0.1", "--volume",
                   "900", "--stock", "1.0")
    assert out["add"] == "stock"
    # equivalents: 0.095*900 + 1.0*x = 0.1*(900 + x)
    assert out["volume_ml"] == pytest.approx((0.1 * 900 - 0.095 * 900) / (1.0 - 0.1))


def test_calc_buoyancy_is_nist_sop2(cli: Cli) -> None:
    """NIST IR 6969 SOP 2: m = W (1 - rho_air/rho_weights) / (1 - rho_air/rho_sample)."""
    out = cli.json("calc", "buoyancy", "--mass", "0.3888", "--density", "1.636")
    assert out["mass_g"] == pytest.approx(0.3888 * (1 - 0.0012 / 8.0) / (1 - 0.0012 / 1.636))


def test_calc_temperature_follows_water_density(cli: Cli) -> None:
    """Tanaka (2001) CIPM formula; the REFERENCES values 997.0470 (25 C), 998.2067 (20 C)."""
    out = cli.json("calc", "temperature", "--normality", "0.10214", "--from", "25", "--to", "20")
    assert out["normality"] == pytest.approx(0.10214 * 998.2067 / 997.0470, rel=1e-6)
    assert out["normality"] == pytest.approx(0.10214 * _rho_tanaka(20) / _rho_tanaka(25))


def test_calc_titer_matches_pharmacopoeial_statement(cli: Cli) -> None:
    """USP: each mL of 0.1 N sodium hydroxide is equivalent to 20.42 mg of KHP (from memory);
    Ph. Eur.: 1 mL of 0.1 M silver nitrate is equivalent to 5.844 mg of NaCl (from memory)."""
    out = cli.json("calc", "titer", "--titrant", "NaOH", "--normality", "0.1", "--analyte", "KHP")
    assert out["mg_per_ml"] == pytest.approx(20.42, abs=0.005)
    out = cli.json("calc", "titer", "--titrant", "AgNO3", "--normality", "0.1", "--analyte",
                   "NaCl")
    assert out["mg_per_ml"] == pytest.approx(5.844, abs=0.001)


def test_calc_eqpoint_and_indicators(cli: Cli) -> None:
    """Salt hydrolysis, textbook approximation: pH = 7 + (pKa + log C)/2 for phthalate
    (pKa2 5.409, NIST via a standard textbook); for carbonate to CO2 the weak acid formula
    pH = (pKa1 - log C)/2 (pKa1 6.35). Indicator ranges: phenolphthalein 8.2-10.0 and methyl
    orange 3.1-4.4 (from memory)."""
    out = cli.json("calc", "eqpoint", "--standard", "KHP", "--titrant", "NaOH",
                   "--concentration", "0.05")
    assert out["ph"] == pytest.approx(7 + (5.409 + math.log10(0.05)) / 2, abs=0.02)
    assert "phenolphthalein" in out["suitable"]
    assert "methyl orange" in out["unsuitable"]
    out = cli.json("calc", "eqpoint", "--standard", "Na2CO3", "--titrant", "HCl",
                   "--concentration", "0.05")
    assert out["ph"] == pytest.approx((6.35 - math.log10(0.05)) / 2, abs=0.05)
    assert "methyl orange" in out["suitable"]
    assert "phenolphthalein" in out["unsuitable"]


def test_calc_endpoint_of_a_simulated_curve(cli: Cli, tmp_path: Path) -> None:
    """25.00 mL of 0.1000 M acetic acid (pKa 4.756) with 0.1000 M NaOH: Ve = 25.00 mL,
    curve from the charge-balance model."""
    from prepbook.chem import equilibria

    vols = [round(v * 0.5, 2) for v in range(0, 46)] + [23.2 + 0.2 * i for i in range(1, 19)]
    vols = sorted(set(round(v, 2) for v in vols))
    ph = equilibria.simulate_titration(vols, pkas=[4.756], sample_concentration_mol_per_l=0.1,
                                       sample_ml=25.0, titrant_concentration_mol_per_l=0.1,
                                       initial_protons=1)
    f = tmp_path / "curve.csv"
    f.write_text("volume_ml,pH\n" + "".join(f"{v},{p:.3f}\n" for v, p in zip(vols, ph,
                                                                        strict=True)))
    # The curve stops 1.8 mL past the endpoint and its median step (0.5 mL) is coarse;
    # the default span follows the 0.2 mL steps around the jump, and a span given to
    # suit them finds the same endpoint.
    for extra in ((), ("--smoothing", "1.0")):
        out = cli.json("calc", "endpoint", str(f), *extra)
        assert out["equivalence_ml"] == pytest.approx(25.00, abs=0.05)
        assert [e["volume_ml"] for e in out["endpoints"]] == [out["equivalence_ml"]]
        assert out["method"]


@pytest.mark.parametrize(
    ("args", "word"),
    [
        (["normality", "--standard", "unobtainium", "--rep", "0.5:20"], "unobtainium"),
        (["normality", "--standard", "KHP", "--rep", "-0.5:20"], "greater than zero"),
        (["normality", "--standard", "KHP", "--rep", "0.5:abc"], "not a plain decimal"),
        (["normality", "--standard", "KHP", "--rep", "0.5:20", "--blank", "25"], "blank"),
        (["normality", "--standard", "KHP", "--rep", "0.5:20", "--purity", "0"], "purity"),
        (["normality", "--standard", "KHP", "--rep", "0.5:20", "--purity", "100.5"], "100"),
        (["normality", "--standard", "KHP", "--rep", "0,5:20"], "comma"),
        (["solid", "NaOH", "--normality", "nan", "--volume", "1000"], "not a plain decimal"),
        (["dilute", "--stock", "0.1", "--normality", "1", "--volume", "100"], "stock"),
        (["temperature", "--normality", "0.1", "--from", "20", "--to", "95"], "outside"),
        (["titer", "--titrant", "NaOH", "--normality", "0.1", "--analyte", "nothing"],
         "nothing"),
    ],
)
def test_calc_refuses_bad_input(cli: Cli, args: list[str], word: str) -> None:
    result = cli.refused("calc", *args, "--json")
    assert word.lower() in result.stderr.lower()


def test_calc_endpoint_refuses_a_short_curve(cli: Cli, tmp_path: Path) -> None:
    f = tmp_path / "short.csv"
    f.write_text("mL,pH\n0,3.0\n1,3.5\n2,4.0\n")
    cli.refused("calc", "endpoint", str(f))
    cli.refused("calc", "endpoint", str(tmp_path / "missing.csv"))


def test_calc_json_is_one_document(cli: Cli) -> None:
    result = cli.ok("calc", "titer", "--titrant", "HCl", "--normality", "1", "--analyte",
                    "Na2CO3", "--json")
    doc = json.loads(result.stdout)
    # 1 mL of 1 N HCl is equivalent to 52.99 mg of Na2CO3 (USP, from memory).
    assert doc["mg_per_ml"] == pytest.approx(52.99, abs=0.01)
