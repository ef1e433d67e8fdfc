"""The pure core stays light (DESIGN: fast start-up; API plan: layers point one way).

Each check runs in a fresh interpreter so modules imported by other tests do not count.
"""

from __future__ import annotations

import importlib.util
import json
import pkgutil
import subprocess
import sys

import pytest

CORE_PACKAGES = ("prepbook.chem", "prepbook.catalog", "prepbook.rules")
NEVER_IN_CORE = ("sqlalchemy", "typer", "rich", "pandas", "alembic")
NO_NUMPY = ("prepbook.chem.standardization", "prepbook.chem.stats", "prepbook.chem.formula",
            "prepbook.chem.corrections", "prepbook.chem.preparation")


def _core_modules() -> list[str]:
    """Every module of the core packages that exists now (others are still being written)."""
    names = []
    for package in CORE_PACKAGES:
        spec = importlib.util.find_spec(package)
        if spec is None:
            continue
        names.append(package)
        for info in pkgutil.walk_packages(spec.submodule_search_locations, prefix=package + "."):
            names.append(info.name)
    return names


def _loaded_after_import(module: str, watched: tuple[str, ...]) -> list[str]:
    code = (
        "import importlib, json, sys\n"
        f"importlib.import_module({module!r})\n"
        f"print(json.dumps(sorted(m for m in {list(watched)!r} if m in sys.modules)))\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=False, timeout=120)
    assert proc.returncode == 0, f"importing {module} failed:\n{proc.stderr}"
    return json.loads(proc.stdout.strip().splitlines()[-1])


@pytest.mark.parametrize("module", _core_modules())
def test_core_module_imports_no_storage_or_terminal_library(module: str) -> None:
    assert _loaded_after_import(module, NEVER_IN_CORE) == []


@pytest.mark.parametrize("module", NO_NUMPY)
def test_fast_path_modules_import_no_numpy_or_scipy(module: str) -> None:
    if importlib.util.find_spec(module) is None:
        pytest.skip(f"{module} does not exist yet")
    assert _loaded_after_import(module, ("numpy", "scipy", "uncertainties")) == []
