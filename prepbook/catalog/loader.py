"""Load the built-in reference catalog from the TOML files in ``prepbook/catalog/data``.

The data lives in plain, human-editable text files (materials, concentrated reagents,
indicators, solution specs, GHS wording) so a chemist can read and correct it without
touching code. Loading goes through one path, a module per concern:

- ``parsed_copy``: the files' bytes, parsed from TOML or from the parsed copy beside them;
- ``shape``: each file's keys and types, declared once (also the editors' JSON Schema);
- ``build``: the objects of ``models`` (frozen records) from what ``shape`` read;
- ``checks``: what the values mean (formulas, ranges, references, sources);
- ``samples``: the analytes and ions of sample titrations, built when first asked for
  (only the sample commands use them).

Loading validates everything and refuses the whole catalog with one message listing
every problem, so a bad edit cannot half-load. The packaged catalog is loaded once per
process (``catalog()``); importing this module reads nothing. A formula is valid when
``prepbook.chem.formula.molar_mass`` gives it a mass: the packaged formulas come from
its precomputed table, so loading the packaged data imports no periodictable.
"""

from __future__ import annotations

import functools
from typing import TYPE_CHECKING

from prepbook.catalog.build import build_catalog
from prepbook.catalog.checks import check_catalog
from prepbook.catalog.models import (
    Catalog,
    CatalogDataError,
    Hazard,
    Indicator,
    Material,
    Reaction,
    Reagent,
    SpecDefaults,
    reaction_for_pair,
    refuse_if_any,
)
from prepbook.catalog.parsed_copy import PARSED_COPY, data_directory, parse_files, read_files

if TYPE_CHECKING:
    from pathlib import Path

__all__ = [
    "PARSED_COPY",
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
    "load_catalog",
    "materials",
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
    refuse_if_any(problems)
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
