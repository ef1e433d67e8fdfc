"""The shape of each catalog file: which keys a table has, their types, which are required.

Every table is declared once here, as data (``Table`` of ``Field``). The same declaration
reads a parsed file (``Table.read``: typed values, defaults filled in, every problem
collected with where it is) and gives the JSON Schema that editors use
(``json_schema``; the files under ``schema/`` are written from it by
``python -m prepbook.catalog.refresh``). Unknown keys are problems, so a misspelt field
is reported, never ignored.

Why not a validation library: msgspec would read these tables into typed objects in
C, but importing it costs about 5.5 ms of CPU (attrs+cattrs about 21 ms), more than five
times what this reader spends on the whole catalog (about 1 ms), on every command that
needs one entry (see DEVELOPERS.md, "Why each dependency"). What values mean (known
kinds, ordered ranges, references between files) is judged in ``checks``, on the built
objects.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from prepbook.catalog.models import (
    ACID_BASE,
    CONCENTRATION_UNITS,
    INDICATOR_KINDS,
    REACTION_KINDS,
    ROLES,
    SIGNAL_WORDS,
    UNITS,
)

TEXT, NUMBER, WHOLE, TEXTS, NUMBERS, TEXT_MAP, TABLE, TABLES = (
    "text", "number", "whole", "texts", "numbers", "text map", "table", "tables")

REQUIRED: Any = object()  # a Field default: the key must be given
OMIT: Any = object()  # a Field default: a missing key is left out of what is read

#: The value a key takes when it is missing or mistyped (a problem is recorded).
_PLACEHOLDER: dict[str, Any] = {TEXT: "", NUMBER: math.nan, WHOLE: 0, TEXTS: (),
                                NUMBERS: (), TEXT_MAP: {}, TABLE: {}, TABLES: []}


class Field:
    """One key of a table: its kind and default (``REQUIRED`` when it must be given); for
    editors a description and the values it may take (``choices``: ``checks`` judges
    them, with its own message); the keys a text map may use; the table(s) it holds."""

    __slots__ = ("kind", "default", "doc", "choices", "keys", "table")

    def __init__(self, kind: str, default: Any = REQUIRED, doc: str = "",
                 choices: tuple[str, ...] = (), keys: tuple[str, ...] = (),
                 table: Table | None = None) -> None:
        self.kind, self.default, self.doc = kind, default, doc
        self.choices, self.keys, self.table = choices, keys, table


class Table:
    """A TOML table's declared keys, in the order editors show them."""

    __slots__ = ("title", "fields")

    def __init__(self, title: str, fields: Mapping[str, Field]) -> None:
        self.title, self.fields = title, dict(fields)

    def optional(self) -> Table:
        """The same keys, none required and none filled in (a table of overrides)."""
        return Table(self.title, {key: Field(f.kind, OMIT, f.doc, f.choices, f.keys, f.table)
                                  for key, f in self.fields.items()})

    def read(self, table: Any, where: str, problems: list[str]) -> dict[str, Any]:
        """Every declared key's value, typed (numbers as float, lists of values as tuples),
        in declared order, a missing key as its default. Each missing, mistyped or unknown
        key adds a problem to ``problems`` and reads as a placeholder (empty text, NaN)."""
        if not isinstance(table, dict):
            problems.append(f"{where}: expected a table")
            table = {}
        given = {key: _typed(key, self.fields[key], value, where, problems)
                 for key, value in table.items() if key in self.fields}
        extra = sorted(set(table) - set(self.fields))
        if extra:
            problems.append(f"{where}: unknown key(s) {', '.join(extra)}")
        return self.complete(given, where, problems)

    def complete(self, given: Mapping[str, Any], where: str,
                 problems: list[str]) -> dict[str, Any]:
        """``given`` (typed values) with each missing key's default; a problem for each
        missing required key."""
        out: dict[str, Any] = {}
        for key, f in self.fields.items():
            if key in given:
                out[key] = given[key]
            elif f.default is REQUIRED:
                problems.append(f"{where}: missing {key!r}")
                out[key] = (f.table.read({}, f"{where}.{key}", problems)
                            if f.kind == TABLE and f.table else _PLACEHOLDER[f.kind])
            elif f.default is not OMIT:
                out[key] = f.default
        return out


def _text(value: Any) -> bool:
    return isinstance(value, str) and bool(value.strip())


def _number(value: Any) -> bool:
    return isinstance(value, int | float) and not isinstance(value, bool)


def _typed(key: str, f: Field, value: Any, where: str, problems: list[str]) -> Any:
    """``value`` as ``f`` declares it, or a placeholder and a problem naming ``key``."""
    kind = f.kind
    if kind == TEXT:
        if _text(value):
            return value
        problems.append(f"{where}: {key!r} must be non-empty text")
    elif kind == NUMBER:
        if _number(value):
            return float(value)
        problems.append(f"{where}: {key!r} must be a number, not {value!r}")
    elif kind == WHOLE:
        if isinstance(value, int) and not isinstance(value, bool):
            return value
        problems.append(f"{where}: {key!r} must be a whole number, not {value!r}")
    elif kind == TEXTS:
        if isinstance(value, list) and all(isinstance(v, str) and v for v in value):
            return tuple(value)
        problems.append(f"{where}: {key!r} must be a list of text")
    elif kind == NUMBERS:
        if isinstance(value, list) and all(_number(v) for v in value):
            return tuple(float(v) for v in value)
        problems.append(f"{where}: {key!r} must be a list of numbers")
    elif kind == TEXT_MAP:
        if isinstance(value, dict) and all(_text(v) for v in value.values()):
            for k in sorted(set(value) - set(f.keys)) if f.keys else ():
                problems.append(f"{where}.{key}: unknown key {k!r}")
            return dict(value)
        problems.append(f"{where}: {key!r} must map names to non-empty text")
    elif f.table is not None and kind == TABLE:
        return f.table.read(value, f"{where}.{key}", problems)
    elif f.table is not None and kind == TABLES:
        if isinstance(value, list):
            return [f.table.read(v, f"{where}.{key}[{i}]", problems) for i, v in enumerate(value)]
        problems.append(f"{where}: {key!r} must be an array of tables")
    return _PLACEHOLDER[kind]


# --------------------------------------------------------------------------- the files

_SOURCE = ('where the values came from: a publication, "from memory" or '
           '"common practice, no source"')

HAZARD = Table("GHS hazard", {
    "signal_word": Field(TEXT, None, "absent when not classified", choices=SIGNAL_WORDS),
    "statements": Field(TEXTS, (), "hazard statement codes from ghs.toml, e.g. H314"),
    "pictograms": Field(TEXTS, (), "pictogram codes from ghs.toml, e.g. GHS05"),
    "source": Field(TEXT, doc=_SOURCE),
})

REACTION = Table("titration reaction", {
    "name": Field(TEXT),
    "kind": Field(TEXT, choices=REACTION_KINDS),
    "n": Field(NUMBER, doc="equivalents per mole of this material in this reaction"),
    "description": Field(TEXT),
    "equation": Field(TEXT, doc="balanced ionic equation"),
    "indicator": Field(TEXT, None, "an indicator's name from indicators.toml"),
    "source": Field(TEXT, doc=_SOURCE),
    "titrant": Field(TEXT, None, "the titrant solute (material code) this reaction pairs with"),
    "titrant_reaction": Field(TEXT, None, "the titrant's reaction, when not its primary one"),
})

#: The fields of a material whose value must name its source in ``sources``.
MATERIAL_SOURCE_KEYS = ("formula", "drying", "density", "pka", "acid_units", "initial_protons")

MATERIAL = Table("material (primary standard or titrant solute)", {
    "code": Field(TEXT),
    "name": Field(TEXT),
    "formula": Field(TEXT, doc="the weighed form; hydrates as Na2B4O7(H2O)10"),
    "aliases": Field(TEXTS, ()),
    "roles": Field(TEXTS, (), choices=ROLES),
    "reaction": Field(TABLES, (), "the first is the primary reaction", table=REACTION),
    "hazard": Field(TABLE, table=HAZARD),
    "drying": Field(TEXT, None, "how to dry it before weighing"),
    "density_g_per_cm3": Field(NUMBER, None),
    "acid_base": Field(TEXT, None, "what the weighed form acts as", choices=ACID_BASE),
    "pka": Field(NUMBERS, (), "weak steps of the conjugate acid system, most acidic first"),
    "acid_units": Field(WHOLE, None, "acid-base units per formula unit"),
    "initial_protons": Field(WHOLE, None, "protons the weighed form carries over all units"),
    "cautions": Field(TEXTS, ()),
    "note": Field(TEXT, ""),
    "sources": Field(TEXT_MAP, {}, _SOURCE, keys=MATERIAL_SOURCE_KEYS),
})

REAGENT = Table("concentrated reagent", {
    "code": Field(TEXT),
    "name": Field(TEXT),
    "formula": Field(TEXT),
    "aliases": Field(TEXTS, ()),
    "mass_fraction": Field(NUMBER, doc="as published, in (0, 1]"),
    "density_g_per_ml": Field(NUMBER),
    "molarity_mol_per_l": Field(NUMBER, None, "as published, not recomputed"),
    "source": Field(TEXT, doc=_SOURCE),
    "cautions": Field(TEXTS, (), "must defer to the safety data sheet"),
    "hazard": Field(TABLE, table=HAZARD),
    "acid_base": Field(TEXT, None, choices=ACID_BASE),
    "pka": Field(NUMBERS, ()),
    "note": Field(TEXT, ""),
    "n_eq_per_mol": Field(NUMBER, None, "equivalents per mole in its acid-base use (protons "
                          "given or taken); leave out where it depends on the endpoint"),
})

INDICATOR = Table("endpoint indicator", {
    "name": Field(TEXT),
    "kind": Field(TEXT, choices=INDICATOR_KINDS),
    "colours": Field(TEXT),
    "source": Field(TEXT, doc=_SOURCE),
    "aliases": Field(TEXTS, ()),
    "low_ph": Field(NUMBER, None, "acid-base indicators only"),
    "high_ph": Field(NUMBER, None, "acid-base indicators only"),
    "note": Field(TEXT, ""),
})

_SPEC_FIELDS: dict[str, Field] = {
    "code": Field(TEXT, doc="starts with the solute's code, e.g. NaOH-0.1N"),
    "name": Field(TEXT),
    "solute": Field(TEXT, doc="a titrant solute's material code"),
    "reaction": Field(TEXT, doc="the name of the solute's reaction (gives n)"),
    "nominal": Field(NUMBER),
    "unit": Field(TEXT, choices=UNITS),
    "indicator": Field(TEXT, doc="an indicator's name from indicators.toml"),
    "min_replicates": Field(WHOLE),
    "max_rsd_percent": Field(NUMBER),
    "factor_low": Field(NUMBER),
    "factor_high": Field(NUMBER),
    "drift_limit_percent": Field(NUMBER),
    "restandardize_days": Field(WHOLE),
    "shelf_life_days": Field(WHOLE),
    "storage": Field(TEXT),
    "hazard": Field(TABLE, table=HAZARD),
    "cautions": Field(TEXTS, (), "must defer to the safety data sheet"),
    "preparation": Field(TEXT),
    "standard": Field(TEXT, None, "the default primary standard (material code)"),
    "alternatives": Field(TEXTS, (), "other primary standards that pair with the solute"),
    "reference_spec": Field(TEXT, None, "a spec to standardize against instead"),
    "solvent": Field(TEXT, "water"),
    "preparation_solid_g_per_l": Field(NUMBER, None),
    "preparation_reagent": Field(TEXT, None, "a reagent code"),
    "preparation_reagent_ml_per_l": Field(NUMBER, None),
    "preparation_stock_spec": Field(TEXT, None, "a stronger spec of the same solute"),
    "preparation_stock_ml_per_l": Field(NUMBER, None),
    "repeatability_rsd_percent": Field(NUMBER, None, "validated RSD of one result, %"),
    "expansion_per_c": Field(NUMBER, None, "the solvent's cubic expansion coefficient per C; "
                             "required when the solvent is not water"),
}
#: A spec's fields whose value must name its source (optional ones only when set).
SPEC_SOURCED = ("min_replicates", "max_rsd_percent", "factor_low", "factor_high",
                "drift_limit_percent", "restandardize_days", "shelf_life_days", "storage",
                "preparation")
SPEC_SOURCED_IF_SET = ("standard", "reference_spec", "solvent", "repeatability_rsd_percent",
                       "expansion_per_c")

#: A spec as built: its own keys over ``[defaults]``.
SPEC = Table("solution spec", {
    **_SPEC_FIELDS,
    "sources": Field(TEXT_MAP, {}, _SOURCE, keys=tuple(_SPEC_FIELDS)),
})

ANALYTE_METHOD = Table("a way of titrating the analyte", {
    "name": Field(TEXT),
    "kind": Field(TEXT, choices=REACTION_KINDS),
    "titrant": Field(TEXT, doc="the titrant (material code)"),
    "n": Field(NUMBER, doc="equivalents per mole of the analyte, in the titrant's convention"),
    "description": Field(TEXT),
    "equation": Field(TEXT, doc="balanced ionic equation"),
    "source": Field(TEXT, doc=_SOURCE),
    "indicator": Field(TEXT, None, "an indicator's name from indicators.toml"),
    "titrant_reaction": Field(TEXT, None, "the titrant's reaction, when not its primary one"),
    "excess_reagent": Field(TEXT, None, "back-titration: the reagent added in measured "
                            "excess (material code); the titrant measures what is left"),
})

#: The fields of an analyte whose value must name its source in ``sources``.
ANALYTE_SOURCE_KEYS = ("formula", "unit", "report_as", "pka", "acid_units",
                       "initial_protons")

ANALYTE = Table("analyte (what a sample is titrated for)", {
    "code": Field(TEXT),
    "name": Field(TEXT),
    "formula": Field(TEXT, doc="the species whose mass is reported"),
    "aliases": Field(TEXTS, ()),
    "unit": Field(TEXT, doc="how a liquid sample's result is reported",
                  choices=CONCENTRATION_UNITS),
    "method": Field(TABLES, (), "the first is the default", table=ANALYTE_METHOD),
    "report_as": Field(TEXT, None, "a formula the result is expressed as, e.g. CaCO3"),
    "report_as_n": Field(NUMBER, None, "equivalents per mole of report_as"),
    "acid_base": Field(TEXT, None, "what the analyte acts as", choices=ACID_BASE),
    "pka": Field(NUMBERS, (), "weak steps of its conjugate acid system, most acidic first"),
    "acid_units": Field(WHOLE, None, "acid-base units per formula unit"),
    "initial_protons": Field(WHOLE, None, "protons the analyte carries as it is in the sample"),
    "note": Field(TEXT, ""),
    "sources": Field(TEXT_MAP, {}, _SOURCE, keys=ANALYTE_SOURCE_KEYS),
})

ION = Table("ion (for the pH of a salt's solution)", {
    "name": Field(TEXT),
    "formula": Field(TEXT, doc='with its charge, e.g. "HCO3^-"'),
    "charge": Field(WHOLE),
    "source": Field(TEXT, doc=_SOURCE),
    "aliases": Field(TEXTS, ()),
    "pka": Field(NUMBERS, (), "its acid/base system, most acidic first; empty: a spectator"),
    "protons": Field(WHOLE, 0, "protons it carries, from the fully deprotonated member"),
})

FILES: dict[str, Table] = {
    "ghs.toml": Table("GHS wording", {
        "source": Field(TEXT, doc=_SOURCE),
        "statements": Field(TEXT_MAP, {}, "hazard statement code to its wording"),
        "pictograms": Field(TEXT_MAP, {}, "pictogram code to its name"),
    }),
    "materials.toml": Table("materials", {"material": Field(TABLES, (), table=MATERIAL)}),
    "reagents.toml": Table("reagents", {"reagent": Field(TABLES, (), table=REAGENT)}),
    "indicators.toml": Table("indicators", {"indicator": Field(TABLES, (), table=INDICATOR)}),
    # Each spec and the defaults hold some of a spec's keys; build merges and completes them.
    "specs.toml": Table("solution specs", {
        "defaults": Field(TABLE, {}, "a spec's values unless it sets its own",
                          table=SPEC.optional()),
        "spec": Field(TABLES, (), "fields left out come from [defaults]",
                      table=SPEC.optional()),
    }),
    "analytes.toml": Table("analytes", {"analyte": Field(TABLES, (), table=ANALYTE)}),
    "ions.toml": Table("ions", {"ion": Field(TABLES, (), table=ION)}),
}

#: The files of sample titrations, built apart and only when asked for (``samples``).
SAMPLE_FILES = ("analytes.toml", "ions.toml")


# --------------------------------------------------------------------------- JSON Schema


def _field_schema(f: Field) -> dict[str, Any]:
    """What ``_typed`` accepts for ``f``, as JSON Schema (TOML's values are JSON's here)."""
    kind = f.kind
    out: dict[str, Any]
    if kind == TEXT:
        out = {"type": "string", "pattern": r"\S"}
        if f.choices:
            out = {"enum": list(f.choices)}
    elif kind == NUMBER:
        out = {"type": "number"}
    elif kind == WHOLE:
        out = {"type": "integer"}
    elif kind == TEXTS:
        item: dict[str, Any] = {"enum": list(f.choices)} if f.choices else {
            "type": "string", "minLength": 1}
        out = {"type": "array", "items": item}
    elif kind == NUMBERS:
        out = {"type": "array", "items": {"type": "number"}}
    elif kind == TEXT_MAP:
        out = {"type": "object", "additionalProperties": {"type": "string", "pattern": r"\S"}}
        if f.keys:
            out["propertyNames"] = {"enum": list(f.keys)}
    else:
        assert f.table is not None
        out = table_schema(f.table)
        if kind == TABLES:
            out = {"type": "array", "items": out}
    if f.doc:
        out = {"description": f.doc, **out}
    if isinstance(f.default, str) and f.default:
        out["default"] = f.default
    return out


def table_schema(table: Table) -> dict[str, Any]:
    """The JSON Schema of ``table``: its keys, their types, which are required."""
    out: dict[str, Any] = {
        "type": "object",
        "title": table.title,
        "properties": {key: _field_schema(f) for key, f in table.fields.items()},
        "additionalProperties": False,
    }
    need = [key for key, f in table.fields.items() if f.default is REQUIRED]
    if need:
        out["required"] = need
    return out


def json_schema(name: str) -> dict[str, Any]:
    """The JSON Schema document of the catalog file ``name``."""
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$comment": "GENERATED from prepbook/catalog/shape.py by "
                    "`python -m prepbook.catalog.refresh`: do not edit.",
        **table_schema(FILES[name]),
        "title": f"prepbook catalog: {name}",
    }
