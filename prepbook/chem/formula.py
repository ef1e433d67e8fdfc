"""Molar masses from a chemical formula, with the uncertainty of the atomic weights.

Why: the equivalent weight EW = M/n of a primary standard enters every normality, and
its uncertainty is one line of the GUM budget.

Atomic weights come from ``periodictable``, which carries the CIAAW 2021 abridged
standard atomic weights (Prohaska et al., Pure Appl. Chem. 94 (2022) 573) with their
half-widths in ``Element._mass_unc``. Following EURACHEM/CITAC CG4 (3rd ed., Example
A2), each half-width is taken as a rectangular distribution, multiplied by the number
of atoms of that element (the atoms of one element are fully correlated), and the
element terms are combined in quadrature:

    u(M) = sqrt( sum_i (count_i * U_i / sqrt(3))**2 )

Hydrates may be written with any of the separators "·", "•", "⋅", ".", "*" or "+",
each part optionally led by an integer multiplier: "Na2B4O7·10H2O", "CuSO4.5H2O".
A "." is always a hydrate separator here, never a decimal point: fractional atom
counts are refused.

The formulas of the packaged catalog are looked up in a table computed beforehand by
this module from periodictable (``prepbook/chem/molar_masses.json``, written by
``python -m prepbook.catalog.refresh``), so a command that only needs them does not
import periodictable and its parser. The table holds exactly what the live computation
gives; ``tests/catalog/test_molar_mass_table.py`` recomputes it and fails on any
difference. Every other formula is computed live.
"""

from __future__ import annotations

import functools
import math
import re
from collections.abc import Mapping, Sequence
from pathlib import Path

import msgspec

from prepbook.errors import InvalidInput

ATOMIC_WEIGHTS_EDITION = "CIAAW 2021 abridged standard atomic weights (via periodictable)"
HYDRATE_SEPARATORS = ("·", "•", "⋅", ".", "*", "+")

#: The precomputed molar masses: package data beside this module, read as a plain file.
PRECOMPUTED = Path(__file__).with_name("molar_masses.json")

_SEPARATOR_RE = re.compile("[" + re.escape("".join(HYDRATE_SEPARATORS)) + "]")
_MULTIPLIER_RE = re.compile(r"^(\d+)\s*(.*)$", re.DOTALL)


class MolarMass(msgspec.Struct, frozen=True):
    """A formula's molar mass and its standard uncertainty (g/mol)."""

    formula: str  # as given
    hill: str  # Hill notation of the whole formula, hydrate water included
    value_g_per_mol: float
    u_g_per_mol: float  # standard uncertainty, rectangular per element (CG4)
    atoms: tuple[tuple[str, int], ...]  # (element symbol, count) in Hill order


def hill_order(counts: Mapping[str, int]) -> tuple[tuple[str, int], ...]:
    """Order element counts as Hill notation does: C, then H, then alphabetical."""
    head = [s for s in ("C", "H") if s in counts] if "C" in counts else []
    rest = sorted(s for s in counts if s not in head)
    return tuple((s, counts[s]) for s in head + rest)


def hill_string(atoms: Sequence[tuple[str, int]]) -> str:
    """Render ordered atoms as a Hill formula, counts of one omitted."""
    return "".join(sym if n == 1 else f"{sym}{n}" for sym, n in atoms)


def molar_mass_from_table(
    atoms: Sequence[tuple[str, int]], weights: Mapping[str, tuple[float, float]]
) -> tuple[float, float]:
    """Molar mass and standard uncertainty from atom counts and a table of
    (atomic weight, half-width) per symbol, half-widths rectangular (CG4 A2).

    Separate from :func:`molar_mass` so the combination rule can be checked against a
    published budget that used another atomic-weight edition.
    """
    value = 0.0
    variance = 0.0
    for symbol, count in atoms:
        if symbol not in weights:
            raise InvalidInput(f"no atomic weight for element {symbol!r}")
        weight, half_width = weights[symbol]
        value += count * weight
        variance += (count * half_width / math.sqrt(3.0)) ** 2
    return value, math.sqrt(variance)


def _parse_part(part: str, whole: str) -> tuple[int, dict[str, int]]:
    """One hydrate part -> (multiplier, element counts); periodictable parses the rest."""
    import periodictable
    from periodictable.core import Element, Ion, Isotope

    text = part.strip()
    if not text:
        raise InvalidInput(f"formula {whole!r} has an empty part around a separator")
    multiplier = 1
    match = _MULTIPLIER_RE.match(text)
    if match:
        multiplier = int(match.group(1))
        text = match.group(2).strip()
        if multiplier == 0:
            raise InvalidInput(f"formula {whole!r} has a zero multiplier")
        if not text:
            raise InvalidInput(f"formula {whole!r} has a number with no formula after it")
    try:
        parsed = periodictable.formula(text)
    except Exception as exc:  # pyparsing and ValueError both mean "cannot read"
        raise InvalidInput(f"cannot read formula {whole!r}: {text!r} is not a formula") from exc
    counts: dict[str, int] = {}
    if not parsed.atoms:
        raise InvalidInput(f"cannot read formula {whole!r}: {text!r} holds no element")
    for atom, count in parsed.atoms.items():
        if isinstance(atom, (Isotope, Ion)) or not isinstance(atom, Element) or atom.number < 1:
            raise InvalidInput(
                f"formula {whole!r}: {atom} is not a plain element (isotopes and ions "
                "have no standard atomic weight)"
            )
        if not float(count).is_integer() or count <= 0:
            raise InvalidInput(f"formula {whole!r}: atom count {count:g} of {atom} is not "
                               "a whole number")
        unc = getattr(atom, "_mass_unc", None)
        if not unc:
            raise InvalidInput(f"formula {whole!r}: {atom.symbol} has no standard atomic weight")
        counts[atom.symbol] = counts.get(atom.symbol, 0) + int(count)
    return multiplier, counts


def molar_mass(formula: str) -> MolarMass:
    """Molar mass of a formula (hydrates included) with CIAAW 2021 atomic weights.

    A formula of the packaged catalog, written exactly as there, comes from the
    precomputed table; any other is computed from periodictable. Results are kept per
    formula text (the value is frozen and depends on nothing else), so a service
    computing many runs parses each formula once.
    """
    if isinstance(formula, str):
        known = precomputed().get(formula)
        return known if known is not None else _molar_mass_memo(formula)
    return _molar_mass(formula)


def molar_mass_live(formula: str) -> MolarMass:
    """Molar mass computed from periodictable now, never taken from the table: what the
    table is generated from and checked against."""
    return _molar_mass(formula)


@functools.cache
def precomputed() -> Mapping[str, MolarMass]:
    """The precomputed table: formula text -> MolarMass (read once per process)."""
    import json
    from types import MappingProxyType

    # JSON, not TOML: it is generated, and parsing it costs a fraction of tomllib's time.
    rows = json.loads(PRECOMPUTED.read_bytes())["molar_mass"]
    return MappingProxyType({
        row["formula"]: MolarMass(
            formula=row["formula"],
            hill=row["hill"],
            value_g_per_mol=float(row["value_g_per_mol"]),
            u_g_per_mol=float(row["u_g_per_mol"]),
            atoms=tuple((str(symbol), int(count)) for symbol, count in row["atoms"]),
        )
        for row in rows
    })


@functools.lru_cache(maxsize=512)
def _molar_mass_memo(formula: str) -> MolarMass:
    return _molar_mass(formula)


def _molar_mass(formula: str) -> MolarMass:
    import periodictable

    if not isinstance(formula, str) or not formula.strip():
        raise InvalidInput(f"formula {formula!r} is empty or not text")
    totals: dict[str, int] = {}
    for part in _SEPARATOR_RE.split(formula.strip()):
        multiplier, counts = _parse_part(part, formula)
        for symbol, count in counts.items():
            totals[symbol] = totals.get(symbol, 0) + multiplier * count
    atoms = hill_order(totals)
    table = {}
    for symbol, _ in atoms:
        element = getattr(periodictable, symbol)
        table[symbol] = (float(element.mass), float(element._mass_unc))
    value, u = molar_mass_from_table(atoms, table)
    return MolarMass(
        formula=formula,
        hill=hill_string(atoms),
        value_g_per_mol=value,
        u_g_per_mol=u,
        atoms=atoms,
    )
