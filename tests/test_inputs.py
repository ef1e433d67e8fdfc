"""What a person types as a number: scientific notation read, digits of other scripts
refused by name. Expected values worked by hand."""

from __future__ import annotations

import pytest

from prepbook.errors import InvalidInput
from prepbook.inputs import parse_number, parse_replicate
from tests.conftest import Cli


@pytest.mark.parametrize(
    ("typed", "value", "decimals"),
    [
        ("1.5e-3", 0.0015, 4),  # 1.5 x 10^-3 = 0.0015
        ("2E-4", 0.0002, 4),
        ("6.02e+2", 602.0, 0),
        ("1e2", 100.0, 0),
        ("0.1000", 0.1, 4),  # plain decimals as before
    ],
)
def test_scientific_notation_is_read_and_kept_as_typed(typed: str, value: float,
                                                       decimals: int) -> None:
    reading = parse_number(typed, "concentration (mol/L)")
    assert reading.value == pytest.approx(value, rel=1e-15)
    assert reading.text == typed
    assert reading.decimals == decimals


@pytest.mark.parametrize("typed", ["1e", "e5", "1.5e-3.2", "1e+", "1.5 e-3", "1e1234", "nan",
                                   "inf", "1_000"])
def test_what_reads_more_than_one_way_is_refused(typed: str) -> None:
    with pytest.raises(InvalidInput, match="volume"):
        parse_number(typed, "volume (mL)")


def test_out_of_range_exponents_are_refused_not_rounded() -> None:
    for typed in ("1e999", "1e-400"):  # infinite, or zero, as a float
        with pytest.raises(InvalidInput, match="out of the range"):
            parse_number(typed, "mass (g)")


@pytest.mark.parametrize(
    ("typed", "named"),
    [
        ("৪", "U+09EA BENGALI DIGIT FOUR"),
        ("0.৪", "U+09EA BENGALI DIGIT FOUR"),
        ("١٢", "U+0661 ARABIC-INDIC DIGIT ONE"),
        ("２0.05", "U+FF12 FULLWIDTH DIGIT TWO"),
    ],
)
def test_digits_of_other_scripts_are_refused_by_name(typed: str, named: str) -> None:
    with pytest.raises(InvalidInput) as caught:
        parse_number(typed, "titrant volume (mL)")
    message = str(caught.value)
    assert named in message and "0-9" in message
    assert "\n" not in message


def test_a_replicate_in_scientific_notation_keeps_its_text() -> None:
    entry = parse_replicate("8.085e-1:39.16", 1)
    assert entry.amount.text == "8.085e-1" and entry.amount.value == pytest.approx(0.8085)


def test_calc_reads_scientific_notation_and_refuses_a_bengali_digit(cli: Cli) -> None:
    # 1 mL of 1.0e-1 N NaOH is equivalent to 0.1 mmol of KHP, 20.42 mg (M 204.22 g/mol).
    out = cli.json("calc", "titer", "--titrant", "NaOH", "--normality", "1.0e-1",
                   "--analyte", "KHP")
    assert out["mg_per_ml"] == pytest.approx(20.422, abs=0.001)
    refused = cli.refused("calc", "titer", "--titrant", "NaOH", "--normality", "0.১",
                          "--analyte", "KHP")
    assert "U+09E7 BENGALI DIGIT ONE" in refused.stderr
    assert len(refused.stderr.strip().splitlines()) == 1
