"""Built-in reference data: materials, concentrated reagents, indicators, solution specs.

The data is plain TOML in ``prepbook/catalog/data`` (edit it there); ``loader`` parses,
validates and indexes it. Importing this package is cheap: nothing is read until a
function is called, and the result is cached.
"""

from prepbook.catalog.loader import (
    Catalog,
    CatalogDataError,
    Hazard,
    Indicator,
    Material,
    Reaction,
    Reagent,
    SpecDefaults,
    catalog,
    check_catalog,
    find_indicator,
    find_material,
    find_reagent,
    find_spec,
    indicators,
    load_catalog,
    materials,
    reaction_for_pair,
    reagents,
    specs,
)

__all__ = [
    "Catalog",
    "CatalogDataError",
    "Hazard",
    "Indicator",
    "Material",
    "Reaction",
    "Reagent",
    "SpecDefaults",
    "catalog",
    "check_catalog",
    "find_indicator",
    "find_material",
    "find_reagent",
    "find_spec",
    "indicators",
    "load_catalog",
    "materials",
    "reaction_for_pair",
    "reagents",
    "specs",
]
