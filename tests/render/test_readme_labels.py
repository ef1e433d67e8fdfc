"""The README's labels/reports/exports block runs after its walkthrough."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from tests.test_readme import _block_after, _run_block


@pytest.mark.skipif(shutil.which("bash") is None, reason="needs bash")
def test_labels_block_runs_after_the_walkthrough(tmp_path: Path) -> None:
    done = _run_block(_block_after("walkthrough") + "\n" + _block_after("labels"), tmp_path)
    assert done.returncode == 0, done.stdout + done.stderr
    for name in ("label-NAOH-0001.pdf", "sheet.pdf", "khp-lot.pdf",
                 "NAOH-0001-report.pdf", "runs.xlsx", "audit.csv"):
        assert (tmp_path / name).stat().st_size > 0, name
    assert "every labelled bottle matches the record" in done.stdout


def test_the_sample_renders_exist() -> None:
    docs = Path(__file__).resolve().parents[2] / "docs"
    for name in ("sample-label.png", "sample-report-page1.png"):
        assert (docs / name).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n", name
