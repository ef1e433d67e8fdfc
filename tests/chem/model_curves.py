"""Titration curves computed from the equilibrium model, with known equivalence volumes.

The curves come from ``prepbook.chem.equilibria.simulate_titration`` (a charge balance
over one acid/base system with strong titrant; concentrations for activities, 25 C),
which ``test_model_curves.py`` checks against a charge balance written out by hand.
The equivalence volumes follow from stoichiometry alone: Ve = k c_sample V0 / c_titrant.
Concentrations are invented, chosen so no endpoint falls on a 0.1 mL mark.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from prepbook.chem.equilibria import simulate_titration


@dataclass(frozen=True)
class Case:
    name: str
    pkas: tuple[float, ...]
    sample_mol_per_l: float
    sample_ml: float
    titrant_mol_per_l: float
    initial_protons: int
    titrant_is_base: bool
    equivalence_ml: tuple[float, ...]  # every endpoint, from stoichiometry
    end_ml: float  # last volume recorded


def _ve(c: float, v0: float, ct: float, k: int) -> float:
    return k * c * v0 / ct


# Sodium carbonate (pKa 6.35, 10.33) titrated with 0.1 mol/L HCl: two endpoints.
CARBONATE = Case("carbonate + HCl", (6.35, 10.33), 0.04126, 50.0, 0.1, 0, False,
                 (_ve(0.04126, 50.0, 0.1, 1), _ve(0.04126, 50.0, 0.1, 2)), 50.0)
# Acetic acid (pKa 4.756) titrated with 0.1 mol/L NaOH.
ACETIC = Case("acetic acid + NaOH", (4.756,), 0.09873, 25.0, 0.1, 1, True,
              (_ve(0.09873, 25.0, 0.1, 1),), 35.0)
# A strong acid (hydrochloric; pKa taken as -6) titrated with 0.1 mol/L NaOH.
STRONG = Case("HCl + NaOH", (-6.0,), 0.10431, 20.0, 0.1, 1, True,
              (_ve(0.10431, 20.0, 0.1, 1),), 30.0)
CASES = (CARBONATE, ACETIC, STRONG)

STEP_PATTERNS = ("even 0.1 mL", "uneven 0.03-0.3 mL")
# Coarse recording, as a manual titration with a pH meter is often logged.
COARSE_PATTERNS = ("even 0.5 mL", "uneven 0.2-0.8 mL")
NOISE_LEVELS = (0.0, 0.005, 0.01)


def moved(case: Case, seed: int, across_ml: float = 0.5) -> Case:
    """The case with its sample concentration scaled so that its last equivalence volume
    moves by a seeded share of ``across_ml`` (0 to 0.95 of it, in twentieths): where an
    endpoint falls between two recorded volumes is then varied too, not only the noise.
    The equivalence volumes still follow from stoichiometry alone."""
    shift = across_ml * (seed % 20) / 20.0 - across_ml / 2.0
    factor = (case.equivalence_ml[-1] + shift) / case.equivalence_ml[-1]
    return replace(case, sample_mol_per_l=case.sample_mol_per_l * factor,
                   equivalence_ml=tuple(ve * factor for ve in case.equivalence_ml))


def volumes(case: Case, pattern: str, seed: int) -> np.ndarray:
    """Recorded volumes: every 0.1 (0.5) mL, or steps drawn evenly between 0.03 and
    0.3 (0.2 and 0.8) mL."""
    even = {STEP_PATTERNS[0]: 0.1, COARSE_PATTERNS[0]: 0.5}
    if pattern in even:
        return np.round(np.arange(0.0, case.end_ml + 1e-9, even[pattern]), 10)
    low, high, offset = ((0.03, 0.3, 10_000) if pattern == STEP_PATTERNS[1]
                         else (0.2, 0.8, 20_000))
    rng = np.random.default_rng(offset + seed)
    steps = rng.uniform(low, high, size=int(case.end_ml / low) + 2)
    points = np.concatenate([[0.0], np.cumsum(steps)])
    return np.round(points[points <= case.end_ml], 4)


def curve(case: Case, pattern: str, noise_ph: float, seed: int
          ) -> tuple[list[float], list[float]]:
    """(volumes, pH) with Gaussian noise of SD ``noise_ph`` from a seeded generator."""
    v = volumes(case, pattern, seed)
    ph = np.asarray(simulate_titration(
        v.tolist(), pkas=case.pkas, sample_concentration_mol_per_l=case.sample_mol_per_l,
        sample_ml=case.sample_ml, titrant_concentration_mol_per_l=case.titrant_mol_per_l,
        initial_protons=case.initial_protons, titrant_is_base=case.titrant_is_base))
    ph = ph + np.random.default_rng(seed).normal(0.0, noise_ph, size=len(ph))
    return v.tolist(), ph.tolist()
