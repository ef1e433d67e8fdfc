"""Normality of a titrant from replicate titrations: the facade for services and CLI.

Why: this is the number every later result rests on, so it is computed one way, with
its statistics and its uncertainty, and nothing is dropped or rounded on the way.

Direct standardization against a primary standard (EURACHEM/CITAC CG4 Example A2):

    N = 1000 m P / (EW (V - V_blank)),   EW = M / n   (eq/L; m in g, V in mL)

Secondary standardization against a standardized titrant (CG4 Example A3):

    N_x = N_ref V_aliquot / (V - V_blank)

Each replicate gives its own normality; the result is the mean of the included ones.
Replicates are excluded only by explicit 1-based index; Grubbs' test flags, never
drops. With a buoyancy setting the balance readings are corrected to true mass
(NIST IR 6969 SOP 2) with the standard's density.

How the uncertainty budget is evaluated for several replicates
-------------------------------------------------------------
The GUM model is evaluated once, at the *mean* (true) mass and the *mean* titrant
volume of the included replicates, with a repeatability factor f_rep = 1:

    N = 1000 m P n f_rep / (M (V - V_blank))

- u(m) and u(V) are those of *one* weighing and *one* burette reading (calibration and
  temperature effects, which do not average out); they are not divided by sqrt(n).
- u(f_rep) is the given relative repeatability, or else s/(mean sqrt(n)) of the
  included replicate normalities (the standard uncertainty of their mean). With one
  replicate and none given, repeatability cannot be estimated: the budget carries it
  as a missing line (``BudgetLine.missing``) and a note says so.
- The relative combined uncertainty found at that point is applied to the reported
  mean normality (the two values differ only to second order when the replicate
  masses differ); each contribution is scaled the same way.
- The buoyancy correction's own uncertainty is not in the budget (it is small beside
  the balance linearity for a standard of density near 1.6 g/cm3).
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Callable, Collection, Sequence

import msgspec

from prepbook.chem.corrections import buoyancy_true_mass
from prepbook.chem.stats import OutlierFlag, ReplicateStats, check_excluded, replicate_stats
from prepbook.chem.uncertainty import (
    BudgetLine,
    InputQuantity,
    UncertaintyResult,
    mass_u_from_balance,
    propagate,
    repeatability_term,
    secondary_budget_from_u,
    volume_u_from_burette,
)
from prepbook.errors import InvalidInput

__all__ = [
    "BudgetLine",
    "Buoyancy",
    "OutlierFlag",
    "PrimaryStandard",
    "ReplicateResult",
    "ReplicateStats",
    "StandardizationResult",
    "UncertaintyInputs",
    "UncertaintyResult",
    "direct",
    "direct_normality",
    "mass_u_from_balance",
    "secondary",
    "secondary_normality",
    "volume_u_from_burette",
]


class PrimaryStandard(msgspec.Struct, frozen=True):
    """A primary standard as used in one reaction (n equivalents per mole)."""

    name: str
    molar_mass_g_per_mol: float
    u_molar_mass_g_per_mol: float
    n_eq_per_mol: float
    purity_fraction: float = 1.0
    u_purity_fraction: float = 0.0  # standard uncertainty
    density_g_per_cm3: float | None = None  # for the buoyancy correction

    @property
    def equivalent_weight_g_per_eq(self) -> float:
        return self.molar_mass_g_per_mol / self.n_eq_per_mol


class Buoyancy(msgspec.Struct, frozen=True):
    """Densities for the air-buoyancy correction (NIST IR 6969 SOP 2 defaults)."""

    air_g_per_cm3: float = 0.0012
    weights_g_per_cm3: float = 8.0


class UncertaintyInputs(msgspec.Struct, frozen=True):
    """Standard uncertainties of one reading of each kind (see module docstring)."""

    u_mass_g: float  # one net mass (by difference)
    u_volume_ml: float  # one titrant volume (calibration + temperature)
    u_blank_ml: float = 0.0
    u_aliquot_ml: float = 0.0  # secondary only (pipette)
    u_rel_repeatability: float | None = None  # None -> s/(mean sqrt(n)) of the replicates


class ReplicateResult(msgspec.Struct, frozen=True):
    """One replicate titration and the normality it gives."""

    index: int  # 1-based
    amount: float  # mass_g (direct) or aliquot_ml (secondary), as given
    volume_ml: float
    normality: float
    true_mass_g: float | None  # buoyancy-corrected mass; None when not corrected
    excluded: bool
    outlier: bool


class StandardizationResult(msgspec.Struct, frozen=True):
    """Mean normality of the included replicates, their statistics and uncertainty."""

    normality: float  # eq/L
    replicates: tuple[ReplicateResult, ...]
    stats: ReplicateStats
    uncertainty: UncertaintyResult | None


# --- validation -------------------------------------------------------------------


def _finite(value: object, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InvalidInput(f"{what} {value!r} is not a number")
    if not math.isfinite(value):
        raise InvalidInput(f"{what} {value!r} is not a finite number")
    return float(value)


def _positive(value: object, what: str) -> float:
    v = _finite(value, what)
    if v <= 0:
        raise InvalidInput(f"{what} {v:g} must be positive")
    return v


def _non_negative(value: object, what: str) -> float:
    v = _finite(value, what)
    if v < 0:
        raise InvalidInput(f"{what} {v:g} must not be negative")
    return v


def _check_purity(p: float) -> float:
    v = _finite(p, "purity (mass fraction)")
    if not 0 < v <= 1:
        raise InvalidInput(f"purity {v:g} must be a mass fraction in (0, 1]")
    return v


def _pairs(
    replicates: Sequence[tuple[float, float]], amount_name: str, blank_ml: float
) -> list[tuple[float, float]]:
    if isinstance(replicates, (str, bytes)) or not isinstance(replicates, Sequence):
        raise InvalidInput("replicates must be a sequence of (amount, volume) pairs")
    if len(replicates) == 0:
        raise InvalidInput("no replicates given")
    out = []
    for i, rep in enumerate(replicates, start=1):
        if isinstance(rep, (str, bytes)) or not isinstance(rep, Sequence) or len(rep) != 2:
            raise InvalidInput(f"replicate {i}: {rep!r} is not an ({amount_name}, volume) pair")
        amount = _positive(rep[0], f"replicate {i}: {amount_name}")
        volume = _positive(rep[1], f"replicate {i}: titrant volume (mL)")
        if volume <= blank_ml:
            raise InvalidInput(
                f"replicate {i}: titrant volume {volume:g} mL is not greater than the "
                f"blank {blank_ml:g} mL"
            )
        out.append((amount, volume))
    return out


# --- single-replicate formulas -----------------------------------------------------


def direct_normality(
    mass_g: float,
    purity_fraction: float,
    equivalent_weight_g_per_eq: float,
    volume_ml: float,
    blank_ml: float = 0.0,
) -> float:
    """N = 1000 m P / (EW (V - V_blank)), eq/L."""
    m = _positive(mass_g, "mass (g)")
    p = _check_purity(purity_fraction)
    ew = _positive(equivalent_weight_g_per_eq, "equivalent weight (g/eq)")
    v = _positive(volume_ml, "titrant volume (mL)")
    b = _non_negative(blank_ml, "blank (mL)")
    if v <= b:
        raise InvalidInput(f"titrant volume {v:g} mL is not greater than the blank {b:g} mL")
    return 1000.0 * m * p / (ew * (v - b))


def secondary_normality(
    reference_normality: float, aliquot_ml: float, volume_ml: float, blank_ml: float = 0.0
) -> float:
    """N_x = N_ref V_aliquot / (V - V_blank), eq/L."""
    n_ref = _positive(reference_normality, "reference normality")
    a = _positive(aliquot_ml, "aliquot (mL)")
    v = _positive(volume_ml, "titrant volume (mL)")
    b = _non_negative(blank_ml, "blank (mL)")
    if v <= b:
        raise InvalidInput(f"titrant volume {v:g} mL is not greater than the blank {b:g} mL")
    return n_ref * a / (v - b)


# --- uncertainty helpers -------------------------------------------------------------


def _blank_line(blank_ml: float, u_blank_ml: float) -> InputQuantity | None:
    if blank_ml == 0 and u_blank_ml == 0:
        return None
    return InputQuantity("blank", "V_blank", blank_ml, "mL", u_blank_ml)


def _blank_and_repeatability(
    blank_ml: float, u_blank_ml: float, rep_line: InputQuantity | None,
) -> tuple[list[InputQuantity], Callable[[tuple[float, ...]], tuple[float, float]]]:
    """The optional budget lines that follow a model's own inputs (the blank, the
    repeatability factor), and how the model reads them back: (V_blank, f_rep)."""
    blank_line = _blank_line(blank_ml, u_blank_ml)
    lines = [line for line in (blank_line, rep_line) if line is not None]

    def split(rest: tuple[float, ...]) -> tuple[float, float]:
        extra = list(rest)
        vb = extra.pop(0) if blank_line is not None else 0.0
        f = extra.pop(0) if rep_line is not None else 1.0
        return vb, f

    return lines, split


# --- the two standardizations --------------------------------------------------------


def _finish(
    amounts: list[float],
    volumes: list[float],
    normalities: list[float],
    true_masses: list[float] | None,
    skip: frozenset[int],
) -> tuple[tuple[ReplicateResult, ...], ReplicateStats]:
    stats = replicate_stats(normalities, excluded=skip)
    flagged = stats.outlier.index if stats.outlier is not None else None
    reps = tuple(
        ReplicateResult(
            index=i,
            amount=amounts[i - 1],
            volume_ml=volumes[i - 1],
            normality=normalities[i - 1],
            true_mass_g=true_masses[i - 1] if true_masses is not None else None,
            excluded=i in skip,
            outlier=i == flagged,
        )
        for i in range(1, len(amounts) + 1)
    )
    return reps, stats


def direct(
    standard: PrimaryStandard,
    replicates: Sequence[tuple[float, float]],
    *,
    blank_ml: float = 0.0,
    buoyancy: Buoyancy | None = None,
    uncertainty: UncertaintyInputs | None = None,
    excluded: Collection[int] = (),
) -> StandardizationResult:
    """Standardize against a primary standard from (mass_g, volume_ml) replicates."""
    mm = _positive(standard.molar_mass_g_per_mol, f"molar mass of {standard.name} (g/mol)")
    u_mm = _non_negative(standard.u_molar_mass_g_per_mol, "molar mass uncertainty (g/mol)")
    n_eq = _positive(standard.n_eq_per_mol, f"n of {standard.name} (eq/mol)")
    purity = _check_purity(standard.purity_fraction)
    u_purity = _non_negative(standard.u_purity_fraction, "purity uncertainty")
    blank = _non_negative(blank_ml, "blank (mL)")
    pairs = _pairs(replicates, "mass (g)", blank)
    skip = check_excluded(len(pairs), excluded)

    true_masses: list[float] | None = None
    if buoyancy is not None:
        if standard.density_g_per_cm3 is None:
            raise InvalidInput(
                f"no density is known for {standard.name}; cannot correct for buoyancy"
            )
        density = _positive(standard.density_g_per_cm3, f"density of {standard.name}")
        true_masses = [
            buoyancy_true_mass(m, density, air=buoyancy.air_g_per_cm3,
                               weights=buoyancy.weights_g_per_cm3)
            for m, _ in pairs
        ]
    masses = true_masses if true_masses is not None else [m for m, _ in pairs]
    ew = mm / n_eq
    normalities = [direct_normality(m, purity, ew, v, blank)
                   for m, (_, v) in zip(masses, pairs, strict=True)]
    reps, stats = _finish([m for m, _ in pairs], [v for _, v in pairs], normalities,
                          true_masses, skip)

    budget = None
    if uncertainty is not None:
        kept = [i - 1 for i in range(1, len(pairs) + 1) if i not in skip]
        mean_mass = statistics.fmean(masses[i] for i in kept)
        mean_volume = statistics.fmean(pairs[i][1] for i in kept)
        rep = repeatability_term(uncertainty.u_rel_repeatability, stats.values)
        rep_line, notes = rep.line, rep.notes
        inputs = [
            InputQuantity("mass of primary standard", "m", mean_mass, "g",
                          _non_negative(uncertainty.u_mass_g, "mass uncertainty (g)")),
            InputQuantity("purity", "P", purity, "1", u_purity),
            InputQuantity("molar mass", "M", mm, "g/mol", u_mm),
            InputQuantity("titrant volume", "V", mean_volume, "mL",
                          _non_negative(uncertainty.u_volume_ml, "volume uncertainty (mL)")),
        ]
        extra_lines, split = _blank_and_repeatability(
            blank, _non_negative(uncertainty.u_blank_ml, "blank uncertainty (mL)"), rep_line)
        inputs += extra_lines

        def model(m, p, m_molar, v, *rest):  # type: ignore[no-untyped-def]
            vb, f = split(rest)
            return 1000.0 * m * p * n_eq * f / (m_molar * (v - vb))

        if len(kept) > 1:
            notes = ("evaluated at the mean mass and mean titrant volume of the "
                     f"{len(kept)} included replicates",) + notes
        budget = propagate(model, inputs, report_value=stats.mean, notes=notes,
                           missing=rep.missing)
    return StandardizationResult(normality=stats.mean, replicates=reps, stats=stats,
                                 uncertainty=budget)


def secondary(
    reference_normality: float,
    u_reference_normality: float | None,
    replicates: Sequence[tuple[float, float]],
    *,
    blank_ml: float = 0.0,
    uncertainty: UncertaintyInputs | None = None,
    excluded: Collection[int] = (),
) -> StandardizationResult:
    """Standardize against a standardized titrant from (aliquot_ml, volume_ml) pairs.

    ``u_reference_normality`` is the reference's own standard uncertainty (eq/L), as its
    record gives it; None when the record holds none (the budget then names it missing).
    """
    n_ref = _positive(reference_normality, "reference normality")
    u_ref = (None if u_reference_normality is None else
             _non_negative(u_reference_normality, "reference normality uncertainty"))
    blank = _non_negative(blank_ml, "blank (mL)")
    pairs = _pairs(replicates, "aliquot (mL)", blank)
    skip = check_excluded(len(pairs), excluded)
    normalities = [secondary_normality(n_ref, a, v, blank) for a, v in pairs]
    reps, stats = _finish([a for a, _ in pairs], [v for _, v in pairs], normalities, None,
                          skip)

    budget = None
    if uncertainty is not None:
        kept = [i - 1 for i in range(1, len(pairs) + 1) if i not in skip]
        notes: tuple[str, ...] = ()
        if len(kept) > 1:
            notes = ("evaluated at the mean aliquot and mean titrant volume of the "
                     f"{len(kept)} included replicates",)
        budget = secondary_budget_from_u(
            n_ref, u_ref, statistics.fmean(pairs[i][0] for i in kept),
            _non_negative(uncertainty.u_aliquot_ml, "aliquot uncertainty (mL)"),
            statistics.fmean(pairs[i][1] for i in kept),
            _non_negative(uncertainty.u_volume_ml, "volume uncertainty (mL)"),
            u_rel_repeatability=uncertainty.u_rel_repeatability,
            replicate_normalities=stats.values, blank_ml=blank,
            u_blank_ml=_non_negative(uncertainty.u_blank_ml, "blank uncertainty (mL)"),
            report_value=stats.mean, notes=notes)
    return StandardizationResult(normality=stats.mean, replicates=reps, stats=stats,
                                 uncertainty=budget)
