"""The catalog's entries for samples: analytes with their methods, and ions.

``Analyte`` is what a sample is titrated for, with the ways of titrating it
(``AnalyteMethod``, one per titrant and endpoint); ``method_for`` picks the method for a
titrant. ``Ion`` carries an ion's charge and acid/base system for a salt's pH.
``Samples`` holds them all, indexed for lookup; ``AnalyteTitration`` is an analyte with
one titrant as the computation takes it. Nothing here reads a file (``samples`` loads
them); ``checks`` judges them.
"""

from __future__ import annotations

import functools
from typing import TYPE_CHECKING

import msgspec

from prepbook.catalog.models import (
    CONCENTRATION_UNITS,
    Material,
    lookup,
    lookup_index,
    lookup_key,
)
from prepbook.errors import NotFound

if TYPE_CHECKING:
    from prepbook.chem.sample import Analyte as SampleAnalyte

__all__ = ["CONCENTRATION_UNITS", "Analyte", "AnalyteMethod", "AnalyteTitration", "Ion",
           "Samples", "method_for"]


class AnalyteMethod(msgspec.Struct, frozen=True):
    """One way of titrating an analyte: the titrant, and ``n`` per mole of the analyte.

    ``n`` counts the analyte's equivalents in the same convention as the titrant's own
    reaction (protons, electrons, or moles of the 1:1 partner for Ag+ and EDTA), so that
    equivalents of analyte = equivalents of titrant. ``excess_reagent`` makes it a
    back-titration: a measured excess of that reagent (a material code) reacts with the
    analyte and what is left of it is titrated with ``titrant``.
    """

    name: str
    kind: str
    titrant: str
    n: float
    description: str
    equation: str
    source: str
    indicator: str | None = None
    titrant_reaction: str | None = None
    excess_reagent: str | None = None

    @property
    def is_back_titration(self) -> bool:
        return self.excess_reagent is not None


class Analyte(msgspec.Struct, frozen=True):
    """What a sample is titrated for, with the ways of titrating it.

    ``unit`` is how the trade reports a liquid sample's result (g/L, mg/L, g/100 mL);
    ``report_as`` names a formula the result is expressed as (total alkalinity and
    hardness "as CaCO3"), with ``report_as_n`` its equivalents per mole in the methods'
    convention. The acid-base fields are those of ``Material`` (for the equivalence pH).
    """

    code: str
    name: str
    formula: str
    aliases: tuple[str, ...]
    unit: str
    methods: tuple[AnalyteMethod, ...]
    report_as: str | None = None
    report_as_n: float | None = None
    acid_base: str | None = None
    pka: tuple[float, ...] = ()
    acid_units: int | None = None
    initial_protons: int | None = None
    note: str = ""
    sources: tuple[tuple[str, str], ...] = ()

    @property
    def lookup_names(self) -> tuple[str, ...]:
        """What finds it: code, name and aliases (a formula such as Cl is an alias)."""
        return (self.code, self.name, *self.aliases)

    def source_of(self, field_name: str) -> str | None:
        """Where the value of ``field_name`` came from, or None if not recorded."""
        return dict(self.sources).get(field_name)


def method_for(analyte: Analyte, titrant: Material, name: str | None = None) -> AnalyteMethod:
    """The analyte's method with ``titrant`` (its ``name`` when given).

    A method written for this titrant wins; otherwise an acid-base method serves any
    strong titrant of the opposite nature (acetic acid with potassium or barium hydroxide
    as with sodium hydroxide: n of the analyte does not depend on which strong base).
    Anything else is refused, naming the methods the analyte has.
    """
    named = [m for m in analyte.methods
             if name is None or lookup_key(m.name) == lookup_key(name)]
    exact = [m for m in named if m.titrant == titrant.code]
    if exact:
        return exact[0]
    kind = titrant.reactions[0].kind if titrant.reactions else None
    if (kind == "acid-base" and analyte.acid_base is not None
            and titrant.acid_base is not None and analyte.acid_base != titrant.acid_base):
        for m in named:
            if m.kind == "acid-base" and m.excess_reagent is None:
                return m
    have = "; ".join(f"{m.name} (titrant {m.titrant})" for m in analyte.methods)
    wanted = f" {name!r}" if name else ""
    raise NotFound(f"{analyte.name} has no method{wanted} with {titrant.code}; it has: {have}")


class Ion(msgspec.Struct, frozen=True):
    """An ion for a salt's pH: its charge and acid/base system (``pka`` empty for a
    spectator), with ``protons`` it carries counted from the system's fully deprotonated
    member."""

    name: str
    formula: str
    charge: int
    source: str
    aliases: tuple[str, ...] = ()
    pka: tuple[float, ...] = ()
    protons: int = 0

    @property
    def lookup_names(self) -> tuple[str, ...]:
        """What finds it: name, formula and aliases."""
        return (self.name, self.formula, *self.aliases)


class Samples(msgspec.Struct, frozen=True, dict=True):
    """The built-in analytes and ions, indexed for lookup by code, name, formula or alias."""

    analytes: tuple[Analyte, ...]
    ions: tuple[Ion, ...]

    @functools.cached_property
    def _analyte_index(self) -> dict[str, Analyte]:
        return lookup_index(self.analytes)

    def find_analyte(self, query: str) -> Analyte:
        return lookup(self._analyte_index, lambda a: a.code, "analyte", query)

    @functools.cached_property
    def _ion_index(self) -> dict[str, Ion]:
        return lookup_index(self.ions)

    def find_ion(self, query: str) -> Ion:
        return lookup(self._ion_index, lambda i: i.name, "ion", query)


class AnalyteTitration(msgspec.Struct, frozen=True):
    """An analyte with one titrant, as ``prepbook.chem.sample`` computes it.

    ``analyte``/``method``: the catalog's entries; ``titrant`` the titrant's material and
    ``titrant_n_eq_per_mol`` its n in the reaction the method pairs with (to turn a
    molarity into a normality); ``excess_reagent`` and its n for a back-titration (else
    None); ``computed``: the analyte in the terms of the computation, molar masses
    included (with their atomic-weight uncertainty).
    """

    analyte: Analyte
    method: AnalyteMethod
    titrant: Material
    titrant_n_eq_per_mol: float
    excess_reagent: Material | None
    excess_reagent_n_eq_per_mol: float | None
    computed: SampleAnalyte
