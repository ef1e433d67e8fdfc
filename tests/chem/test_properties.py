"""Properties that must hold for any reasonable input (hypothesis)."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as s

from prepbook.chem import preparation as prep
from prepbook.chem import standardization as st
from prepbook.chem.corrections import water_density_kg_per_m3

KHP = st.PrimaryStandard("KHP", 204.2212, 0.0038, 1.0, 0.9998, 0.0001)

masses = s.floats(0.05, 5.0)
volumes = s.floats(2.0, 50.0)
normalities = s.floats(0.001, 2.0)
scales = s.floats(0.1, 10.0)


@given(s.lists(s.tuples(masses, volumes), min_size=1, max_size=6), scales, s.data())
def test_scaling_mass_and_volume_together_leaves_n_unchanged(reps, k, data) -> None:
    """N = 1000 m P / (EW V) is homogeneous of degree 0 in (m, V) (no blank)."""
    i = data.draw(s.integers(0, len(reps) - 1))
    scaled = list(reps)
    scaled[i] = (reps[i][0] * k, reps[i][1] * k)
    a, b = st.direct(KHP, reps), st.direct(KHP, scaled)
    assert b.normality == pytest.approx(a.normality, rel=1e-12)


@given(normalities, normalities, masses, s.floats(5.0, 50.0))
def test_secondary_then_direct_round_trip(n_titrant, n_reference, mass_g, aliquot_ml) -> None:
    """A titrant of known strength, titrated against a primary standard and against a
    reference solution, gives its strength back both ways (N1 V1 = N2 V2)."""
    v_direct = 1000 * mass_g * KHP.purity_fraction / (KHP.equivalent_weight_g_per_eq
                                                       * n_titrant)
    v_secondary = n_reference * aliquot_ml / n_titrant
    direct = st.direct(KHP, [(mass_g, v_direct)])
    secondary = st.secondary(n_reference, 0.0, [(aliquot_ml, v_secondary)])
    assert direct.normality == pytest.approx(n_titrant, rel=1e-12)
    assert secondary.normality == pytest.approx(n_titrant, rel=1e-12)


@given(s.floats(0.5, 5.0), s.floats(0.9, 1.1), s.floats(0.01, 0.4), s.floats(100, 5000))
def test_dilution_then_adjustment_returns_the_target(stock, error, target, volume) -> None:
    """Dilute assuming the stock is ``stock``; its real strength is ``stock*error``; the
    adjustment (water, or the same stock) brings the batch back to the target by mass
    balance of equivalents (volumes additive, common practice, no source)."""
    real_stock = stock * error
    d = prep.dilution(stock, target, volume)
    made = real_stock * d.stock_ml / volume
    a = prep.adjust(made, target, volume, stock_n=real_stock)
    added_eq = real_stock * a.volume_ml if a.add == "stock" else 0.0
    final = (made * volume + added_eq) / a.final_volume_ml
    assert final == pytest.approx(target, rel=1e-9)


@given(s.floats(4.0, 39.0), s.floats(0.01, 1.0))
def test_water_density_falls_above_4_c(t, step) -> None:
    """Tanaka 2001: water is densest near 4 C, so density falls with temperature above it."""
    assert water_density_kg_per_m3(t + step) < water_density_kg_per_m3(t)
