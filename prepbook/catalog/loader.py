"""Load the built-in reference catalog from the TOML files in ``prepbook/catalog/data``.

The data lives in plain, human-editable text files (materials, concentrated reagents,
indicators, solution specs, GHS wording) so a chemist can read and correct it without
touching code. Loading goes through one path, a module per concern:

- ``parsed_copy``: the files' bytes, parsed from TOML or from the parsed copy beside them;
- ``shape``: each file's keys and types, declared once (also the editors' JSON Schema);
- ``build``: the objects of ``models`` (frozen dataclasses) from what ``shape`` read;
- ``checks``: what the values mean (formulas, ranges, references, sources).

Loading validates everything and refuses the whole catalog with one message listing
every problem, so a bad edit cannot half-load. The packaged catalog is loaded once per
process (``catalog()``); importing this module reads nothing. A formula is valid when
``prepbook.chem.formula.molar_mass`` gives it a mass: the packaged formulas come from
its precomputed table, so loading the packaged data imports no periodictable.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import TYPE_CHECKING

from prepbook.catalog.build import build_catalog
from prepbook.catalog.checks import check_catalog
from prepbook.catalog.models import (
    Analyte,
    AnalyteMethod,
    Catalog,
    CatalogDataError,
    Hazard,
    Indicator,
    Ion,
    Material,
    Reaction,
    Reagent,
    SpecDefaults,
    method_for,
    reaction_for_pair,
)
from prepbook.catalog.parsed_copy import PARSED_COPY, data_directory, parse_files, read_files

if TYPE_CHECKING:
    from pathlib import Path

    from prepbook.chem.sample import Analyte as SampleAnalyte

__all__ = [
    "PARSED_COPY",
    "Analyte",
    "AnalyteMethod",
    "Catalog",
    "CatalogDataError",
    "Hazard",
    "Indicator",
    "Material",
    "Reaction",
    "Reagent",
    "SpecDefaults",
    "build_catalog",
    "catalog",
    "check_catalog",
    "data_directory",
    "find_indicator",
    "find_material",
    "find_reagent",
    "find_spec",
    "indicators",
    "AnalyteTitration",
    "analyte_titration",
    "analytes",
    "find_analyte",
    "find_ion",
    "load_catalog",
    "materials",
    "method_for",
    "parse_files",
    "reaction_for_pair",
    "reagents",
    "specs",
]


def load_catalog(directory: Path | None = None) -> Catalog:
    """Read, build and validate the catalog (uncached); the packaged data by default.

    Raises CatalogDataError listing every problem, so nothing half-valid is ever used.
    """
    catalog, problems = build_catalog(read_files(directory))
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


def analytes() -> tuple[Analyte, ...]:
    """Every built-in analyte, in file order."""
    return catalog().analytes


def find_analyte(query: str) -> Analyte:
    """An analyte by code, name or alias (case- and whitespace-insensitive)."""
    return catalog().find_analyte(query)


def find_ion(query: str) -> Ion:
    """An ion by name, formula or alias (case- and whitespace-insensitive)."""
    return catalog().find_ion(query)


@dataclass(frozen=True)
class AnalyteTitration:
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


def analyte_titration(analyte: str, titrant: str, method: str | None = None) -> AnalyteTitration:
    """The analyte (code, name or alias) titrated with ``titrant`` (a material), by its
    method named ``method`` or the one that pairs with the titrant (``method_for``)."""
    from prepbook.chem.formula import molar_mass
    from prepbook.chem.sample import Analyte as SampleAnalyte

    cat = catalog()
    found = cat.find_analyte(analyte)
    tit = cat.find_material(titrant)
    way = method_for(found, tit, method)
    if way.titrant == tit.code:
        t_rx = tit.reaction(name=way.titrant_reaction) if way.titrant_reaction else None
        t_rx = t_rx or next(r for r in tit.reactions if r.kind == way.kind)
    else:  # another strong titrant of the opposite nature (method_for)
        t_rx = tit.reaction(kind="acid-base")
    reagent = cat.find_material(way.excess_reagent) if way.excess_reagent else None
    reagent_n = (next(r for r in reagent.reactions if r.kind == way.kind).n
                 if reagent is not None else None)
    own = molar_mass(found.formula)
    shown = molar_mass(found.report_as) if found.report_as else None
    computed = SampleAnalyte(
        name=found.name, formula=found.formula, molar_mass_g_per_mol=own.value_g_per_mol,
        u_molar_mass_g_per_mol=own.u_g_per_mol, n_eq_per_mol=way.n, unit=found.unit,
        report_as=found.report_as,
        report_as_molar_mass_g_per_mol=shown.value_g_per_mol if shown else None,
        u_report_as_molar_mass_g_per_mol=shown.u_g_per_mol if shown else 0.0,
        report_as_n=found.report_as_n)
    return AnalyteTitration(found, way, tit, t_rx.n, reagent, reagent_n, computed)
