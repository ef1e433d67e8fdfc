"""prepbook report writes PDF/A-2b: every font embedded, the XMP claims part 2
conformance B, an sRGB output intent (checked with pypdf), and the structure checks of
tests/render/pdf_a_check.py (pikepdf) find nothing; no validator checks it (none
installs from the registries here)."""

from __future__ import annotations

from pathlib import Path

from tests.cli.test_label_cli import _batch, demo_cli, demo_file  # noqa: F401 (fixtures)
from tests.conftest import Cli
from tests.render.pdf_a_check import problems
from tests.render.test_label_paperwork import assert_pdf_a, fonts_of


def test_the_report_is_pdf_a_with_its_fonts_embedded(demo_cli: Cli,  # noqa: F811
                                                      tmp_path: Path) -> None:
    code = _batch(demo_cli)
    out = tmp_path / "r.pdf"
    demo_cli.ok("report", code, "-o", str(out))
    pdf = out.read_bytes()
    assert_pdf_a(pdf, f"prepbook batch record {code}")
    assert problems(pdf) == []
    assert {name.split("+")[-1] for name, _ in fonts_of(pdf)} <= {
        "DejaVuSansCondensed", "DejaVuSansCondensed-Bold", "DejaVuSansCondensed-Oblique",
        "DejaVuSansCondensed-BoldOblique"}
