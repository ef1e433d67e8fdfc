"""Semantic checks of the catalog: what its values mean, on the built objects.

``shape`` judges each file's keys and types; this module judges the rest: formulas have
a molar mass, n > 0, kinds, roles and units are known, pKa and pH ranges are ordered,
the factor window lies around 1, lookups are unambiguous, every reference from a
reaction or spec to a material, reagent, indicator or spec resolves, every default names
its source, and reagent and spec cautions defer to the safety data sheet. It works on
objects, so a lab's own entries built in code reuse it.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

from prepbook.catalog.models import (
    ACID_BASE,
    CONCENTRATION_UNITS,
    INDICATOR_KINDS,
    REACTION_KINDS,
    ROLES,
    SDS_DEFERRAL,
    SIGNAL_WORDS,
    UNITS,
    Catalog,
    Hazard,
    Indicator,
    Material,
    Reagent,
    SpecDefaults,
    lookup_key,
    reaction_for_pair,
)
from prepbook.errors import InvalidInput, NotFound

if TYPE_CHECKING:
    from prepbook.catalog.sample_models import Analyte, Ion, Samples


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


def _unique(items: Sequence[Any], what: str) -> list[str]:
    """Problems for lookup keys that two entries share (a lookup would be ambiguous)."""
    owner: dict[str, str] = {}
    problems = []
    for item in items:
        label = getattr(item, "code", None) or item.name
        for k in dict.fromkeys(lookup_key(k) for k in item.lookup_names):
            if k in owner and owner[k] != label:
                problems.append(f"{what} {label}: {k!r} is also a name of {owner[k]}")
            owner.setdefault(k, label)
    return problems


def _check_hazard(h: Hazard, where: str) -> list[str]:
    out = [] if h.source.strip() else [f"{where}: hazard has no source"]
    if h.signal_word is not None and h.signal_word not in SIGNAL_WORDS:
        out.append(f"{where}: signal_word must be one of {SIGNAL_WORDS}, not {h.signal_word!r}")
    return out


def _check_step(where: str, kind: str, n: float, indicator: str | None,
                indicator_names: set[str]) -> list[str]:
    """A reaction's or a method's kind, n and indicator."""
    out = []
    if kind not in REACTION_KINDS:
        out.append(f"{where}: kind must be one of {REACTION_KINDS}, not {kind!r}")
    if not (math.isfinite(n) and n > 0):
        out.append(f"{where}: n must be a positive number, not {n}")
    if indicator and lookup_key(indicator) not in indicator_names:
        out.append(f"{where}: unknown indicator {indicator!r}")
    return out


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
    indicator_names = {lookup_key(i.name) for i in cat.indicators}
    for r in m.reactions:
        rw = f"{w} reaction {r.name}"
        out += _check_step(rw, r.kind, r.n, r.indicator, indicator_names)
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
    out += _check_acid_base(w, m.acid_base, m.pka, m.acid_units, m.initial_protons)
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
    n = g.n_eq_per_mol
    if n is not None and (g.acid_base is None or n not in (1, 2, 3)):
        out.append(f"{w}: n_eq_per_mol (protons given or taken) must be 1, 2 or 3, for an "
                   "acid or a base")
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
    if lookup_key(s.indicator) not in {lookup_key(i.name) for i in cat.indicators}:
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
    return out + _check_expansion(s) + _check_hazard(s.hazard, w)


def _check_expansion(s: SpecDefaults) -> list[str]:
    """A titrant in a solvent other than water carries its solvent's cubic expansion
    coefficient, with its source; an aqueous one uses water's density formula, none."""
    w = f"spec {s.code}"
    gamma = s.expansion_per_c
    if lookup_key(s.solvent) == "water":
        if gamma is not None:
            return [f"{w}: an aqueous titrant follows water's density; leave expansion_per_c "
                    "unset"]
        return []
    if gamma is None:
        return [f"{w}: solvent {s.solvent!r} is not water: give its cubic expansion "
                "coefficient (expansion_per_c, per C) and its source"]
    from prepbook.chem.corrections import EXPANSION_RANGE_PER_C, plausible_expansion
    if not plausible_expansion(gamma):
        low, high = EXPANSION_RANGE_PER_C
        return [f"{w}: expansion_per_c {gamma!r} is not a liquid's cubic expansion "
                f"coefficient (between {low:g} and {high:g} per C)"]
    if not s.source_of("expansion_per_c"):
        return [f"{w}: no source named for 'expansion_per_c'"]
    return []


def _check_acid_base(w: str, acid_base: str | None, pka: Sequence[float],
                     acid_units: int | None, initial_protons: int | None) -> list[str]:
    """The acid-base fields of a material or an analyte, as the equilibrium model reads them."""
    out = []
    if acid_base is not None and acid_base not in ACID_BASE:
        out.append(f"{w}: acid_base must be 'acid' or 'base', not {acid_base!r}")
    if acid_base is None:
        if pka or acid_units is not None or initial_protons is not None:
            out.append(f"{w}: pka/acid_units/initial_protons given without acid_base")
    else:
        if acid_units is None or acid_units < 1:
            out.append(f"{w}: acid_units must be a whole number >= 1")
        if initial_protons is None or initial_protons < 0:
            out.append(f"{w}: initial_protons must be a whole number >= 0")
        elif pka and acid_units and initial_protons > acid_units * len(pka):
            out.append(
                f"{w}: initial_protons {initial_protons} exceeds the {acid_units} x "
                f"{len(pka)} protons its acid system can carry"
            )
    if list(pka) != sorted(pka):
        out.append(f"{w}: pka values must be in increasing order (most acidic first)")
    return out


def _check_analyte(a: Analyte, mats: dict[str, Material],
                   indicator_names: set[str]) -> list[str]:
    w = f"analyte {a.code}"
    out = []
    for what, formula in (("formula", a.formula), ("report_as", a.report_as)):
        reason = _formula_problem(formula) if formula is not None else None
        if reason:
            out.append(f"{w}: {what} {formula!r} {reason}")
    if a.unit not in CONCENTRATION_UNITS:
        out.append(f"{w}: unit must be one of {CONCENTRATION_UNITS}, not {a.unit!r}")
    if (a.report_as is None) != (a.report_as_n is None):
        out.append(f"{w}: report_as and report_as_n go together")
    if a.report_as_n is not None and not (math.isfinite(a.report_as_n) and a.report_as_n > 0):
        out.append(f"{w}: report_as_n must be a positive number")
    out += _check_acid_base(w, a.acid_base, a.pka, a.acid_units, a.initial_protons)
    if not a.methods:
        out.append(f"{w}: has no method")
    names = [lookup_key(m.name) for m in a.methods]
    if len(set(names)) != len(names):
        out.append(f"{w}: method names repeat: {[m.name for m in a.methods]}")
    for m in a.methods:
        mw = f"{w} method {m.name}"
        out += _check_step(mw, m.kind, m.n, m.indicator, indicator_names)
        if m.kind == "acid-base" and a.acid_base is None:
            out.append(f"{mw}: an acid-base method needs acid_base on the analyte")
        for role, code in (("titrant", m.titrant), ("excess_reagent", m.excess_reagent)):
            if code is not None and code not in mats:
                out.append(f"{mw}: {role} {code!r} is not a material in the catalog")
        titrant = mats.get(m.titrant)
        if titrant is not None:
            name = m.titrant_reaction
            t_rx = next((r for r in titrant.reactions if name in (None, r.name)), None)
            if t_rx is None:
                out.append(f"{mw}: {titrant.code} has no reaction {name!r}")
            elif t_rx.kind != m.kind:
                out.append(f"{mw}: kind {m.kind} but {titrant.code}'s {t_rx.name} is "
                           f"{t_rx.kind}")
    needs = {"formula": False, "unit": True, "report_as": a.report_as is not None,
             "pka": bool(a.pka)}
    for key, needed in needs.items():
        if needed and not a.source_of(key):
            out.append(f"{w}: no source named for {key!r}")
    return out


def _check_ion(i: Ion) -> list[str]:
    w = f"ion {i.name}"
    out = []
    if i.charge == 0:
        out.append(f"{w}: charge must not be zero")
    if list(i.pka) != sorted(i.pka):
        out.append(f"{w}: pka values must be in increasing order (most acidic first)")
    if not 0 <= i.protons <= len(i.pka):
        out.append(f"{w}: protons must lie between 0 and its {len(i.pka)} pka steps")
    return out


def check_catalog(cat: Catalog) -> tuple[str, ...]:
    """Every consistency problem in ``cat`` (empty when the catalog is sound).

    Checks: formulas have a molar mass (``chem.formula``); n > 0; kinds, roles, units
    known; pKa and pH ranges ordered; factor window around 1; lookups unambiguous; every
    reference from a reaction or spec to a material, reagent, indicator or spec resolves;
    every default names its source; reagent and spec cautions defer to the safety data
    sheet.
    """
    out: list[str] = []
    for what, items in (("material", cat.materials), ("reagent", cat.reagents),
                        ("indicator", cat.indicators), ("spec", cat.specs)):
        out += _unique(items, what)
    for m in cat.materials:
        out += _check_material(m, cat)
    for g in cat.reagents:
        out += _check_reagent(g)
    for i in cat.indicators:
        out += _check_indicator(i)
    for s in cat.specs:
        out += _check_spec(s, cat)
    return tuple(out)


def check_samples(samples: Samples, cat: Catalog) -> tuple[str, ...]:
    """Every consistency problem of the analytes and ions (empty when they are sound),
    their methods judged against the materials and indicators of ``cat``."""
    out = _unique(samples.analytes, "analyte")
    mats = {m.code: m for m in cat.materials}
    indicator_names = {lookup_key(i.name) for i in cat.indicators}
    for a in samples.analytes:
        out += _check_analyte(a, mats, indicator_names)
    out += _unique(samples.ions, "ion")
    for ion in samples.ions:
        out += _check_ion(ion)
    return tuple(out)
