"""The precomputed molar masses (``prepbook/chem/molar_masses.json``) are exactly
what periodictable gives now, for exactly the catalog's formulas.

The table only saves importing periodictable at start-up; these checks recompute it
live, so it can never drift from the library. Whether the live values are right is
checked elsewhere against published values and molmass (tests/chem/test_formula.py,
tests/catalog/test_masses.py), and those checks go through the table for the
catalog's formulas.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from prepbook.catalog import materials, reagents, refresh
from prepbook.catalog.samples import analytes
from prepbook.chem import formula


def test_the_file_is_what_periodictable_gives_now() -> None:
    # Recomputed live; on failure run `python -m prepbook.catalog.refresh`.
    assert formula.PRECOMPUTED.read_text(encoding="utf-8") == refresh.render()


def test_the_table_holds_exactly_the_catalogs_formulas() -> None:
    wanted = ({m.formula for m in materials()} | {g.formula for g in reagents()}
              | {a.formula for a in analytes()})
    assert set(formula.precomputed()) == wanted


@pytest.mark.parametrize("text", sorted(formula.precomputed()))
def test_a_catalog_formula_comes_from_the_table_and_equals_the_live_value(text: str) -> None:
    looked_up = formula.molar_mass(text)
    assert looked_up is formula.precomputed()[text]
    assert looked_up == formula.molar_mass_live(text)  # every field, floats exactly


def _imports_periodictable(text: str) -> bool:
    code = ("import json, sys\nfrom prepbook.chem.formula import molar_mass\n"
            f"assert molar_mass({text!r}).value_g_per_mol > 0\n"
            "print(json.dumps('periodictable' in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def test_a_catalog_formula_needs_no_periodictable() -> None:
    assert not _imports_periodictable("KHC8H4O4")


def test_any_other_formula_is_computed_live() -> None:
    # Copper sulfate pentahydrate is not in the catalog.
    assert "CuSO4(H2O)5" not in formula.precomputed()
    assert _imports_periodictable("CuSO4(H2O)5")


def test_refresh_check_fails_on_a_stale_file_and_refresh_rewrites_it(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    stale = tmp_path / "molar_masses.json"
    stale.write_text(refresh.render().replace('"hill": "', '"hill": "X', 1), encoding="utf-8")
    monkeypatch.setattr(refresh, "PRECOMPUTED", stale)
    parsed = tmp_path / "parsed.json"  # the parsed copy is checked and written too
    monkeypatch.setattr(refresh, "data_directory", lambda: tmp_path)
    monkeypatch.setattr(refresh, "render_parsed", lambda: "{}\n")
    assert refresh.main(["--check"]) == 1
    assert refresh.main([]) == 0
    assert stale.read_text(encoding="utf-8") == refresh.render()
    assert parsed.read_text(encoding="utf-8") == "{}\n"
    assert refresh.main(["--check"]) == 0
