"""The catalog's data model: frozen records for each kind of entry, and lookup.

``Catalog`` holds every entry and finds one by code, formula, name or alias (case- and
whitespace-insensitive, one spelling of the hydrate dot); ``reaction_for_pair`` picks the
reactions of a standardization. Nothing here reads a file: ``shape`` and ``build`` turn
the TOML files into these objects, ``checks`` judges them.
"""

from __future__ import annotations

import functools
from collections.abc import Callable, Iterable, Mapping
from typing import Any

import msgspec

from prepbook.errors import NotFound, PrepbookError

REACTION_KINDS = ("acid-base", "redox", "precipitation", "complexation")
ROLES = ("primary-standard", "titrant-solute")
INDICATOR_KINDS = ("acid-base", "redox", "precipitation", "complexation", "self", "instrumental")
SIGNAL_WORDS = ("Danger", "Warning")
UNITS = ("N", "M")
#: How a liquid sample's result is reported: mass of analyte per volume of sample.
CONCENTRATION_UNITS = ("g/L", "mg/L", "g/100 mL")
ACID_BASE = ("acid", "base")

#: Words every reagent's and spec's cautions must contain: the owner's safety rule says to
#: defer to the safety data sheet, local regulations and the lab's procedures.
SDS_DEFERRAL = "safety data sheet"


class CatalogDataError(PrepbookError, ValueError):
    """The catalog's data files are inconsistent (a packaging defect or a bad local edit)."""


def refuse_if_any(problems: Iterable[str]) -> None:
    """Raise CatalogDataError listing every problem, when there is any."""
    found = list(problems)
    if found:
        raise CatalogDataError(
            f"the catalog data has {len(found)} problem(s):\n  " + "\n  ".join(found)
        )


# --------------------------------------------------------------------------- values


class Hazard(msgspec.Struct, frozen=True):
    """GHS classification as printed on a label.

    ``statements`` hold "code text" (e.g. "H314 Causes severe skin burns and eye damage.")
    and ``pictograms`` "code name" (e.g. "GHS05 corrosion"), expanded from the codes in the
    data files so the wording lives in one place (ghs.toml). ``signal_word`` is None when
    the substance is not classified.
    """

    signal_word: str | None
    statements: tuple[str, ...]
    pictograms: tuple[str, ...]
    source: str

    @property
    def statement_codes(self) -> tuple[str, ...]:
        """The H/EUH codes alone, e.g. ("H290", "H314")."""
        return tuple(s.split(" ", 1)[0] for s in self.statements)

    @property
    def pictogram_codes(self) -> tuple[str, ...]:
        """The pictogram codes alone, e.g. ("GHS05",)."""
        return tuple(p.split(" ", 1)[0] for p in self.pictograms)

    @property
    def classified(self) -> bool:
        """True when anything at all is to be printed."""
        return bool(self.signal_word or self.statements or self.pictograms)


class Reaction(msgspec.Struct, frozen=True):
    """One titration reaction of a material; ``n`` is stored per reaction, not per substance.

    ``n`` is equivalents per mole of the material: protons (acid-base), electrons (redox),
    or moles of the 1:1 partner ion (precipitation with Ag+, complexation with EDTA).
    ``titrant`` names the titrant solute a standard's reaction pairs with (None on a
    titrant solute's own reactions); ``titrant_reaction`` names the titrant's reaction when
    it is not the titrant's primary one. ``equation`` is a balanced ionic equation.
    """

    name: str
    kind: str
    n: float
    description: str
    equation: str
    indicator: str | None
    source: str
    titrant: str | None = None
    titrant_reaction: str | None = None

    @property
    def protons(self) -> float | None:
        """Protons exchanged per mole for an acid-base reaction (equals n), else None."""
        return self.n if self.kind == "acid-base" else None


class Material(msgspec.Struct, frozen=True):
    """A primary standard or titrant solute, in the form that is weighed.

    ``reactions[0]`` is the primary reaction. For the acid-base equilibrium model:
    ``acid_base`` says whether the weighed form acts as an acid or a base, ``pka`` lists
    the weak steps of its conjugate acid system (most acidic first; empty for strong),
    ``acid_units`` counts acid-base units per formula unit and ``initial_protons`` the
    protons the weighed form carries over all units, counted from the fully deprotonated
    form (KHP: 1 of 2; carbonate: 0; borax: 4 boric-acid units carrying 2).
    ``sources`` maps a field ("drying", "density", "pka", ...) to where its value came from.
    """

    code: str
    name: str
    formula: str
    aliases: tuple[str, ...]
    roles: tuple[str, ...]
    reactions: tuple[Reaction, ...]
    hazard: Hazard
    drying: str | None = None
    density_g_per_cm3: float | None = None
    acid_base: str | None = None
    pka: tuple[float, ...] = ()
    acid_units: int | None = None
    initial_protons: int | None = None
    cautions: tuple[str, ...] = ()
    note: str = ""
    sources: tuple[tuple[str, str], ...] = ()

    @property
    def lookup_names(self) -> tuple[str, ...]:
        """What finds it: code, formula, name and aliases."""
        return (self.code, self.formula, self.name, *self.aliases)

    def reaction(self, kind: str | None = None, name: str | None = None) -> Reaction:
        """The first reaction matching ``kind`` and/or ``name`` (the primary one by default).

        Raises NotFound naming the reactions the material does have, so a caller asking
        for e.g. a redox reaction of KHP gets a message it can show as is.
        """
        for r in self.reactions:
            same_name = name is None or lookup_key(r.name) == lookup_key(name)
            if same_name and (kind is None or r.kind == kind):
                return r
        wanted = " ".join(x for x in (repr(name) if name else None, kind) if x)
        have = ", ".join(f"{r.name} ({r.kind}, n = {r.n:g})" for r in self.reactions)
        raise NotFound(f"material {self.code} has no {wanted} reaction; it has: {have}")

    def source_of(self, field_name: str) -> str | None:
        """Where the value of ``field_name`` came from, or None if not recorded."""
        return dict(self.sources).get(field_name)

    @property
    def is_primary_standard(self) -> bool:
        return "primary-standard" in self.roles

    @property
    def is_titrant_solute(self) -> bool:
        return "titrant-solute" in self.roles


class Reagent(msgspec.Struct, frozen=True):
    """A concentrated liquid reagent, with its strength as published (not recomputed)."""

    code: str
    name: str
    formula: str
    aliases: tuple[str, ...]
    mass_fraction: float
    density_g_per_ml: float
    molarity_mol_per_l: float | None
    source: str
    cautions: tuple[str, ...]
    hazard: Hazard
    acid_base: str | None = None
    pka: tuple[float, ...] = ()
    note: str = ""
    #: Equivalents per mole in its acid-base use: protons given (an acid) or taken (a
    #: base) per formula unit, from the balanced neutralization; None where it depends
    #: on the endpoint chosen (phosphoric acid), so the user must say.
    n_eq_per_mol: float | None = None

    @property
    def lookup_names(self) -> tuple[str, ...]:
        """What finds it: code, formula, name and aliases."""
        return (self.code, self.formula, self.name, *self.aliases)



class Indicator(msgspec.Struct, frozen=True):
    """An endpoint indicator. Only acid-base indicators carry a pH transition range."""

    name: str
    kind: str
    colours: str
    source: str
    aliases: tuple[str, ...] = ()
    low_ph: float | None = None
    high_ph: float | None = None
    note: str = ""

    @property
    def lookup_names(self) -> tuple[str, ...]:
        """What finds it: name and aliases."""
        return (self.name, *self.aliases)

    @property
    def ph_range(self) -> tuple[float, float] | None:
        """(low, high) transition range, or None where no pH range applies."""
        if self.low_ph is None or self.high_ph is None:
            return None
        return (self.low_ph, self.high_ph)

    def covers(self, ph: float) -> bool:
        """Whether ``ph`` lies within the transition range (ends included).

        Raises NotFound when the indicator has no pH range, rather than answering False,
        so a redox indicator is never silently judged by a pH.
        """
        rng = self.ph_range
        if rng is None:
            raise NotFound(f"indicator {self.name!r} has no pH transition range")
        return rng[0] <= ph <= rng[1]


class SpecDefaults(msgspec.Struct, frozen=True):
    """A built-in solution spec: what to make, how to accept it, how long it lives.

    ``solute`` is a material code and ``reaction_name`` the name of its reaction (hence n).
    ``standard`` is the default primary standard (material code) and ``alternatives`` other
    primary standards that pair with the solute; ``reference_spec`` (a spec code) is the
    standardized solution to use instead for a secondary standardization. Acceptance
    numbers are plain fields so a lab can change them. ``sources`` maps every default to
    its origin (a publication, or "common practice, no source"). A titrant in a solvent
    other than water states the solvent's ``expansion_per_c``, which carries its normality
    between temperatures.
    """

    code: str
    name: str
    solute: str
    reaction_name: str
    nominal: float
    unit: str
    indicator: str
    min_replicates: int
    max_rsd_percent: float
    factor_low: float
    factor_high: float
    drift_limit_percent: float
    restandardize_days: int
    shelf_life_days: int
    storage: str
    hazard: Hazard
    cautions: tuple[str, ...]
    preparation: str
    standard: str | None = None
    alternatives: tuple[str, ...] = ()
    reference_spec: str | None = None
    solvent: str = "water"
    preparation_solid_g_per_l: float | None = None
    preparation_reagent: str | None = None
    preparation_reagent_ml_per_l: float | None = None
    preparation_stock_spec: str | None = None
    preparation_stock_ml_per_l: float | None = None
    sources: tuple[tuple[str, str], ...] = ()
    #: A validated repeatability: relative SD of one result, %, from the method's
    #: validation; a run's uncertainty budget uses it unless the run gives its own.
    repeatability_rsd_percent: float | None = None
    #: The solvent's cubic expansion coefficient (per C) when it is not water (whose
    #: density formula serves aqueous titrants); its source is ``sources["expansion_per_c"]``.
    expansion_per_c: float | None = None

    @property
    def lookup_names(self) -> tuple[str, ...]:
        """What finds it: its code."""
        return (self.code,)

    def source_of(self, field_name: str) -> str | None:
        """Where the value of ``field_name`` came from, or None if not recorded."""
        return dict(self.sources).get(field_name)

# --------------------------------------------------------------------------- lookups


def lookup_key(text: str) -> str:
    """Lookup key: case- and whitespace-insensitive, one spelling of the hydrate dot."""
    squashed = "".join(text.split()).casefold()
    return squashed.replace("·", ".").replace("•", ".").replace("*", ".")


def lookup_index(items: Iterable[Any]) -> dict[str, Any]:
    """Each entry under the lookup key of each of its ``lookup_names`` (the first wins)."""
    index: dict[str, Any] = {}
    for item in items:
        for k in item.lookup_names:
            index.setdefault(lookup_key(k), item)
    return index


def lookup(index: Mapping[str, Any], label: Callable[[Any], str], what: str, query: str) -> Any:
    """Find ``query`` in ``index`` or raise NotFound naming the closest spellings."""
    hit = index.get(lookup_key(query))
    if hit is not None:
        return hit
    import difflib  # only on the failure path

    labels = {k: label(v) for k, v in index.items()}
    close = difflib.get_close_matches(lookup_key(query), list(labels), n=5, cutoff=0.6)
    if close:
        hint = "close matches: " + ", ".join(dict.fromkeys(labels[c] for c in close))
    else:
        hint = "none is close; known: " + ", ".join(dict.fromkeys(labels.values()))
    raise NotFound(f"no {what} {query!r} in the catalog ({hint})")


class Catalog(msgspec.Struct, frozen=True, dict=True):
    """The built-in reference data of preparing and standardizing, indexed for lookup by
    code, formula, name or alias. The analytes and ions of sample titrations are loaded
    apart, when first asked for (``samples``)."""

    materials: tuple[Material, ...]
    reagents: tuple[Reagent, ...]
    indicators: tuple[Indicator, ...]
    specs: tuple[SpecDefaults, ...]
    hazard_statements: Mapping[str, str]
    pictogram_names: Mapping[str, str]

    @functools.cached_property
    def _material_index(self) -> dict[str, Material]:
        return lookup_index(self.materials)

    @functools.cached_property
    def _reagent_index(self) -> dict[str, Reagent]:
        return lookup_index(self.reagents)

    @functools.cached_property
    def _indicator_index(self) -> dict[str, Indicator]:
        return lookup_index(self.indicators)

    @functools.cached_property
    def _spec_index(self) -> dict[str, SpecDefaults]:
        return lookup_index(self.specs)

    def find_material(self, query: str) -> Material:
        return lookup(self._material_index, lambda m: m.code, "material", query)

    def find_reagent(self, query: str) -> Reagent:
        return lookup(self._reagent_index, lambda r: r.code, "reagent", query)

    def find_indicator(self, query: str) -> Indicator:
        return lookup(self._indicator_index, lambda i: i.name, "indicator", query)

    def find_spec(self, code: str) -> SpecDefaults:
        return lookup(self._spec_index, lambda s: s.code, "solution spec", code)


# --------------------------------------------------------------------------- pairing


def reaction_for_pair(
    standard: Material, titrant: Material | None
) -> tuple[Reaction, Reaction | None]:
    """The standard's reaction and the titrant's reaction for a standardization.

    Why: n belongs to the reaction, and which reaction runs depends on the partner. The
    kind follows from the titrant's primary reaction (permanganate means redox in acid);
    without a titrant, the standard's primary reaction applies. Among the standard's
    reactions of that kind, one that names this titrant wins (KHP with perchloric acid in
    acetic acid, not with hydroxide); otherwise, for acid-base only, the first acid-base
    reaction serves any titrant of the opposite nature (carbonate with sulfuric acid as
    with hydrochloric). Anything else is refused: an oxidant is not standardized by a
    reaction written for a different oxidant without the lab adding it to the catalog.
    """
    if titrant is None:
        return standard.reactions[0], None
    t_rx = titrant.reactions[0]
    candidates = [r for r in standard.reactions if r.kind == t_rx.kind]
    if not candidates:
        have = ", ".join(f"{r.name} ({r.kind})" for r in standard.reactions)
        raise NotFound(
            f"{standard.code} has no {t_rx.kind} reaction to standardize {titrant.code} "
            f"({titrant.code} titrates by {t_rx.name}); {standard.code} has: {have}"
        )
    exact = [r for r in candidates if r.titrant == titrant.code]
    if exact:
        std_rx = exact[0]
        if std_rx.titrant_reaction:
            t_rx = titrant.reaction(name=std_rx.titrant_reaction)
        return std_rx, t_rx
    if t_rx.kind == "acid-base" and (
        standard.acid_base is None
        or titrant.acid_base is None
        or standard.acid_base != titrant.acid_base
    ):
        return candidates[0], t_rx
    if t_rx.kind == "acid-base":
        raise NotFound(
            f"{standard.code} is {_a(standard.acid_base)} and {titrant.code} is "
            f"{_a(titrant.acid_base)}: no acid-base reaction of {standard.code} pairs with it"
        )
    names = ", ".join(sorted({r.titrant for r in candidates if r.titrant}))
    raise NotFound(
        f"{standard.code} has no {t_rx.kind} reaction written for {titrant.code} "
        f"(only for: {names or 'none'}); add one to the catalog to pair them"
    )


def _a(word: str | None) -> str:
    """``word`` with its indefinite article ("an acid", "a base")."""
    text = word or "unknown"
    return f"{'an' if text[:1].lower() in 'aeiou' else 'a'} {text}"
