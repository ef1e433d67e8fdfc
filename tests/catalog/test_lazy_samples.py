"""Loading the catalog builds no analyte or ion: only sample titrations use them, and
``catalog.samples`` builds and checks them when first asked for. Each check runs in a
fresh interpreter so modules imported by other tests do not count."""

from __future__ import annotations

import json
import subprocess
import sys


def _loaded_after(code: str) -> list[str]:
    watched = ["prepbook.catalog.sample_models", "prepbook.catalog.samples"]
    script = (f"import json, sys\n{code}\n"
              f"print(json.dumps([m for m in {watched!r} if m in sys.modules]))")
    out = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                         check=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def test_loading_the_catalog_builds_no_sample_model() -> None:
    assert _loaded_after("from prepbook.catalog import find_material\n"
                         "assert find_material('KHP').formula == 'KHC8H4O4'") == []


def test_asking_for_an_analyte_builds_them() -> None:
    # The check above sees the sample models when they are built.
    assert _loaded_after("from prepbook.catalog.samples import find_analyte\n"
                         "assert find_analyte('chloride').code") == [
        "prepbook.catalog.sample_models", "prepbook.catalog.samples"]
