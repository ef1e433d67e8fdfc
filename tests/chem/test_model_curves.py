"""The modelled curves the endpoint tests rest on, checked by a charge balance written out
by hand (not by the solver under test): at every point the positive charges equal the
negative ones.

Species fractions of a diprotic acid H2A (Harris, Quantitative Chemical Analysis,
"Diprotic acids and bases", from memory): with h = [H+],
D = h^2 + K1 h + K1 K2, a(HA-) = K1 h / D, a(A2-) = K1 K2 / D; for a monoprotic HA,
a(A-) = Ka / (h + Ka). Kw = 1e-14 at 25 C.
"""

from __future__ import annotations

import pytest

from tests.chem.model_curves import ACETIC, CARBONATE, STEP_PATTERNS, STRONG, curve

KW = 1e-14


def _charges(case, v_ml: float, ph: float) -> tuple[float, float]:  # type: ignore[no-untyped-def]
    h = 10.0**-ph
    total = case.sample_ml + v_ml
    c = case.sample_mol_per_l * case.sample_ml / total
    titrant = case.titrant_mol_per_l * v_ml / total
    if case is CARBONATE:
        k1, k2 = 10.0**-6.35, 10.0**-10.33
        d = h * h + k1 * h + k1 * k2
        sodium = 2 * c  # Na2CO3
        positive = sodium + h
        negative = c * (k1 * h + 2 * k1 * k2) / d + KW / h + titrant  # + Cl- of HCl
    else:
        ka = 10.0 ** -case.pkas[0]
        positive = titrant + h  # Na+ of NaOH
        negative = c * ka / (h + ka) + KW / h
    return positive, negative


@pytest.mark.parametrize("case", [CARBONATE, ACETIC, STRONG], ids=lambda c: c.name)
def test_model_curve_satisfies_the_charge_balance(case) -> None:  # type: ignore[no-untyped-def]
    volumes, ph = curve(case, STEP_PATTERNS[0], 0.0, 0)
    for v, p in list(zip(volumes, ph, strict=True))[::7]:
        positive, negative = _charges(case, v, p)
        assert positive == pytest.approx(negative, rel=1e-8)


def test_equivalence_volumes_are_stoichiometric() -> None:
    """Ve = k c V0 / c_titrant, worked by hand: 0.04126 * 50 / 0.1 = 20.63 mL, twice
    that 41.26 mL; 0.09873 * 25 / 0.1 = 24.6825 mL; 0.10431 * 20 / 0.1 = 20.862 mL."""
    assert CARBONATE.equivalence_ml == pytest.approx((20.63, 41.26))
    assert ACETIC.equivalence_ml == pytest.approx((24.6825,))
    assert STRONG.equivalence_ml == pytest.approx((20.862,))


def test_noise_is_seeded_and_has_the_stated_spread() -> None:
    _, clean = curve(ACETIC, STEP_PATTERNS[0], 0.0, 3)
    _, noisy = curve(ACETIC, STEP_PATTERNS[0], 0.01, 3)
    _, again = curve(ACETIC, STEP_PATTERNS[0], 0.01, 3)
    assert noisy == again
    residuals = [a - b for a, b in zip(noisy, clean, strict=True)]
    spread = (sum(r * r for r in residuals) / len(residuals)) ** 0.5
    assert 0.008 < spread < 0.012
