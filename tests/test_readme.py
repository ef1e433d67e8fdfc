"""The README's examples run as written (documentation that cannot rot).

The blocks after a `<!-- walkthrough ... -->` or `<!-- calculations ... -->` marker
are run with bash in a fresh directory, using the `prepbook` installed beside the
Python running the tests. The fresh-machine commands are checked for their shape:
CI (`.ci/run`) runs them for real.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _block_after(marker: str) -> str:
    match = re.search(rf"<!-- {marker}[^>]*-->\s*```sh\n(.*?)```", README, re.S)
    assert match, f"README has no block after the {marker} marker"
    return match.group(1)


def _run_block(script: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    bindir = Path(sys.executable).parent
    if not (bindir / "prepbook").exists() and not (bindir / "prepbook.exe").exists():
        pytest.skip("prepbook is not installed beside this Python")
    env = {**os.environ, "PATH": f"{bindir}{os.pathsep}{os.environ.get('PATH', '')}",
           "COLUMNS": "100", "NO_COLOR": "1"}
    env.pop("PREPBOOK_DB", None)
    env.pop("PREPBOOK_USER", None)
    return subprocess.run(["bash", "-e", "-c", script], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=300)


@pytest.mark.skipif(shutil.which("bash") is None, reason="needs bash")
def test_walkthrough_runs(tmp_path: Path) -> None:
    done = _run_block(_block_after("walkthrough"), tmp_path)
    assert done.returncode == 0, done.stdout + done.stderr
    assert "in service" in done.stdout
    assert "audit trail verified" in done.stdout
    assert (tmp_path / "lab.db").exists()


@pytest.mark.skipif(shutil.which("bash") is None, reason="needs bash")
def test_a_day_with_samples_runs(tmp_path: Path) -> None:
    done = _run_block(_block_after("samples"), tmp_path)
    assert done.returncode == 0, done.stdout + done.stderr
    assert "VIN-0413" in done.stdout and "OUTSIDE" in done.stdout
    assert "R261201-1 was corrected after use" in done.stdout
    assert (tmp_path / "assays.csv").read_text(encoding="utf-8").count("VIN-04") == 2


@pytest.mark.skipif(shutil.which("bash") is None, reason="needs bash")
def test_calculation_examples_run(tmp_path: Path) -> None:
    done = _run_block(_block_after("calculations"), tmp_path)
    assert done.returncode == 0, done.stdout + done.stderr
    assert "N = 0.101" in done.stdout


def test_fresh_machine_commands_are_the_ones_ci_runs() -> None:
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert "pip install . && prepbook demo" in README
    assert "pip install -e '.[test]' && python -m pytest" in README
    assert "pip install --quiet --disable-pip-version-check -e '.[test]'" in ci
    assert "python -m pytest" in ci
    assert "prepbook\" demo" in ci or "prepbook demo" in ci
