"""Load the built-in reference catalog from the TOML files in ``prepbook/catalog/data``.

The data lives in plain, human-editable text files (materials, concentrated reagents,
indicators, solution specs, GHS wording) so a chemist can read and correct it without
touching code; this module only parses, validates and indexes it.

Why it is written this way:

- Standard library only (``tomllib``) and nothing heavy at import time, because the
  command line imports the catalog for fast commands. A formula is valid when
  ``prepbook.chem.formula.molar_mass`` gives it a mass: the packaged formulas come from
  its precomputed table (``prepbook/chem/molar_masses.json``), so loading the packaged data
  imports no periodictable; any formula not in the table (a local edit, a test's
  altered copy) is parsed by periodictable.
- The parsed catalog is cached (``functools.cache``): the files are read once per process.
- Loading validates everything (formulas parse, n > 0, ranges ordered, every reference
  between files resolves, every default names its source) and refuses the whole catalog
  with one message listing every problem, so a bad edit cannot half-load.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, fields
from typing import TYPE_CHECKING, Any

from prepbook.errors import InvalidInput, NotFound, PrepbookError

if TYPE_CHECKING:
    from pathlib import Path

REACTION_KINDS = ("acid-base", "redox", "precipitation", "complexation")
ROLES = ("primary-standard", "titrant-solute")
INDICATOR_KINDS = ("acid-base", "redox", "precipitation", "complexation", "self", "instrumental")
SIGNAL_WORDS = ("Danger", "Warning")
UNITS = ("N", "M")
ACID_BASE = ("acid", "base")

#: Words every reagent's and spec's cautions must contain: the owner's safety rule says to
#: defer to the safety data sheet, local regulations and the lab's procedures.
SDS_DEFERRAL = "safety data sheet"

_FILES = ("ghs.toml", "materials.toml", "reagents.toml", "indicators.toml", "specs.toml")


class CatalogDataError(PrepbookError, ValueError):
    """The catalog's data files are inconsistent (a packaging defect or a bad local edit)."""


# --------------------------------------------------------------------------- values


@dataclass(frozen=True)
class Hazard:
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


@dataclass(frozen=True)
class Reaction:
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


@dataclass(frozen=True)
class Material:
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

    def reaction(self, kind: str | None = None, name: str | None = None) -> Reaction:
        """The first reaction matching ``kind`` and/or ``name`` (the primary one by default).

        Raises NotFound naming the reactions the material does have, so a caller asking
        for e.g. a redox reaction of KHP gets a message it can show as is.
        """
        for r in self.reactions:
            if (name is None or _key(r.name) == _key(name)) and (kind is None or r.kind == kind):
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


@dataclass(frozen=True)
class Reagent:
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


@dataclass(frozen=True)
class Indicator:
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


@dataclass(frozen=True)
class SpecDefaults:
    """A built-in solution spec: what to make, how to accept it, how long it lives.

    ``solute`` is a material code and ``reaction_name`` the name of its reaction (hence n).
    ``standard`` is the default primary standard (material code) and ``alternatives`` other
    primary standards that pair with the solute; ``reference_spec`` (a spec code) is the
    standardized solution to use instead for a secondary standardization. Acceptance
    numbers are plain fields so a lab can change them. ``sources`` maps every default to
    its origin (a publication, or "common practice, no source").
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

    def source_of(self, field_name: str) -> str | None:
        """Where the value of ``field_name`` came from, or None if not recorded."""
        return dict(self.sources).get(field_name)

    def solute_material(self) -> Material:
        """The solute's catalog entry (built-in catalog)."""
        return find_material(self.solute)

    def solute_reaction(self) -> Reaction:
        """The solute's reaction this spec uses, which fixes n."""
        return self.solute_material().reaction(name=self.reaction_name)


# --------------------------------------------------------------------------- lookups


def _key(text: str) -> str:
    """Lookup key: case- and whitespace-insensitive, one spelling of the hydrate dot."""
    squashed = "".join(text.split()).casefold()
    return squashed.replace("·", ".").replace("•", ".").replace("*", ".")


def _index(items: Iterable[Any], keys: Callable[[Any], Iterable[str]]) -> dict[str, Any]:
    index: dict[str, Any] = {}
    for item in items:
        for k in keys(item):
            index.setdefault(_key(k), item)
    return index


def _lookup(index: Mapping[str, Any], labels: Mapping[str, str], what: str, query: str) -> Any:
    """Find ``query`` in ``index`` or raise NotFound naming the closest spellings."""
    hit = index.get(_key(query))
    if hit is not None:
        return hit
    import difflib  # only on the failure path

    close = difflib.get_close_matches(_key(query), list(labels), n=5, cutoff=0.6)
    if close:
        hint = "close matches: " + ", ".join(dict.fromkeys(labels[c] for c in close))
    else:
        hint = "none is close; known: " + ", ".join(dict.fromkeys(labels.values()))
    raise NotFound(f"no {what} {query!r} in the catalog ({hint})")


@dataclass(frozen=True)
class Catalog:
    """All built-in reference data, indexed for lookup by code, formula, name or alias."""

    materials: tuple[Material, ...]
    reagents: tuple[Reagent, ...]
    indicators: tuple[Indicator, ...]
    specs: tuple[SpecDefaults, ...]
    hazard_statements: Mapping[str, str]
    pictogram_names: Mapping[str, str]

    @functools.cached_property
    def _material_index(self) -> dict[str, Material]:
        return _index(self.materials, lambda m: (m.code, m.formula, m.name, *m.aliases))

    @functools.cached_property
    def _reagent_index(self) -> dict[str, Reagent]:
        return _index(self.reagents, lambda r: (r.code, r.formula, r.name, *r.aliases))

    @functools.cached_property
    def _indicator_index(self) -> dict[str, Indicator]:
        return _index(self.indicators, lambda i: (i.name, *i.aliases))

    @functools.cached_property
    def _spec_index(self) -> dict[str, SpecDefaults]:
        return _index(self.specs, lambda s: (s.code,))

    @staticmethod
    def _labels(index: Mapping[str, Any], label: Callable[[Any], str]) -> dict[str, str]:
        return {k: label(v) for k, v in index.items()}

    def find_material(self, query: str) -> Material:
        idx = self._material_index
        hit = idx.get(_key(query))  # the labels for a "did you mean" only on a miss
        if hit is not None:
            return hit
        return _lookup(idx, self._labels(idx, lambda m: m.code), "material", query)

    def find_reagent(self, query: str) -> Reagent:
        idx = self._reagent_index
        hit = idx.get(_key(query))  # the labels for a "did you mean" only on a miss
        if hit is not None:
            return hit
        return _lookup(idx, self._labels(idx, lambda r: r.code), "reagent", query)

    def find_indicator(self, query: str) -> Indicator:
        idx = self._indicator_index
        hit = idx.get(_key(query))  # the labels for a "did you mean" only on a miss
        if hit is not None:
            return hit
        return _lookup(idx, self._labels(idx, lambda i: i.name), "indicator", query)

    def find_spec(self, code: str) -> SpecDefaults:
        idx = self._spec_index
        hit = idx.get(_key(code))  # the labels for a "did you mean" only on a miss
        if hit is not None:
            return hit
        return _lookup(idx, self._labels(idx, lambda s: s.code), "solution spec", code)


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
            f"{standard.code} is an {standard.acid_base} and {titrant.code} is an "
            f"{titrant.acid_base}: no acid-base reaction of {standard.code} pairs with it"
        )
    names = ", ".join(sorted({r.titrant for r in candidates if r.titrant}))
    raise NotFound(
        f"{standard.code} has no {t_rx.kind} reaction written for {titrant.code} "
        f"(only for: {names or 'none'}); add one to the catalog to pair them"
    )


# --------------------------------------------------------------------------- reading


class _Reader:
    """Typed, strict access to one TOML table; collects problems instead of raising.

    Unknown keys are problems too, so a misspelt field is reported, never ignored.
    """

    def __init__(self, table: Any, where: str, problems: list[str]) -> None:
        self.where = where
        self.problems = problems
        self.table: dict[str, Any] = table if isinstance(table, dict) else {}
        if not isinstance(table, dict):
            problems.append(f"{where}: expected a table")
        self.used: set[str] = set()

    def _get(self, key: str, required: bool) -> Any:
        self.used.add(key)
        if key not in self.table:
            if required:
                self.problems.append(f"{self.where}: missing {key!r}")
            return None
        return self.table[key]

    def text(self, key: str, default: str | None = None) -> str:
        value = self._get(key, default is None)
        if value is None:
            return default or ""
        if not isinstance(value, str) or not value.strip():
            self.problems.append(f"{self.where}: {key!r} must be non-empty text")
            return ""
        return value

    def opt_text(self, key: str) -> str | None:
        value = self._get(key, False)
        if value is None:
            return None
        if not isinstance(value, str) or not value.strip():
            self.problems.append(f"{self.where}: {key!r} must be non-empty text")
            return None
        return value

    def opt_number(self, key: str) -> float | None:
        value = self._get(key, False)
        if value is None:
            return None
        if isinstance(value, bool) or not isinstance(value, int | float):
            self.problems.append(f"{self.where}: {key!r} must be a number, not {value!r}")
            return None
        return float(value)

    def number(self, key: str) -> float:
        value = self.opt_number(key)
        if key not in self.table:
            self.problems.append(f"{self.where}: missing {key!r}")
        return math.nan if value is None else value

    def opt_whole(self, key: str) -> int | None:
        value = self._get(key, False)
        if value is None:
            return None
        if isinstance(value, bool) or not isinstance(value, int):
            self.problems.append(f"{self.where}: {key!r} must be a whole number, not {value!r}")
            return None
        return value

    def whole(self, key: str) -> int:
        value = self.opt_whole(key)
        if key not in self.table:
            self.problems.append(f"{self.where}: missing {key!r}")
        return 0 if value is None else value

    def strs(self, key: str) -> tuple[str, ...]:
        value = self._get(key, False)
        if value is None:
            return ()
        if not isinstance(value, list) or not all(isinstance(v, str) and v for v in value):
            self.problems.append(f"{self.where}: {key!r} must be a list of text")
            return ()
        return tuple(value)

    def floats(self, key: str) -> tuple[float, ...]:
        value = self._get(key, False)
        if value is None:
            return ()
        if not isinstance(value, list) or not all(
            isinstance(v, int | float) and not isinstance(v, bool) for v in value
        ):
            self.problems.append(f"{self.where}: {key!r} must be a list of numbers")
            return ()
        return tuple(float(v) for v in value)

    def sub(self, key: str, required: bool = True) -> _Reader:
        value = self._get(key, required)
        return _Reader({} if value is None else value, f"{self.where}.{key}", self.problems)

    def subs(self, key: str) -> list[_Reader]:
        value = self._get(key, False)
        if value is None:
            return []
        if not isinstance(value, list):
            self.problems.append(f"{self.where}: {key!r} must be an array of tables")
            return []
        return [_Reader(v, f"{self.where}.{key}[{i}]", self.problems) for i, v in enumerate(value)]

    def text_map(self, key: str) -> dict[str, str]:
        value = self._get(key, False)
        if value is None:
            return {}
        if not isinstance(value, dict) or not all(
            isinstance(v, str) and v.strip() for v in value.values()
        ):
            self.problems.append(f"{self.where}: {key!r} must map names to non-empty text")
            return {}
        return dict(value)

    def done(self) -> None:
        extra = sorted(set(self.table) - self.used)
        if extra:
            self.problems.append(f"{self.where}: unknown key(s) {', '.join(extra)}")


def _hazard(r: _Reader, statements: Mapping[str, str], pictograms: Mapping[str, str]) -> Hazard:
    texts = []
    for code in r.strs("statements"):
        if code in statements:
            texts.append(f"{code} {statements[code]}")
        else:
            r.problems.append(f"{r.where}: unknown hazard statement {code!r} (add it to ghs.toml)")
    pics = []
    for code in r.strs("pictograms"):
        if code in pictograms:
            pics.append(f"{code} {pictograms[code]}")
        else:
            r.problems.append(f"{r.where}: unknown pictogram {code!r}")
    signal = r.opt_text("signal_word")
    if signal is not None and signal not in SIGNAL_WORDS:
        r.problems.append(f"{r.where}: signal_word must be one of {SIGNAL_WORDS}, not {signal!r}")
    hazard = Hazard(signal, tuple(texts), tuple(pics), r.text("source"))
    r.done()
    return hazard


def _reaction(r: _Reader) -> Reaction:
    rx = Reaction(
        name=r.text("name"),
        kind=r.text("kind"),
        n=r.number("n"),
        description=r.text("description"),
        equation=r.text("equation"),
        indicator=r.opt_text("indicator"),
        source=r.text("source"),
        titrant=r.opt_text("titrant"),
        titrant_reaction=r.opt_text("titrant_reaction"),
    )
    r.done()
    return rx


_MATERIAL_SOURCE_KEYS = ("formula", "drying", "density", "pka", "acid_units", "initial_protons")


def _material(r: _Reader, ghs: tuple[Mapping[str, str], Mapping[str, str]]) -> Material:
    sources = r.text_map("sources")
    for k in sorted(set(sources) - set(_MATERIAL_SOURCE_KEYS)):
        r.problems.append(f"{r.where}.sources: unknown key {k!r}")
    m = Material(
        code=r.text("code"),
        name=r.text("name"),
        formula=r.text("formula"),
        aliases=r.strs("aliases"),
        roles=r.strs("roles"),
        reactions=tuple(_reaction(x) for x in r.subs("reaction")),
        hazard=_hazard(r.sub("hazard"), *ghs),
        drying=r.opt_text("drying"),
        density_g_per_cm3=r.opt_number("density_g_per_cm3"),
        acid_base=r.opt_text("acid_base"),
        pka=r.floats("pka"),
        acid_units=r.opt_whole("acid_units"),
        initial_protons=r.opt_whole("initial_protons"),
        cautions=r.strs("cautions"),
        note=r.text("note", default=""),
        sources=tuple(sorted(sources.items())),
    )
    r.done()
    return m


def _reagent(r: _Reader, ghs: tuple[Mapping[str, str], Mapping[str, str]]) -> Reagent:
    g = Reagent(
        code=r.text("code"),
        name=r.text("name"),
        formula=r.text("formula"),
        aliases=r.strs("aliases"),
        mass_fraction=r.number("mass_fraction"),
        density_g_per_ml=r.number("density_g_per_ml"),
        molarity_mol_per_l=r.opt_number("molarity_mol_per_l"),
        source=r.text("source"),
        cautions=r.strs("cautions"),
        hazard=_hazard(r.sub("hazard"), *ghs),
        acid_base=r.opt_text("acid_base"),
        pka=r.floats("pka"),
        note=r.text("note", default=""),
    )
    r.done()
    return g


def _indicator(r: _Reader) -> Indicator:
    ind = Indicator(
        name=r.text("name"),
        kind=r.text("kind"),
        colours=r.text("colours"),
        source=r.text("source"),
        aliases=r.strs("aliases"),
        low_ph=r.opt_number("low_ph"),
        high_ph=r.opt_number("high_ph"),
        note=r.text("note", default=""),
    )
    r.done()
    return ind


_SPEC_FIELDS = {f.name for f in fields(SpecDefaults)}
#: Fields whose default must name a source (the owner's rule: every default says where
#: it came from). Optional ones are required only when the spec has a value.
_SPEC_SOURCED = (
    "min_replicates",
    "max_rsd_percent",
    "factor_low",
    "factor_high",
    "drift_limit_percent",
    "restandardize_days",
    "shelf_life_days",
    "storage",
    "preparation",
)
_SPEC_SOURCED_IF_SET = ("standard", "reference_spec", "solvent")


def _spec(
    raw: Any,
    defaults: Mapping[str, Any],
    default_sources: Mapping[str, str],
    where: str,
    problems: list[str],
    ghs: tuple[Mapping[str, str], Mapping[str, str]],
) -> SpecDefaults:
    table = dict(raw) if isinstance(raw, dict) else {}
    own = _Reader(table, where, problems).text_map("sources")
    for key in sorted(set(defaults) & set(table)):
        if key not in own:
            problems.append(f"{where}: overrides the default {key!r} without naming its source")
    merged = {**defaults, **table}
    sources = {**default_sources, **own}
    for k in sorted(set(sources) - _SPEC_FIELDS):
        problems.append(f"{where}.sources: unknown key {k!r}")
    merged.pop("sources", None)
    r = _Reader(merged, where, problems)
    s = SpecDefaults(
        code=r.text("code"),
        name=r.text("name"),
        solute=r.text("solute"),
        reaction_name=r.text("reaction"),
        nominal=r.number("nominal"),
        unit=r.text("unit"),
        indicator=r.text("indicator"),
        min_replicates=r.whole("min_replicates"),
        max_rsd_percent=r.number("max_rsd_percent"),
        factor_low=r.number("factor_low"),
        factor_high=r.number("factor_high"),
        drift_limit_percent=r.number("drift_limit_percent"),
        restandardize_days=r.whole("restandardize_days"),
        shelf_life_days=r.whole("shelf_life_days"),
        storage=r.text("storage"),
        hazard=_hazard(r.sub("hazard"), *ghs),
        cautions=r.strs("cautions"),
        preparation=r.text("preparation"),
        standard=r.opt_text("standard"),
        alternatives=r.strs("alternatives"),
        reference_spec=r.opt_text("reference_spec"),
        solvent=r.text("solvent", default="water"),
        preparation_solid_g_per_l=r.opt_number("preparation_solid_g_per_l"),
        preparation_reagent=r.opt_text("preparation_reagent"),
        preparation_reagent_ml_per_l=r.opt_number("preparation_reagent_ml_per_l"),
        preparation_stock_spec=r.opt_text("preparation_stock_spec"),
        preparation_stock_ml_per_l=r.opt_number("preparation_stock_ml_per_l"),
        sources=tuple(sorted(sources.items())),
    )
    r.done()
    for key in _SPEC_SOURCED:
        if key not in sources:
            problems.append(f"{where}: no source named for {key!r}")
    for key in _SPEC_SOURCED_IF_SET:
        if key in merged and key not in sources:
            problems.append(f"{where}: no source named for {key!r}")
    return s


#: The data files as parsed, beside them: ``{"digest": ..., "files": {name: parsed}}``.
PARSED_COPY = "parsed.json"


def files_digest(raw: Mapping[str, bytes]) -> str:
    """Each data file's name, length and CRC-32, in their fixed order.

    Enough to tell an edited file from the one the parsed copy was made from (a chance
    edit keeping both length and CRC is about one in four billion); it is no guard
    against tampering, and needs none: whoever can edit these files can edit the copy.
    zlib is loaded at start-up anyway; hashlib would cost more than the whole check.
    """
    import zlib

    return ";".join(f"{name}:{len(raw[name])}:{zlib.crc32(raw[name]):08x}" for name in _FILES)


def _parsed_copy(base: Path, raw: Mapping[str, bytes]) -> dict[str, Any] | None:
    """The parsed copy's data when it was made from exactly these bytes, else None.

    Why: tomllib is pure Python and parsing the five files costs more than the rest
    of ``calc normality``; JSON is parsed in C. The copy is used only when its recorded
    digest equals the digest of the files as they are now, so an edited file (a
    chemist's correction, a test's altered copy) is always read from its TOML. A
    missing, unreadable or stale copy is simply not used.
    """
    import json

    try:
        stored = json.loads((base / PARSED_COPY).read_bytes())
    except (OSError, ValueError):
        return None
    if not isinstance(stored, dict) or stored.get("digest") != files_digest(raw):
        return None
    files = stored.get("files")
    if not isinstance(files, dict) or set(files) != set(_FILES):
        return None
    return files


def _read_raw(base: Path) -> dict[str, bytes]:
    raw: dict[str, bytes] = {}
    for name in _FILES:
        try:
            raw[name] = (base / name).read_bytes()
        except FileNotFoundError as exc:
            raise CatalogDataError(f"catalog file {name} is missing ({exc})") from exc
    return raw


def parse_files(raw: Mapping[str, bytes]) -> dict[str, Any]:
    """The data files parsed from their TOML text (what the parsed copy must equal)."""
    import tomllib

    data: dict[str, Any] = {}
    for name in _FILES:
        try:
            # Newlines as a text-mode read gives them (\r\n and \r become \n).
            text = raw[name].decode("utf-8").replace("\r\n", "\n").replace("\r", "\n")
            data[name] = tomllib.loads(text)
        except UnicodeDecodeError as exc:
            raise CatalogDataError(f"catalog file {name} is not UTF-8 text: {exc}") from exc
        except tomllib.TOMLDecodeError as exc:
            raise CatalogDataError(f"catalog file {name} is not valid TOML: {exc}") from exc
    return data


def data_directory(directory: Path | None = None) -> Path:
    """Where the data files are: the package's own (package data) by default."""
    from pathlib import Path

    return Path(__file__).with_name("data") if directory is None else Path(directory)


def _read_files(directory: Path | None) -> dict[str, Any]:
    base = data_directory(directory)
    raw = _read_raw(base)
    parsed = _parsed_copy(base, raw)
    return parsed if parsed is not None else parse_files(raw)


def build_catalog(data: Mapping[str, Any]) -> tuple[Catalog, tuple[str, ...]]:
    """Turn the parsed files (keyed by file name) into a Catalog and its shape problems.

    Kept separate from reading so tests can feed altered data and see it refused.
    """
    problems: list[str] = []
    ghs = _Reader(data.get("ghs.toml", {}), "ghs.toml", problems)
    ghs_tables = (ghs.text_map("statements"), ghs.text_map("pictograms"))
    ghs.text("source")
    ghs.done()

    mats = _Reader(data.get("materials.toml", {}), "materials.toml", problems)
    materials = tuple(_material(x, ghs_tables) for x in mats.subs("material"))
    mats.done()

    rgs = _Reader(data.get("reagents.toml", {}), "reagents.toml", problems)
    reagents = tuple(_reagent(x, ghs_tables) for x in rgs.subs("reagent"))
    rgs.done()

    inds = _Reader(data.get("indicators.toml", {}), "indicators.toml", problems)
    indicators = tuple(_indicator(x) for x in inds.subs("indicator"))
    inds.done()

    sp = _Reader(data.get("specs.toml", {}), "specs.toml", problems)
    defaults_reader = sp.sub("defaults", required=False)
    default_sources = defaults_reader.text_map("sources")
    defaults = {k: v for k, v in defaults_reader.table.items() if k != "sources"}
    for k in sorted(set(defaults) - _SPEC_FIELDS):
        problems.append(f"specs.toml.defaults: unknown key {k!r}")
    raw_specs = sp.table.get("spec", [])
    sp.used.add("spec")
    sp.done()
    specs = tuple(
        _spec(raw, defaults, default_sources, f"specs.toml.spec[{i}]", problems, ghs_tables)
        for i, raw in enumerate(raw_specs if isinstance(raw_specs, list) else [])
    )
    catalog = Catalog(materials, reagents, indicators, specs, ghs_tables[0], ghs_tables[1])
    return catalog, tuple(problems)


# --------------------------------------------------------------------------- checking


def _formula_problem(formula: str) -> str | None:
    """None if ``formula`` has a positive molar mass, as computed for every use of it
    (precomputed table or periodictable), else the reason."""
    from prepbook.chem.formula import molar_mass  # light: periodictable only off the table

    try:
        mass = molar_mass(formula).value_g_per_mol
    except InvalidInput as exc:
        return f"does not parse ({exc})"
    if not mass > 0:
        return "has no mass"
    return None


def _unique(items: Sequence[Any], keys: Callable[[Any], Iterable[str]], what: str) -> list[str]:
    """Problems for lookup keys that two entries share (a lookup would be ambiguous)."""
    owner: dict[str, str] = {}
    problems = []
    for item in items:
        label = getattr(item, "code", None) or item.name
        for k in dict.fromkeys(_key(k) for k in keys(item)):
            if k in owner and owner[k] != label:
                problems.append(f"{what} {label}: {k!r} is also a name of {owner[k]}")
            owner.setdefault(k, label)
    return problems


def _check_hazard(h: Hazard, where: str) -> list[str]:
    return [] if h.source.strip() else [f"{where}: hazard has no source"]


def _check_material(m: Material, cat: Catalog) -> list[str]:
    w = f"material {m.code}"
    out = []
    reason = _formula_problem(m.formula)
    if reason:
        out.append(f"{w}: formula {m.formula!r} {reason}")
    if not m.roles or set(m.roles) - set(ROLES):
        out.append(f"{w}: roles must be some of {ROLES}, not {m.roles}")
    if not m.reactions:
        out.append(f"{w}: has no reaction")
    names = [r.name for r in m.reactions]
    if len(set(names)) != len(names):
        out.append(f"{w}: reaction names repeat: {names}")
    indicator_names = {_key(i.name) for i in cat.indicators}
    for r in m.reactions:
        rw = f"{w} reaction {r.name}"
        if r.kind not in REACTION_KINDS:
            out.append(f"{rw}: kind must be one of {REACTION_KINDS}, not {r.kind!r}")
        if not (math.isfinite(r.n) and r.n > 0):
            out.append(f"{rw}: n must be a positive number, not {r.n}")
        if r.indicator and _key(r.indicator) not in indicator_names:
            out.append(f"{rw}: unknown indicator {r.indicator!r}")
        if r.kind == "acid-base" and m.acid_base is None:
            out.append(f"{rw}: an acid-base reaction needs acid_base on the material")
        if m.is_primary_standard and not r.titrant:
            out.append(f"{rw}: a primary standard's reaction must name its titrant")
        if r.titrant_reaction and not r.titrant:
            out.append(f"{rw}: titrant_reaction without titrant")
        if r.titrant:
            t = next((x for x in cat.materials if x.code == r.titrant), None)
            if t is None or not t.is_titrant_solute:
                out.append(f"{rw}: titrant {r.titrant!r} is not a titrant solute in the catalog")
            else:
                t_rx = next(
                    (x for x in t.reactions if x.name == (r.titrant_reaction or x.name)), None
                )
                if t_rx is None:
                    out.append(f"{rw}: {t.code} has no reaction {r.titrant_reaction!r}")
                elif t_rx.kind != r.kind:
                    out.append(f"{rw}: kind {r.kind} but {t.code}'s {t_rx.name} is {t_rx.kind}")
    if m.acid_base is not None and m.acid_base not in ACID_BASE:
        out.append(f"{w}: acid_base must be 'acid' or 'base', not {m.acid_base!r}")
    if m.acid_base is None:
        if m.pka or m.acid_units is not None or m.initial_protons is not None:
            out.append(f"{w}: pka/acid_units/initial_protons given without acid_base")
    else:
        if m.acid_units is None or m.acid_units < 1:
            out.append(f"{w}: acid_units must be a whole number >= 1")
        if m.initial_protons is None or m.initial_protons < 0:
            out.append(f"{w}: initial_protons must be a whole number >= 0")
        elif m.pka and m.acid_units and m.initial_protons > m.acid_units * len(m.pka):
            out.append(
                f"{w}: initial_protons {m.initial_protons} exceeds the {m.acid_units} x "
                f"{len(m.pka)} protons its acid system can carry"
            )
    if list(m.pka) != sorted(m.pka):
        out.append(f"{w}: pka values must be in increasing order (most acidic first)")
    if m.density_g_per_cm3 is not None and not m.density_g_per_cm3 > 0:
        out.append(f"{w}: density must be positive")
    needs = {
        "drying": m.drying is not None,
        "density": m.density_g_per_cm3 is not None,
        "pka": bool(m.pka),
    }
    for key, needed in needs.items():
        if needed and not m.source_of(key):
            out.append(f"{w}: no source named for {key!r}")
    return out + _check_hazard(m.hazard, w)


def _check_reagent(g: Reagent) -> list[str]:
    w = f"reagent {g.code}"
    out = []
    reason = _formula_problem(g.formula)
    if reason:
        out.append(f"{w}: formula {g.formula!r} {reason}")
    if not 0 < g.mass_fraction <= 1:
        out.append(f"{w}: mass_fraction must be in (0, 1], not {g.mass_fraction}")
    if not g.density_g_per_ml > 0:
        out.append(f"{w}: density must be positive")
    if g.molarity_mol_per_l is not None and not g.molarity_mol_per_l > 0:
        out.append(f"{w}: molarity must be positive")
    if g.acid_base is not None and g.acid_base not in ACID_BASE:
        out.append(f"{w}: acid_base must be 'acid' or 'base'")
    if list(g.pka) != sorted(g.pka):
        out.append(f"{w}: pka values must be in increasing order")
    if not any(SDS_DEFERRAL in c for c in g.cautions):
        out.append(f"{w}: cautions must defer to the {SDS_DEFERRAL}")
    return out + _check_hazard(g.hazard, w)


def _check_indicator(i: Indicator) -> list[str]:
    w = f"indicator {i.name}"
    out = []
    if i.kind not in INDICATOR_KINDS:
        out.append(f"{w}: kind must be one of {INDICATOR_KINDS}, not {i.kind!r}")
    if (i.low_ph is None) != (i.high_ph is None):
        out.append(f"{w}: give both low_ph and high_ph, or neither")
    if i.ph_range is not None:
        low, high = i.ph_range
        if i.kind != "acid-base":
            out.append(f"{w}: only acid-base indicators have a pH range")
        if not 0 <= low < high <= 14:
            out.append(f"{w}: pH range {low}-{high} must be ordered and within 0-14")
    return out


def _check_spec(s: SpecDefaults, cat: Catalog) -> list[str]:
    w = f"spec {s.code}"
    out: list[str] = []
    mats = {m.code: m for m in cat.materials}
    specs = {x.code: x for x in cat.specs}
    solute = mats.get(s.solute)
    if solute is None or not solute.is_titrant_solute:
        out.append(f"{w}: solute {s.solute!r} is not a titrant solute in the catalog")
        return out
    if not s.code.startswith(s.solute + "-"):
        out.append(f"{w}: code should start with the solute code {s.solute!r}")
    rx = next((r for r in solute.reactions if r.name == s.reaction_name), None)
    if rx is None:
        out.append(f"{w}: {s.solute} has no reaction {s.reaction_name!r}")
    if not (math.isfinite(s.nominal) and s.nominal > 0):
        out.append(f"{w}: nominal must be positive")
    if s.unit not in UNITS:
        out.append(f"{w}: unit must be one of {UNITS}, not {s.unit!r}")
    if s.standard is None and s.reference_spec is None:
        out.append(f"{w}: needs a primary standard or a reference spec")
    for code in (s.standard, *s.alternatives):
        if code is None:
            continue
        std = mats.get(code)
        if std is None or not std.is_primary_standard:
            out.append(f"{w}: standard {code!r} is not a primary standard in the catalog")
            continue
        try:
            _, t_rx = reaction_for_pair(std, solute)
        except NotFound as exc:
            out.append(f"{w}: standard {code}: {exc}")
            continue
        if rx is not None and t_rx is not None and t_rx.name != rx.name:
            out.append(f"{w}: standard {code} pairs with {s.solute}'s {t_rx.name}, not {rx.name}")
    if s.reference_spec is not None:
        ref = specs.get(s.reference_spec)
        if ref is None or ref.code == s.code:
            out.append(f"{w}: reference_spec {s.reference_spec!r} is not another spec")
        elif rx is not None and ref.solute in mats:
            ref_rx = next(
                (r for r in mats[ref.solute].reactions if r.name == ref.reaction_name), None
            )
            if ref_rx is not None and ref_rx.kind != rx.kind:
                out.append(f"{w}: reference {ref.code} titrates by {ref_rx.kind}, not {rx.kind}")
    if _key(s.indicator) not in {_key(i.name) for i in cat.indicators}:
        out.append(f"{w}: unknown indicator {s.indicator!r}")
    if s.min_replicates < 1:
        out.append(f"{w}: min_replicates must be at least 1")
    if not s.max_rsd_percent > 0:
        out.append(f"{w}: max_rsd_percent must be positive")
    if not 0 < s.factor_low < 1 < s.factor_high:
        out.append(f"{w}: factor window {s.factor_low}-{s.factor_high} must be ordered around 1")
    if not s.drift_limit_percent > 0:
        out.append(f"{w}: drift_limit_percent must be positive")
    if s.restandardize_days < 1:
        out.append(f"{w}: restandardize_days must be at least 1")
    if s.shelf_life_days < s.restandardize_days:
        out.append(f"{w}: shelf_life_days is shorter than restandardize_days")
    ways = [
        s.preparation_solid_g_per_l is not None,
        s.preparation_reagent is not None or s.preparation_reagent_ml_per_l is not None,
        s.preparation_stock_spec is not None or s.preparation_stock_ml_per_l is not None,
    ]
    if sum(ways) > 1:
        out.append(f"{w}: give one preparation hint (solid, reagent or stock), not several")
    for amount in (
        s.preparation_solid_g_per_l,
        s.preparation_reagent_ml_per_l,
        s.preparation_stock_ml_per_l,
    ):
        if amount is not None and not amount > 0:
            out.append(f"{w}: preparation amounts must be positive")
    if (s.preparation_reagent is None) != (s.preparation_reagent_ml_per_l is None):
        out.append(f"{w}: preparation_reagent and its volume go together")
    if s.preparation_reagent is not None and s.preparation_reagent not in {
        g.code for g in cat.reagents
    }:
        out.append(f"{w}: unknown preparation reagent {s.preparation_reagent!r}")
    if (s.preparation_stock_spec is None) != (s.preparation_stock_ml_per_l is None):
        out.append(f"{w}: preparation_stock_spec and its volume go together")
    if s.preparation_stock_spec is not None:
        stock = specs.get(s.preparation_stock_spec)
        if stock is None or stock.solute != s.solute or not stock.nominal > s.nominal:
            out.append(
                f"{w}: stock {s.preparation_stock_spec!r} must be a stronger spec of {s.solute}"
            )
    if not any(SDS_DEFERRAL in c for c in s.cautions):
        out.append(f"{w}: cautions must defer to the {SDS_DEFERRAL}")
    return out + _check_hazard(s.hazard, w)


def check_catalog(cat: Catalog) -> tuple[str, ...]:
    """Every consistency problem in ``cat`` (empty when the catalog is sound).

    Checks: formulas have a molar mass (``chem.formula``); n > 0; kinds, roles, units
    known; pKa and pH ranges ordered; factor window around 1; lookups unambiguous; every
    reference from a reaction or spec to a material, reagent, indicator or spec resolves;
    every default names its source; reagent and spec cautions defer to the safety data
    sheet.
    """
    out: list[str] = []
    for what, items, keys in (
        ("material", cat.materials, lambda m: (m.code, m.formula, m.name, *m.aliases)),
        ("reagent", cat.reagents, lambda r: (r.code, r.formula, r.name, *r.aliases)),
        ("indicator", cat.indicators, lambda i: (i.name, *i.aliases)),
        ("spec", cat.specs, lambda s: (s.code,)),
    ):
        out += _unique(items, keys, what)
    for m in cat.materials:
        out += _check_material(m, cat)
    for g in cat.reagents:
        out += _check_reagent(g)
    for i in cat.indicators:
        out += _check_indicator(i)
    for s in cat.specs:
        out += _check_spec(s, cat)
    return tuple(out)


def load_catalog(directory: Path | None = None) -> Catalog:
    """Read, build and validate the catalog (uncached); the packaged data by default.

    Raises CatalogDataError listing every problem, so nothing half-valid is ever used.
    """
    catalog, problems = build_catalog(_read_files(directory))
    if not problems:
        problems = check_catalog(catalog)
    if problems:
        raise CatalogDataError(
            f"the catalog data has {len(problems)} problem(s):\n  " + "\n  ".join(problems)
        )
    return catalog


@functools.cache
def catalog() -> Catalog:
    """The packaged catalog, loaded and validated once per process."""
    return load_catalog()


# --------------------------------------------------------------------------- module API


def materials() -> tuple[Material, ...]:
    """Every built-in material, in file order."""
    return catalog().materials


def find_material(query: str) -> Material:
    """A material by code, formula, name or alias (case- and whitespace-insensitive)."""
    return catalog().find_material(query)


def reagents() -> tuple[Reagent, ...]:
    """Every built-in concentrated reagent."""
    return catalog().reagents


def find_reagent(query: str) -> Reagent:
    """A concentrated reagent by code, formula, name or alias."""
    return catalog().find_reagent(query)


def indicators() -> tuple[Indicator, ...]:
    """Every built-in indicator."""
    return catalog().indicators


def find_indicator(query: str) -> Indicator:
    """An indicator by name or alias."""
    return catalog().find_indicator(query)


def specs() -> tuple[SpecDefaults, ...]:
    """Every built-in solution spec."""
    return catalog().specs


def find_spec(code: str) -> SpecDefaults:
    """A built-in solution spec by code (case- and whitespace-insensitive)."""
    return catalog().find_spec(code)
