"""`calc normality`'s budget against EURACHEM/CITAC CG4, 3rd ed. (2012), Example A2,
"Standardising a sodium hydroxide solution": m(KHP) 0.3888 g, balance linearity
+/-0.15 mg, purity 1.0 +/- 0.0005, V 18.64 mL from a 20 mL burette +/-0.03 mL at
+/-3 C, repeatability relative 0.0005 (from the method validation). The guide's
result: c = 0.10214 mol/L, u_c = 0.00010 mol/L (relative 0.00097), U (k = 2) =
0.00020 mol/L. The guide rounds its inputs before combining (mass 0.13 mg, volume
0.013 mL), so the combined uncertainty is matched to the two figures it prints.
"""

from __future__ import annotations

import pytest

from tests.conftest import Cli

A2 = ("calc", "normality", "--standard", "KHP", "--titrant", "NaOH", "--rep", "0.3888:18.64",
      "--purity", "100", "--linearity", "0.15", "--burette-tolerance", "0.03",
      "--temp-range", "3")


def test_one_replicate_without_repeatability_shows_the_term_missing(cli: Cli) -> None:
    result = cli.ok(*A2)
    rows = [line for line in result.stdout.splitlines() if line.strip().startswith("repeat")]
    assert len(rows) == 1 and rows[0].split()[-4:] == ["missing", "missing", "missing", "-"]
    assert "incomplete: repeatability missing" in result.stdout
    assert "one replicate and no validated repeatability" in result.stdout
    out = cli.json(*A2)
    (line,) = [b for b in out["budget"] if b["symbol"] == "f_rep"]
    assert line["missing"] and line["contribution"] == 0
    assert out["repeatability_rsd_percent"] is None
    assert any("missing" in note for note in out["uncertainty_notes"])
    # Without the 0.0005 term the combined relative u falls below the guide's 0.00097:
    # sqrt(0.00097^2 - 0.0005^2) = 0.00083, roughly.
    assert out["u"] / out["normality"] < 0.00090


def test_a_validated_repeatability_gives_the_guides_combined_uncertainty(cli: Cli) -> None:
    out = cli.json(*A2, "--repeatability", "0.05")
    assert out["normality"] == pytest.approx(0.10214, abs=0.000005)
    assert round(out["u"], 5) == 0.00010
    assert out["u"] / out["normality"] == pytest.approx(0.00097, rel=0.05)
    assert round(out["U"], 5) == 0.00020
    (line,) = [b for b in out["budget"] if b["symbol"] == "f_rep"]
    assert line["missing"] is None and line["u"] == pytest.approx(0.0005)
    assert out["repeatability_rsd_percent"] == 0.05
    table = cli.ok(*A2, "--repeatability", "0.05").stdout
    assert "missing" not in table and "incomplete" not in table
    assert "validated relative SD 0.0005" in table


@pytest.mark.parametrize(("typed", "word"), [("0", "greater than zero"), ("-1", "zero"),
                                             ("abc", "not a plain decimal"),
                                             ("101", "at most 5 %"), ("5.1", "at most 5 %")])
def test_a_bad_repeatability_is_refused(cli: Cli, typed: str, word: str) -> None:
    refused = cli.refused(*A2, "--repeatability", typed)
    assert "repeatability" in refused.stderr and word in refused.stderr
