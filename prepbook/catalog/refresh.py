"""Regenerate the catalog's derived files.

    python -m prepbook.catalog.refresh          # rewrite them
    python -m prepbook.catalog.refresh --check  # exit 1 if any is out of date

``prepbook/catalog/data/parsed.json`` is the data files as tomllib parses them, with
the digest of their bytes: the loader reads it instead of parsing TOML while the
digest matches (``parsed_copy.read_parsed_copy``), and ignores it otherwise, so a stale
copy costs time, never a wrong value. ``tests/catalog/test_parsed_copy.py`` fails while
it is stale.

``prepbook/catalog/schema/*.schema.json`` are the JSON Schemas of the data files for
editors, written from their declaration in ``shape``; ``tests/catalog/test_schema.py``
fails while one differs.

``prepbook/chem/molar_masses.json`` holds the molar masses of the catalog's formulas.

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
from pathlib import Path

from prepbook.catalog.build import build_catalog
from prepbook.catalog.models import refuse_if_any
from prepbook.catalog.parsed_copy import (
    FILES,
    PARSED_COPY,
    data_directory,
    files_digest,
    parse_files,
    read_files,
    read_raw,
)
from prepbook.catalog.samples import build_samples
from prepbook.catalog.shape import json_schema
from prepbook.chem.formula import PRECOMPUTED, molar_mass_live

ABOUT = [
    "Molar masses of the packaged catalog's formulas (materials, reagents, analytes), computed by",
    "prepbook.chem.formula from periodictable: CIAAW 2021 abridged standard atomic weights,",
    "u from each element's half-width taken as rectangular (EURACHEM/CITAC CG4, Example A2).",
    "GENERATED: do not edit. Run `python -m prepbook.catalog.refresh` after changing a formula",
    "in materials.toml, reagents.toml or analytes.toml, or after upgrading periodictable;",
    "tests/catalog/test_molar_mass_table.py fails while this file differs from periodictable.",
]


def catalog_formulas() -> tuple[str, ...]:
    """Every formula of the packaged materials and reagents, in file order, once each."""
    files = read_files()  # not validated: validation reads the table
    cat, problems = build_catalog(files)
    built, sample_problems = build_samples(files)
    refuse_if_any([*problems, *sample_problems])
    return tuple(dict.fromkeys([*(m.formula for m in cat.materials),
                                *(g.formula for g in cat.reagents),
                                *(a.formula for a in built.analytes)]))


def render() -> str:
    """The table's text, computed now from periodictable: one formula per line."""
    rows = []
    for text in catalog_formulas():
        mm = molar_mass_live(text)
        row = {"formula": text, "hill": mm.hill, "atoms": [list(a) for a in mm.atoms],
               "value_g_per_mol": mm.value_g_per_mol, "u_g_per_mol": mm.u_g_per_mol}
        rows.append("  " + json.dumps(row, ensure_ascii=False))
    about = json.dumps(ABOUT, ensure_ascii=False, indent=1).replace("\n", "\n ")
    return ('{\n "about": ' + about + ',\n "molar_mass": [\n' + ",\n".join(rows)
            + "\n ]\n}\n")


def render_parsed(directory: Path | None = None) -> str:
    """The parsed copy's text for the data files as they are now."""
    raw = read_raw(data_directory(directory))
    copy = {"digest": files_digest(raw), "files": parse_files(raw)}
    return json.dumps(copy, ensure_ascii=False, indent=1) + "\n"


#: Where the JSON Schemas of the data files are written, one per file.
SCHEMA_DIRECTORY = Path(__file__).with_name("schema")


def schema_path(name: str) -> Path:
    """The JSON Schema file of the data file ``name`` (materials.toml: materials.schema.json)."""
    return SCHEMA_DIRECTORY / name.replace(".toml", ".schema.json")


def render_schema(name: str) -> str:
    """The JSON Schema text of the data file ``name``, from its declaration in ``shape``."""
    return json.dumps(json_schema(name), ensure_ascii=False, indent=2) + "\n"


def _refresh(path: Path, text: str, what: str, check: bool) -> int:
    current = path.read_text(encoding="utf-8") if path.is_file() else None
    if current == text:
        print(f"{path} is up to date")
        return 0
    if check:
        print(f"{path} is out of date ({what}): run python -m prepbook.catalog.refresh")
        return 1
    path.parent.mkdir(exist_ok=True)
    path.write_text(text, encoding="utf-8", newline="\n")
    print(f"wrote {path}")
    return 0


def main(argv: list[str]) -> int:
    check = "--check" in argv
    # The parsed copy first: the formulas are then read through it.
    parsed = _refresh(data_directory() / PARSED_COPY, render_parsed(),
                      "it differs from the TOML files", check)
    masses = _refresh(PRECOMPUTED, render(), "it differs from periodictable", check)
    schemas = [_refresh(schema_path(name), render_schema(name), "it differs from shape.py",
                        check) for name in FILES]
    return max(parsed, masses, *schemas)


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
