"""Indicator advice from the titration error, against textbook and pharmacopoeial
statements. Expected errors are worked by hand beside each test (first-order terms:
the excess strong titrant or the sample's unreacted fraction), never by the function.

Transition ranges (from memory, as tabulated in the analytical textbooks): methyl
orange 3.1-4.4, methyl red 4.4-6.2, phenolphthalein 8.2-10.0. pKa at 25 C: acetic acid
4.756, carbonic acid 6.35 and 10.33, phthalic acid 2.946 and 5.409 (NIST critically
selected constants via a standard analytical textbook); sulfamic acid 1.0 (from memory).
"""

from __future__ import annotations

import math

import pytest

from prepbook.chem.equilibria import equivalence_ph, indicator_fit
from prepbook.chem.indicators import (
    Titration,
    indicator_advice,
    titrant_ml_at_ph,
    titration_error_percent,
)
from prepbook.errors import InvalidInput

METHYL_ORANGE = ("methyl orange", 3.1, 4.4)
METHYL_RED = ("methyl red", 4.4, 6.2)
PHENOLPHTHALEIN = ("phenolphthalein", 8.2, 10.0)
INDICATORS = (METHYL_ORANGE, METHYL_RED, PHENOLPHTHALEIN)

# 0.2000 g sulfamic acid (97.09 g/mol) = 2.0600 mmol in 50 mL, 0.1 mol/L NaOH: Ve 20.600 mL.
SULFAMIC = Titration((1.0,), 2.0600e-3 / 0.050, 50.0, 0.1, 1, 1, True)
# 1.5 g sodium carbonate (105.99 g/mol) = 14.152 mmol in 100 mL, 1 mol/L HCl to CO2:
# Ve = 2 x 14.152 = 28.304 mL.
CARBONATE_CLOSED = Titration((6.35, 10.33), 0.14152, 100.0, 1.0, 0, 2, False)
CARBONATE_BOILED = Titration((6.35, 10.33), 0.14152, 100.0, 1.0, 0, 2, False,
                             co2_removed=True)
# 0.1 mol/L acetic acid, 25 mL, 0.1 mol/L NaOH: Ve 25 mL.
ACETIC = Titration((4.756,), 0.1, 25.0, 0.1, 1, 1, True)


def _by_name(titration: Titration) -> dict[str, bool]:
    return {a.name: a.suitable for a in indicator_advice(titration, INDICATORS)}


def test_phenolphthalein_suits_sulfamic_acid_with_sodium_hydroxide() -> None:
    """Strong acid with strong base at 0.1 mol/L: the jump spans about pH 4-10, so
    phenolphthalein's error is negligible (Skoog, Fundamentals of Analytical Chemistry,
    titration curves for strong acids, from memory). By hand at pH 9.1: excess
    OH- 10^-4.9 mol/L in 70.6 mL over 2.06 mmol: +100 * 1.2589e-5 * 70.6 / 2.06 =
    +0.0431 %. The strict rule refuses it (equivalence pH 7.0, outside 8.2-10.0)."""
    error = titration_error_percent(SULFAMIC, 9.1)
    assert error == pytest.approx(100 * 10**-4.9 * 70.6 / 2.06, rel=0.01)
    assert _by_name(SULFAMIC)["phenolphthalein"] is True
    ph_eq = equivalence_ph([1.0], 1, 2.06e-3 / 0.0706, True, initial_protons=1)
    assert "phenolphthalein" in indicator_fit(ph_eq, INDICATORS)[1]  # strict: unsuitable


def test_methyl_red_suits_carbonate_after_boiling_off_carbon_dioxide() -> None:
    """Sodium carbonate with hydrochloric acid to methyl red, boiled near the end to
    expel CO2, then titrated on (USP, volumetric solutions, hydrochloric acid 1 N; the
    same practice in Ph. Eur. 4.2.2 with methyl orange; from memory). By hand at pH
    5.3 after boiling: excess H+ 10^-5.3 mol/L in 128.3 mL over 28.304 mmol:
    100 * 5.012e-6 * 128.3 / 28.304 = +0.00227 %. Without boiling, 8.18 % of the
    carbonate is still HCO3- at pH 5.3 (K1/[H+] = 10^-1.05 = 0.0891, /1.0891), one
    proton of two short: -4.09 %."""
    boiled = titration_error_percent(CARBONATE_BOILED, 5.3)
    closed = titration_error_percent(CARBONATE_CLOSED, 5.3)
    assert boiled == pytest.approx(100 * 10**-5.3 * 128.3 / 28.304, rel=0.01)
    assert closed == pytest.approx(-100 * 0.0891 / 1.0891 / 2, rel=0.01)
    assert _by_name(CARBONATE_BOILED)["methyl red"] is True
    assert _by_name(CARBONATE_CLOSED)["methyl red"] is False
    ph_eq = equivalence_ph([6.35, 10.33], 2, 14.152e-3 / 0.1283, False, initial_protons=0)
    assert "methyl red" in indicator_fit(ph_eq, INDICATORS)[1]  # strict: unsuitable


def test_acetic_acid_takes_phenolphthalein_not_methyl_orange() -> None:
    """Weak acid with strong base: phenolphthalein, not an indicator changing in acid
    (Harris, Quantitative Chemical Analysis, choosing an indicator, from memory).
    By hand at methyl orange's middle, pH 3.75: the fraction of acetate is
    1 / (1 + 10^(4.756 - 3.75)) = 1 / 11.14 = 0.08978, less the free H+ 10^-3.75 =
    1.778e-4 mol/L: V = 25 (0.1 * 0.08978 - 1.778e-4) / (0.1 + 1.778e-4) = 2.1962 mL,
    8.78 % of Ve: -91.22 %."""
    advice = {a.name: a for a in indicator_advice(ACETIC, INDICATORS)}
    assert advice["phenolphthalein"].suitable is True
    assert advice["methyl orange"].suitable is False
    assert advice["methyl orange"].error_percent == pytest.approx(-91.22, abs=0.02)
    assert "beyond 0.1 %" in advice["methyl orange"].reason


def test_carbonate_first_endpoint_with_phenolphthalein_is_poor() -> None:
    """The bicarbonate endpoint is too flat for 0.1 % (Harris, carbonate titrations,
    from memory). By hand at pH 9.1: [CO3 2-]/[HCO3-] = 10^(9.1 - 10.33) = 0.0589, so
    5.56 % of the carbonate has not taken its proton: about -5.6 %."""
    first = Titration((6.35, 10.33), 0.05, 50.0, 0.1, 0, 1, False)
    error = titration_error_percent(first, 9.1)
    assert error is not None and error < -4.0
    assert _by_name(first)["phenolphthalein"] is False


def test_equivalence_volume_and_the_exact_volume_at_a_ph() -> None:
    """Ve = k c V0 / c_t; at pH 7 a strong-strong titration stands at Ve (D = 0, and
    sulfamic acid is fully dissociated there: w = -1)."""
    assert SULFAMIC.equivalence_ml == pytest.approx(20.6)
    assert titrant_ml_at_ph(SULFAMIC, 7.0) == pytest.approx(20.6, rel=1e-6)
    assert titrant_ml_at_ph(SULFAMIC, 0.5) == 0.0  # the sample is already past it
    assert titrant_ml_at_ph(SULFAMIC, 13.5) is None  # 0.1 mol/L NaOH never gets there
    assert titration_error_percent(SULFAMIC, 13.5) is None
    ends = indicator_advice(SULFAMIC, [PHENOLPHTHALEIN])[0].error_range_percent
    assert ends[0] is not None and ends[1] is not None and ends[0] < ends[1]


def test_tolerance_decides() -> None:
    strict = indicator_advice(SULFAMIC, [PHENOLPHTHALEIN], tolerance_percent=0.01)[0]
    assert strict.suitable is False and math.isclose(strict.stop_ph, 9.1)


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"co2_removed": True, "titrant_is_base": True, "initial_protons": 2,
          "protons_transferred": 2}, "boiled off"),
        ({"protons_transferred": 3}, "cannot take 3"),
        ({"sample_ml": 0.0}, "sample volume"),
    ],
)
def test_refusals(kwargs: dict[str, object], message: str) -> None:
    base: dict[str, object] = {"pkas": (6.35, 10.33), "sample_mol_per_l": 0.05,
                               "sample_ml": 50.0, "titrant_mol_per_l": 0.1,
                               "initial_protons": 0, "protons_transferred": 2,
                               "titrant_is_base": False}
    base.update(kwargs)
    with pytest.raises(InvalidInput, match=message):
        Titration(**base)  # type: ignore[arg-type]
    with pytest.raises(InvalidInput, match="not a range"):
        indicator_advice(SULFAMIC, [("odd", 9.0, 8.0)])
