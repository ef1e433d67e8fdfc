"""The pH of a salt's solution from its ions' acid and base constants, and why.

Why: the solution at a titration's equivalence point is a salt's solution, and "is this
salt acidic, basic or neutral, and which ion decides" is the question the analyst asks
of it. Each ion is one acid/base system (its ascending pKa values and the protons it
carries, counted from the system's fully deprotonated member) or a spectator (no pKa:
the conjugate of a strong acid or base, Na+, Cl-, NO3-). The salt dissolves into
nu+ cations and nu- anions per formula unit (from the charges), and the pH is the root
of the proton condition over both systems (``equilibria.solve_systems_ph``): the same
charge balance as every other pH in prepbook, with concentrations for activities at
25 C.

Which ion governs: each ion that can give up a proton is an acid with
Ka = 10^-pKa(the step it loses), each that can take one a base with Kb = Kw / Ka(the step
it gains); an amphiprotic ion (hydrogen carbonate, hydrogen phosphate, hydrogen sulfate)
is both. The largest constant among them governs; the salt is called acidic or basic
when its pH lies more than ``NEUTRAL_BAND`` from neutral (pKw / 2), else neutral (a salt
of a weak acid and a weak base of equal strength, ammonium acetate, is neutral).
"""

from __future__ import annotations

import math

import msgspec

from prepbook.chem.equilibria import PKW_25C, check_pkas, check_positive, solve_systems_ph
from prepbook.errors import InvalidInput

NEUTRAL_BAND = 0.05
"""pH units either side of neutral within which a salt is called neutral (common
practice, no source: the second decimal of a pH meter's reading)."""


class Ion(msgspec.Struct, frozen=True):
    """An ion: its charge, and its acid/base system (empty ``pkas`` for a spectator).

    ``protons``: protons the ion carries, counted from its system's fully deprotonated
    member (hydrogen carbonate 1 in carbonic acid's system; ammonium 1; acetate 0)."""

    name: str
    charge: int
    pkas: tuple[float, ...] = ()
    protons: int = 0

    def __post_init__(self) -> None:
        if isinstance(self.charge, bool) or not isinstance(self.charge, int) or not self.charge:
            raise InvalidInput(f"ion {self.name}: charge must be a non-zero whole number")
        if self.pkas:
            check_pkas(self.pkas)
        if not 0 <= self.protons <= len(self.pkas):
            raise InvalidInput(f"ion {self.name}: {self.protons} protons on a system of "
                               f"{len(self.pkas)} steps")

    @property
    def pka_as_acid(self) -> float | None:
        """pKa of the proton it can give up, or None."""
        n = len(self.pkas)
        return self.pkas[n - self.protons] if self.protons > 0 else None

    def pkb_as_base(self, pkw: float = PKW_25C) -> float | None:
        """pKb of the proton it can take (pKw - pKa of its conjugate acid), or None."""
        n = len(self.pkas)
        return pkw - self.pkas[n - self.protons - 1] if self.protons < n else None


class Strength(msgspec.Struct, frozen=True):
    """One way an ion acts: as an acid (Ka) or a base (Kb)."""

    ion: str
    acts_as: str  # "acid" | "base"
    pk: float  # pKa or pKb

    @property
    def k(self) -> float:
        return 10.0 ** (-self.pk)


class SaltResult(msgspec.Struct, frozen=True):
    """The salt's solution: pH, what it is, which ion governs and why, in words."""

    cation: str
    anion: str
    cations_per_formula: int
    anions_per_formula: int
    concentration_mol_per_l: float
    ph: float
    nature: str  # "acidic" | "basic" | "neutral"
    governing: str | None  # the ion whose constant is largest; None: both spectators
    strengths: tuple[Strength, ...]
    reason: str


def salt_ph(cation: Ion, anion: Ion, concentration_mol_per_l: float, *,
            pkw: float = PKW_25C) -> SaltResult:
    """pH of ``concentration_mol_per_l`` formula units of the salt of ``cation`` and
    ``anion`` per litre, with the verdict and the governing ion."""
    if cation.charge <= 0 or anion.charge >= 0:
        raise InvalidInput(f"{cation.name} must be a cation and {anion.name} an anion")
    c = check_positive(concentration_mol_per_l, "salt concentration (mol/L)")
    common = math.gcd(cation.charge, -anion.charge)
    nu_plus, nu_minus = -anion.charge // common, cation.charge // common
    systems = []
    carried = 0.0
    for ion, nu in ((cation, nu_plus), (anion, nu_minus)):
        if ion.pkas:
            systems.append((ion.pkas, nu * c))
            carried += nu * c * ion.protons
    ph = pkw / 2.0 if not systems else solve_systems_ph(systems, carried, pkw)
    strengths = []
    for ion in (cation, anion):
        pka, pkb = ion.pka_as_acid, ion.pkb_as_base(pkw)
        if pka is not None:
            strengths.append(Strength(ion.name, "acid", pka))
        if pkb is not None:
            strengths.append(Strength(ion.name, "base", pkb))
    nature = ("acidic" if ph < pkw / 2 - NEUTRAL_BAND
              else "basic" if ph > pkw / 2 + NEUTRAL_BAND else "neutral")
    governing = (min(strengths, key=lambda s: s.pk)
                 if strengths and nature != "neutral" else None)
    return SaltResult(cation.name, anion.name, nu_plus, nu_minus, c, ph, nature,
                      governing.ion if governing else None, tuple(strengths),
                      _reason(strengths, nature))


def _reason(strengths: list[Strength], nature: str) -> str:
    if not strengths:
        return ("neutral: both ions are spectators (conjugates of a strong base and a "
                "strong acid), neither takes nor gives a proton")
    terms = ", ".join(f"{s.ion} as {'an' if s.acts_as == 'acid' else 'a'} {s.acts_as} "
                      f"(K{'a' if s.acts_as == 'acid' else 'b'} {s.k:.2g})"
                      for s in strengths)
    top = min(strengths, key=lambda s: s.pk)
    if nature == "neutral":
        return f"neutral: {terms}; the constants balance, neither ion governs"
    if len({s.ion for s in strengths}) == 1:
        return f"{nature}: {terms}, the other ion a spectator; {top.ion} acts as {top.acts_as}"
    return f"{nature}: {terms}; the largest constant is {top.ion}'s as {top.acts_as}"
