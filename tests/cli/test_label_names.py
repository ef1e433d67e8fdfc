"""On a label printed from the record, "Standardized" names who recorded the accepted
run and who accepted it on review, with the run's date in lab time."""

from __future__ import annotations

import io
from pathlib import Path

from pypdf import PdfReader

from tests.cli.test_label_cli import _batch, demo_cli, demo_file  # noqa: F401 (fixtures)
from tests.conftest import Cli


def test_the_label_names_the_analyst_and_the_reviewer(demo_cli: Cli,  # noqa: F811
                                                      tmp_path: Path) -> None:
    code = _batch(demo_cli)
    res = demo_cli.json("label", code, "-o", str(tmp_path / "l.pdf"), "--size", "100x50mm",
                        user="ines")
    shown = demo_cli.json("batch", "show", code)
    run = next(r for r in shown["runs"] if r["run"] == res["run"])
    accepts = [r["reviewer"] for r in run["reviews"] if r["decision"] == "accept"]
    reader = PdfReader(io.BytesIO((tmp_path / "l.pdf").read_bytes()))
    text = " ".join(" ".join((p.extract_text() or "").split()) for p in reader.pages)
    who = f"by {run['analyst']}, " + (f"reviewed by {accepts[-1]}" if accepts
                                      else "no review recorded")
    assert f"{who} ({res['run']})" in text, text
