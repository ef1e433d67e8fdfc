"""`calc eqpoint`: indicator advice from the titration error each indicator would cause.

Expected errors are worked by hand (first-order terms: the excess strong titrant, and the
sample's unreacted fraction), not by the code. At --concentration 0.05 with no titrant
concentration the sample's volume equals the equivalence volume, so the vessel holds
2 V0 at the end and the equivalents titrated are k x 2 x 0.05 x V0.
Transition ranges (from memory, as tabulated in the analytical textbooks): methyl red
4.4-6.2 (changes at 5.30), phenolphthalein 8.2-10.0 (9.10). Carbonic acid pKa 6.35
(NIST critically selected constants via a standard analytical textbook); sulfamic acid
a strong acid (pKa about 1, from memory).
"""

from __future__ import annotations

import pytest

from tests.conftest import Cli


def _advice(out: dict[str, object], name: str) -> dict[str, object]:
    indicators = out["indicators"]
    assert isinstance(indicators, list)
    (found,) = [a for a in indicators if a["name"] == name]
    return found


def test_phenolphthalein_suits_sulfamic_acid_with_sodium_hydroxide(cli: Cli) -> None:
    """Strong-strong: stopping at pH 9.10 leaves 10^-4.90 = 1.26e-5 mol/L of OH- in
    2 V0 against 0.1 V0 mol titrated: +0.025 %. The old range rule (7.0 outside
    8.2-10.0) called it unsuitable."""
    out = cli.json("calc", "eqpoint", "--standard", "sulfamic acid", "--titrant", "NaOH",
                   "--concentration", "0.05")
    assert "phenolphthalein" in out["suitable"]
    assert _advice(out, "phenolphthalein")["error_percent"] == pytest.approx(0.0252, abs=0.002)
    table = cli.ok("calc", "eqpoint", "--standard", "sulfamic acid", "--titrant", "NaOH",
                   "--concentration", "0.05").stdout
    row = next(line for line in table.splitlines() if "phenolphthalein" in line
               and "%" in line)
    assert "+0.025 %" in row and "suitable" in row and "unsuitable" not in row


def test_methyl_red_suits_carbonate_once_carbon_dioxide_is_boiled_off(cli: Cli) -> None:
    """Closed: at pH 5.30 the 0.05 mol/L of carbonic acid keeps HCO3-/H2CO3 =
    10^(5.30 - 6.35) = 0.0891, a fraction 0.0818 short of its second proton: -4.09 %.
    Boiled: only the excess acid counts, 10^-5.30 = 5.0e-6 mol/L in 2 V0 against
    0.2 V0 mol: +0.005 % (the pharmacopoeial practice)."""
    args = ("calc", "eqpoint", "--standard", "Na2CO3", "--titrant", "HCl",
            "--concentration", "0.05")
    closed = cli.json(*args)
    assert "methyl red" in closed["unsuitable"] and closed["co2_removed"] is False
    assert _advice(closed, "methyl red")["error_percent"] == pytest.approx(-4.09, abs=0.02)
    boiled = cli.json(*args, "--boil-co2")
    assert "methyl red" in boiled["suitable"] and boiled["co2_removed"] is True
    assert _advice(boiled, "methyl red")["error_percent"] == pytest.approx(0.005, abs=0.001)
    assert boiled["ph"] == pytest.approx(7.00, abs=0.01)
    assert "boiled off" in cli.ok(*args, "--boil-co2").stdout


def test_titrant_concentration_and_tolerance(cli: Cli) -> None:
    """KHP with 0.2 mol/L NaOH, 0.05 mol/L phthalate at the end: c_s = 0.05 /
    (1 - 0.05/0.2) = 0.0667 mol/L."""
    out = cli.json("calc", "eqpoint", "--standard", "KHP", "--titrant", "NaOH",
                   "--concentration", "0.05", "--titrant-concentration", "0.2",
                   "--tolerance", "0.01")
    assert out["sample_concentration_mol_per_l"] == pytest.approx(0.05 / 0.75)
    assert out["titrant_concentration_mol_per_l"] == 0.2 and out["tolerance_percent"] == 0.01
    assert all(abs(a["error_percent"]) <= 0.01 for a in out["indicators"] if a["suitable"])


@pytest.mark.parametrize(
    ("args", "word"),
    [
        (["--standard", "KHP", "--titrant", "NaOH", "--concentration", "0.05", "--boil-co2"],
         "CO2"),
        (["--standard", "KHP", "--titrant", "NaOH", "--concentration", "0.05",
          "--titrant-concentration", "0.05"], "stronger"),
        (["--standard", "KHP", "--titrant", "NaOH", "--concentration", "0.05",
          "--tolerance", "0"], "tolerance"),
    ],
)
def test_eqpoint_refusals(cli: Cli, args: list[str], word: str) -> None:
    assert word in cli.refused("calc", "eqpoint", *args).stderr
