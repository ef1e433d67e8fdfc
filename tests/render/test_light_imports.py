"""The board and `calc` never pay for reportlab, qrcode, pandas or openpyxl."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

HEAVY = ["reportlab", "qrcode", "pandas", "openpyxl"]


@pytest.mark.parametrize("module", ["prepbook.cli.app", "prepbook.lab.board",
                                    "prepbook.lab.labels", "prepbook.lab.exports",
                                    "prepbook.lab.reports", "prepbook.render.labels",
                                    "prepbook.render.report", "prepbook.render.exports"])
def test_importing_does_not_load_the_heavy_libraries(module: str) -> None:
    code = (f"import importlib, json, sys\nimportlib.import_module({module!r})\n"
            f"print(json.dumps([m for m in {HEAVY!r} if m in sys.modules]))\n")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          check=True, timeout=120)
    assert json.loads(proc.stdout.strip().splitlines()[-1]) == []
