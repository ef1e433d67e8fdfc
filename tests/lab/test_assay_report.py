"""The report's assays and their impact, on the demo lab (whose silver nitrate reading is
corrected after a water sample was titrated with it), drawn and rendered to an image."""

from __future__ import annotations

import io
from pathlib import Path

import pypdfium2 as pdfium
import pytest
from pypdf import PdfReader

from prepbook.lab import assays, board, reports
from prepbook.render import report as drawn
from prepbook.store.engine import open_database


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> Path:
    from prepbook.lab import demo as demo_lab

    path = tmp_path_factory.mktemp("demo") / "d.db"
    demo_lab.build(path)
    return path


def _impacted_batch(db) -> str:
    marked = [b.batch for b in board.board(db)
              if any("assay result(s) impacted" in w for w in b.warnings)]
    assert len(marked) == 1, marked
    return marked[0]


def test_the_report_lists_the_assays_and_the_impacted_results(demo: Path,
                                                              tmp_path: Path) -> None:
    db = open_database(str(demo))
    code = _impacted_batch(db)
    rows = assays.impact(db, code)
    made = assays.assays_of(db, code)
    assert [r.kind for r in rows] == ["corrected"] and len(made) == 1
    data = reports.gather(db, code)
    assert data.assays == made and data.impact == rows
    out = tmp_path / "r.pdf"
    drawn.write_report(data, drawn.checked_target(str(out), paper="a4", replace=False))
    reader = PdfReader(io.BytesIO(out.read_bytes()))
    text = " ".join(" ".join((p.extract_text() or "").split()) for p in reader.pages)
    assert "Assays (1)" in text and "Impact on the results (1)" in text
    assert made[0].sample in text and rows[0].reason in text
    # Every page renders in an independent PDF engine (PDFium) and is not blank.
    rendered = pdfium.PdfDocument(out)
    assert len(rendered) == len(reader.pages)
    for page in rendered:
        gray = page.render(scale=60 / 72).to_pil().convert("L")
        darkest, lightest = gray.getextrema()
        assert lightest > 200 and darkest < 100  # paper, and ink on it


def test_a_batch_without_assays_says_so(demo: Path, tmp_path: Path) -> None:
    db = open_database(str(demo))
    code = next(b.batch for b in board.board(db) if not assays.assays_of(db, b.batch))
    out = tmp_path / "r.pdf"
    drawn.write_report(reports.gather(db, code), out)
    reader = PdfReader(io.BytesIO(out.read_bytes()))
    text = " ".join(" ".join((p.extract_text() or "").split()) for p in reader.pages)
    assert "Assays (0)" in text and "No sample titrated with this batch." in text
