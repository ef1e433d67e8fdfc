"""Choosing a standard's reaction (--reaction) and `calc eqpoint` for any catalog pair.

Sodium carbonate with a strong acid has two endpoints: to hydrogen carbonate (n = 1,
phenolphthalein) and to carbonic acid (n = 2, methyl orange) — any analytical chemistry
text on polyprotic titrations. The pH at the first is that of the amphiprotic ion,
about (pKa1 + pKa2) / 2 = (6.35 + 10.33) / 2 = 8.34 (carbonic acid constants of the
reference list); a strong acid with a strong base gives pH 7.00 at 25 C (pKw 14.00).
"""

from __future__ import annotations

import pytest

from tests.conftest import Cli

# M(Na2CO3) = 2 x 22.98977 + 12.011 + 3 x 15.999 = 105.988 g/mol (IUPAC atomic weights,
# from memory); 0.2650 g in 25.00 mL: 2.50028 mmol -> 0.100011 (n = 1), 0.200022 (n = 2)
NA2CO3_REP = "0.2650:25.00"


def test_calc_normality_follows_the_named_reaction(cli: Cli) -> None:
    base = ["calc", "normality", "--standard", "Na2CO3", "--titrant", "HCl", "--rep", NA2CO3_REP]
    default = cli.json(*base)
    first = cli.json(*base, "--reaction", "acid-base-first")
    assert default["reaction"] == "acid-base" and default["standard"]["n_eq_per_mol"] == 2
    assert first["reaction"] == "acid-base-first" and first["standard"]["n_eq_per_mol"] == 1
    assert default["normality"] == pytest.approx(0.200022, rel=2e-5)
    assert first["normality"] == pytest.approx(0.100011, rel=2e-5)


def test_an_unknown_reaction_gets_one_line_naming_the_known_ones(cli: Cli) -> None:
    for command in (["calc", "normality", "--standard", "Na2CO3", "--titrant", "HCl", "--rep",
                     NA2CO3_REP],
                    ["calc", "eqpoint", "--standard", "Na2CO3", "--titrant", "HCl",
                     "--concentration", "0.05"]):
        bad = cli.refused(*command, "--reaction", "third-endpoint")
        lines = bad.stderr.strip().splitlines()
        assert len(lines) == 1
        assert "acid-base (acid-base, n = 2), acid-base-first (acid-base, n = 1)" in lines[0]


@pytest.mark.parametrize(("standard", "titrant", "extra", "ph"), [
    ("Na2CO3", "HCl", ("--reaction", "acid-base-first"), 8.34),  # (pKa1 + pKa2) / 2
    ("HCl", "NaOH", (), 7.00),  # strong with strong: titrant solutes pair too
    ("NaOH", "HCl", (), 7.00),
    ("Ba(OH)2", "HCl", (), 7.00),
])
def test_eqpoint_for_catalog_pairs(cli: Cli, standard: str, titrant: str,
                                   extra: tuple[str, ...], ph: float) -> None:
    out = cli.json("calc", "eqpoint", "--standard", standard, "--titrant", titrant,
                   "--concentration", "0.05", *extra)
    assert out["ph"] == pytest.approx(ph, abs=0.02)


def test_eqpoint_refuses_what_the_aqueous_model_cannot_describe(cli: Cli) -> None:
    """KHP with perchloric acid in glacial acetic acid acts as a base: not an aqueous
    acid-base titration, so no water pH (it used to print the aqueous 9.05)."""
    bad = cli.refused("calc", "eqpoint", "--standard", "KHP", "--titrant", "HClO4",
                      "--concentration", "0.05")
    assert "aqueous model does not apply" in bad.stderr
    redox = cli.refused("calc", "eqpoint", "--standard", "Na2C2O4", "--titrant", "KMnO4",
                        "--concentration", "0.05")
    assert "redox titration" in redox.stderr
