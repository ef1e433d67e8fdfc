"""A non-aqueous titrant through the command line: `calc temperature --spec` and a run
recorded at 25 C are carried to 20 C with the solvent's expansion (issue 17).

Checked against British Pharmacopoeia, Appendix I B, Perchloric Acid VS:
Vc = V[1 + 0.0011(t1 - t2)], hence N(20) = N(25) x (1 + 0.0011 x 5) = 1.0055 N(25).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from tests.conftest import Cli


def _days(n: int) -> str:
    return (datetime.now(UTC).date() + timedelta(days=n)).isoformat()


def test_calc_temperature_with_a_non_aqueous_spec(cli: Cli) -> None:
    out = cli.json("calc", "temperature", "--normality", "0.1", "--from", "25", "--to", "20",
                   "--spec", "HClO4-0.1N")
    # BP Appendix I B, by hand: 0.1 x (1 + 0.0011 x 5) = 0.100550
    assert out["normality"] == pytest.approx(0.100550, rel=1e-12)
    assert out["ratio"] == pytest.approx(1.0055, rel=1e-12)
    assert (out["solvent"], out["expansion_per_c"]) == ("glacial acetic acid", 0.0011)
    assert "Pharmacopoeia" in out["expansion_source"]
    text = cli.ok("calc", "temperature", "--normality", "0.1", "--from", "25", "--to", "20",
                  "--spec", "HClO4-0.1N").stdout
    assert "glacial acetic acid's cubic expansion 0.0011 per C" in text


def test_calc_temperature_without_a_spec_is_water(cli: Cli) -> None:
    out = cli.json("calc", "temperature", "--normality", "0.1", "--from", "25", "--to", "20")
    # Tanaka et al. 2001: 998.2067 / 997.0470 = 1.0011632
    assert out["ratio"] == pytest.approx(998.2067 / 997.0470, rel=1e-7)
    assert (out["solvent"], out["expansion_per_c"]) == ("water", None)
    assert "water's density" in cli.ok("calc", "temperature", "--normality", "0.1", "--from",
                                       "25", "--to", "20").stdout


def test_calc_temperature_refuses_an_unknown_spec(cli: Cli) -> None:
    result = cli.refused("calc", "temperature", "--normality", "0.1", "--from", "25", "--to",
                      "20", "--spec", "HClO4-9N")
    assert "HClO4-9N" in result.stderr


def test_a_perchloric_acid_run_at_25_c_is_carried_to_20_c_with_acetic_acids_expansion(
        cli: Cli) -> None:
    cli.ok("init")
    cli.ok("user", "add", "ada", "--role", "admin", "--passphrase-stdin", user="ada",
           input="ada-passphrase\n")
    cli.ok("lot", "add", "KHP", "--code", "KHP-0001", "--purity", "99.98", "--expires",
           _days(400), "--dried", _days(-3), user="ada")
    made = cli.json("batch", "make", "HClO4-0.1N", "--volume", "1000", "--stock-volume",
                    "8.5", "--at", f"{_days(-2)}T08:30", user="ada")
    run = cli.json("standardize", made["batch"], "--lot", "KHP-0001", "--temp", "25",
                   "--rep", "0.3502:17.14", "--rep", "0.3498:17.12", "--rep", "0.3510:17.18",
                   "--at", f"{_days(-1)}T10:00", user="ada")
    # BP Appendix I B: N(20) = N(25) x (1 + 0.0011 x (25 - 20)); water would give 1.00116
    assert run["normality_20c"] / run["normality"] == pytest.approx(1.0055, rel=1e-9)
    assert any("glacial acetic acid's cubic expansion 0.0011 per C" in w
               for w in run["warnings"])
