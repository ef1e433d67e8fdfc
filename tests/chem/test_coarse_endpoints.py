"""Endpoints of coarsely recorded curves: every 0.5 mL, as a manual titration with a pH
meter is often logged.

The curves are computed from the equilibrium model with equivalence volumes from
stoichiometry alone (tests/chem/model_curves.py: ``prepbook.chem.equilibria``, checked
against a hand-written charge balance in test_model_curves.py). Each seed sets the noise
and, through ``model_curves.moved``, where the equivalence volume falls between two
readings (ten placings across the 0.5 mL step), so a bound cannot hold by the luck of
one placing.

The bounds are choices of this program, set between what the finder reaches and what
the filter-wide window reached before. Worst errors at 0.5 mL steps and 0.01 pH of
noise from ``python tests/benchmarks/endpoint_bench.py --steps coarse --move`` (30
seeds; table in DEVELOPERS.md), after / before, and on these ten placings before:

- carbonate with HCl, first endpoint: 0.051 / 0.078 mL, here 0.068-0.078 before
  -> bound 0.06 mL; second endpoint: 0.027 / 0.105 mL, here 0.094-0.107 -> 0.04 mL;
- acetic acid with NaOH: 0.097 / 0.149 mL, here 0.144 -> bound 0.12 mL;
- HCl with NaOH: 0.143 / 0.183 mL, here 0.180 -> bound 0.16 mL. Its jump lies wholly
  between two readings; an estimate that only knew which step holds it could be off by
  half the step (0.25 mL): the readings on either side tell a little more.
"""

from __future__ import annotations

import pytest

from prepbook.chem.inflections import find_endpoints
from tests.chem.model_curves import ACETIC, CARBONATE, COARSE_PATTERNS, STRONG, Case, curve, moved

EVERY_HALF_ML = COARSE_PATTERNS[0]
PLACINGS = range(0, 20, 2)  # seeds: ten placings of the equivalence volume across the step
NOISES = (0.005, 0.01)


def _worst_errors(case: Case, noise: float) -> list[float]:
    """The worst |found - Ve| of each endpoint over the placings, in mL."""
    worst = [0.0] * len(case.equivalence_ml)
    for seed in PLACINGS:
        placed = moved(case, seed)
        v, ph = curve(placed, EVERY_HALF_ML, noise, seed)
        found = find_endpoints(v, ph, sample_ml=placed.sample_ml).inflections
        assert len(found) == len(placed.equivalence_ml)
        for i, (item, true) in enumerate(zip(found, placed.equivalence_ml, strict=True)):
            worst[i] = max(worst[i], abs(item.volume_ml - true))
            # Every estimate lies within twice its own stated standard uncertainty.
            assert abs(item.volume_ml - true) <= 2 * item.u_ml
    return worst


@pytest.mark.parametrize("noise", NOISES)
def test_carbonate_with_strong_acid_both_endpoints(noise: float) -> None:
    first, second = _worst_errors(CARBONATE, noise)
    assert first <= 0.06
    assert second <= 0.04


@pytest.mark.parametrize("noise", NOISES)
def test_weak_acid_with_strong_base_within_0_12_ml(noise: float) -> None:
    (worst,) = _worst_errors(ACETIC, noise)
    assert worst <= 0.12


@pytest.mark.parametrize("noise", NOISES)
def test_strong_acid_with_strong_base_within_0_16_ml(noise: float) -> None:
    (worst,) = _worst_errors(STRONG, noise)
    assert worst <= 0.16


@pytest.mark.parametrize("case", (CARBONATE, ACETIC, STRONG), ids=lambda c: c.name)
def test_the_span_finds_the_endpoints_but_hardly_moves_them(case: Case) -> None:
    """Five, seven (the default) or ten steps of derivative span place each endpoint
    within 0.03 mL of one another (the old window, as wide as the filter's peak, moved
    them by 0.09 to 0.21 mL on these curves; bound a choice of this program)."""
    for seed in PLACINGS:
        placed = moved(case, seed)
        v, ph = curve(placed, EVERY_HALF_ML, 0.01, seed)
        spans = [[item.volume_ml for item in
                  find_endpoints(v, ph, smoothing_ml=steps * 0.5).inflections]
                 for steps in (5, 7, 10)]
        assert all(len(found) == len(placed.equivalence_ml) for found in spans)
        for at in zip(*spans, strict=True):
            assert max(at) - min(at) <= 0.03


def test_moved_cases_keep_stoichiometric_equivalence_volumes() -> None:
    """Ve = k c V0 / c_titrant after the move, worked by hand for carbonate's placing 10:
    the last endpoint moves by 0.5 * 10/20 - 0.25 = 0 mL, placing 0 by -0.25 mL."""
    assert moved(CARBONATE, 10).equivalence_ml == pytest.approx(CARBONATE.equivalence_ml)
    shifted = moved(CARBONATE, 0)
    assert shifted.equivalence_ml[1] == pytest.approx(41.26 - 0.25)
    assert shifted.equivalence_ml[0] == pytest.approx((41.26 - 0.25) / 2)
    assert 2 * shifted.sample_mol_per_l * 50.0 / 0.1 == pytest.approx(41.01)


def _mixed_steps(case: Case, end_ml: float, fine_ml: float) -> list[float]:
    """Every 0.5 mL, and every ``fine_ml`` within 1 mL of the (last) equivalence volume,
    as a meter doses: up to ``end_ml``."""
    ve = case.equivalence_ml[-1]
    coarse = [i * 0.5 for i in range(int(end_ml / 0.5) + 1)]
    fine = [ve - 1.0 + i * fine_ml for i in range(int(round(2.0 / fine_ml)) + 1)]
    return sorted({round(x, 4) for x in coarse + fine if x <= end_ml})


@pytest.mark.parametrize("seed", range(4))
def test_mixed_steps_take_the_span_from_the_fine_steps_around_the_jump(seed: int) -> None:
    """Logged every 0.5 mL and every 0.05 mL within 1 mL of the endpoint (0.004 pH of
    noise): the fit uses the fine readings, within 0.015 mL of Ve (a choice of this
    program; before, a span of seven median steps, 3.5 mL, left it 0.03-0.06 mL off)."""
    import numpy as np

    from prepbook.chem.equilibria import simulate_titration

    placed = moved(ACETIC, 3 * seed + 1)
    v = _mixed_steps(placed, 30.0, 0.05)
    ph = np.asarray(simulate_titration(
        v, pkas=placed.pkas, sample_concentration_mol_per_l=placed.sample_mol_per_l,
        sample_ml=placed.sample_ml, titrant_concentration_mol_per_l=placed.titrant_mol_per_l,
        initial_protons=placed.initial_protons, titrant_is_base=placed.titrant_is_base))
    ph = ph + np.random.default_rng(seed).normal(0.0, 0.004, size=len(ph))
    (found,) = find_endpoints(v, ph.tolist()).inflections
    assert abs(found.volume_ml - placed.equivalence_ml[0]) <= 0.015


def test_a_curve_stopped_soon_after_its_jump_is_found_with_the_default_span() -> None:
    """Every 0.5 mL, every 0.2 mL from 1 mL before the endpoint, stopped 1.8 mL after
    it: seven median steps (3.5 mL) of span reached past the end and the curve was
    refused; seven of its 0.2 mL steps find it (within 0.03 mL: a choice of this
    program)."""
    from prepbook.chem.equilibria import simulate_titration

    ve = ACETIC.equivalence_ml[0]
    v = _mixed_steps(ACETIC, ve + 1.8, 0.2)
    ph = simulate_titration(v, pkas=ACETIC.pkas,
                            sample_concentration_mol_per_l=ACETIC.sample_mol_per_l,
                            sample_ml=ACETIC.sample_ml,
                            titrant_concentration_mol_per_l=ACETIC.titrant_mol_per_l,
                            initial_protons=1)
    (found,) = find_endpoints(v, [round(p, 3) for p in ph]).inflections
    assert abs(found.volume_ml - ve) <= 0.03


def test_the_step_where_the_reading_changes_is_a_weighted_median() -> None:
    """Worked by hand: steps 0.5, 0.5, 0.05, 0.05, 0.05 mL with reading changes 0.1, 0.1,
    1, 1, 1: sorted by step the changes add up to 1, 2, 3, 3.1, 3.2; half of 3.2 is
    reached within the second 0.05 mL step. A flat curve falls back."""
    import numpy as np

    from prepbook.chem.inflections import _step_where_it_changes

    steps = np.array([0.5, 0.5, 0.05, 0.05, 0.05])
    changes = np.array([0.1, 0.1, 1.0, 1.0, 1.0])
    assert _step_where_it_changes(steps, changes, 0.5) == 0.05
    assert _step_where_it_changes(steps, np.array([1.0, 1.0, 0.1, 0.1, 0.1]), 0.05) == 0.5
    assert _step_where_it_changes(steps, np.zeros(5), 0.3) == 0.3
