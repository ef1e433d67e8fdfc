"""Regenerate ``prepbook/chem/molar_masses.toml``: the molar masses of the catalog's formulas.

    python -m prepbook.catalog.refresh          # rewrite the file
    python -m prepbook.catalog.refresh --check  # exit 1 if it differs from periodictable

A maintainer's tool, never run by prepbook itself. The table lets ``calc normality``
and the other commands that only need the catalog's own formulas skip importing
periodictable (and its parser) at start-up. Every value is what
``prepbook.chem.formula.molar_mass_live`` computes from periodictable, unrounded;
``tests/catalog/test_molar_mass_table.py`` regenerates the text and fails on any
difference, so run this after changing a formula in ``materials.toml`` or
``reagents.toml``, or after upgrading periodictable.
"""

from __future__ import annotations

import json
import sys

from prepbook.catalog.loader import CatalogDataError, _read_files, build_catalog
from prepbook.chem.formula import PRECOMPUTED, molar_mass_live

HEADER = """\
# Molar masses of the packaged catalog's formulas (materials, then reagents), computed by
# prepbook.chem.formula from periodictable: CIAAW 2021 abridged standard atomic weights,
# u from each element's half-width taken as rectangular (EURACHEM/CITAC CG4, Example A2).
# GENERATED: do not edit. Run `python -m prepbook.catalog.refresh` after changing a formula
# in materials.toml or reagents.toml, or after upgrading periodictable;
# tests/catalog/test_molar_mass_table.py fails while this file differs from periodictable.
"""


def catalog_formulas() -> tuple[str, ...]:
    """Every formula of the packaged materials and reagents, in file order, once each."""
    cat, problems = build_catalog(_read_files(None))  # not validated: validation reads the table
    if problems:
        raise CatalogDataError("the catalog data has problems:\n  " + "\n  ".join(problems))
    return tuple(dict.fromkeys([*(m.formula for m in cat.materials),
                                *(g.formula for g in cat.reagents)]))


def render() -> str:
    """The table's text, computed now from periodictable."""
    parts = [HEADER]
    for text in catalog_formulas():
        mm = molar_mass_live(text)
        atoms = ", ".join(f"[{json.dumps(symbol)}, {count}]" for symbol, count in mm.atoms)
        parts.append(
            "\n[[molar_mass]]\n"
            f"formula = {json.dumps(text)}\n"
            f"hill = {json.dumps(mm.hill)}\n"
            f"atoms = [{atoms}]\n"
            f"value_g_per_mol = {mm.value_g_per_mol!r}\n"
            f"u_g_per_mol = {mm.u_g_per_mol!r}\n"
        )
    return "".join(parts)


def main(argv: list[str]) -> int:
    path = PRECOMPUTED
    text = render()
    current = path.read_text(encoding="utf-8") if path.is_file() else None
    if "--check" in argv:
        if current != text:
            print(f"{path} differs from periodictable: run python -m prepbook.catalog.refresh")
            return 1
        print(f"{path} is up to date")
        return 0
    if current == text:
        print(f"{path} is up to date")
        return 0
    path.write_text(text, encoding="utf-8", newline="\n")
    print(f"wrote {path} ({len(catalog_formulas())} formulas)")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
