"""The batch report of the demo lab: every section, every run and replicate, the chart,
and a footer naming the audit chain's head hash."""

from __future__ import annotations

import io
from pathlib import Path

import pytest
from pypdf import PdfReader

from prepbook.clock import LabClock
from prepbook.errors import InvalidInput, NotFound
from prepbook.lab import auditing, batches, reports
from prepbook.render import report as drawn
from prepbook.render.report import WrittenReport
from prepbook.store.engine import open_database


@pytest.fixture(scope="module")
def demo(tmp_path_factory: pytest.TempPathFactory) -> Path:
    from prepbook.lab import demo as demo_lab

    path = tmp_path_factory.mktemp("demo") / "d.db"
    demo_lab.build(path)
    return path


def _text(pdf: Path) -> str:
    reader = PdfReader(io.BytesIO(pdf.read_bytes()))
    return " ".join(" ".join((p.extract_text() or "").split()) for p in reader.pages)


def _write(db, code: str, output: Path, paper: str = "a4") -> WrittenReport:
    """What ``prepbook report`` does: check the file, gather the data, draw and write."""
    target = drawn.checked_target(str(output), paper=paper, replace=False)
    return drawn.write_report(reports.gather(db, code), target, paper=paper)


def _busiest(db) -> str:
    from prepbook.lab import board

    return max((b.batch for b in board.board(db)),
               key=lambda c: len(batches.show_batch(db, c).runs))


def test_the_report_shows_every_run_replicate_review_and_the_head_hash(demo: Path,
                                                                       tmp_path: Path) -> None:
    db = open_database(str(demo))
    code = _busiest(db)
    out = tmp_path / "r.pdf"
    res = _write(db, code, out)
    text = _text(out)
    shown = batches.show_batch(db, code)
    head = auditing.verify(db).head_hash
    assert res.head_hash == head and res.pages >= 2 and res.runs == len(shown.runs)
    for section in ("Preparation", "Control chart", "Standardizations", "Uncertainty budget",
                    "Corrections and reasons", "Uses", "Labels printed", "Audit trail"):
        assert section in text, section
    assert shown.preparation.made_by in text and shown.spec_name in text
    for run in shown.runs:
        assert run.run in text
        for rep in run.replicates or ():
            assert rep.amount in text and rep.volume_ml in text
        for review in run.reviews:
            assert review.reviewer in text and LabClock().shown(review.signed_at) in text
    for use in shown.uses:
        assert use.by in text
    # The footer carries the head hash on every page, and the time of printing.
    reader = PdfReader(io.BytesIO(out.read_bytes()))
    for page in reader.pages:
        page_text = " ".join((page.extract_text() or "").split())
        assert head in page_text and "printed" in page_text
    assert "verified" in text


def test_a_rejection_reason_appears_among_the_corrections(demo: Path, tmp_path: Path) -> None:
    db = open_database(str(demo))
    from prepbook.lab import board

    for b in board.board(db):
        shown = batches.show_batch(db, b.batch)
        rejected = [r for r in shown.runs if r.status == "rejected"]
        if rejected:
            break
    else:  # pragma: no cover - the demo has a rejected run
        pytest.fail("no rejected run in the demo")
    out = tmp_path / "rej.pdf"
    _write(db, shown.batch, out)
    text = _text(out)
    reason = " ".join((rejected[0].reviews[0].reason or "").split())
    assert reason[:40] in text and "REJECTED" in text


def test_the_control_chart_has_a_point_per_run_and_the_window(demo: Path) -> None:
    db = open_database(str(demo))
    code = _busiest(db)
    data = reports.gather(db, code)
    runs = [r for r in data.batch.runs if r.factor is not None]
    assert len(data.chart) == len(runs)
    # The plotted concentration is the nominal times the factor (the spec's own unit).
    for point, run in zip(data.chart, runs, strict=True):
        assert run.factor is not None
        assert point.concentration == pytest.approx(data.window.nominal * run.factor)
    assert data.window.factor_low < 1 < data.window.factor_high


def test_report_refusals_write_nothing(demo: Path, tmp_path: Path) -> None:
    db = open_database(str(demo))
    with pytest.raises(NotFound):
        _write(db, "NO-SUCH", tmp_path / "a.pdf")
    with pytest.raises(InvalidInput, match="does not exist"):
        _write(db, _busiest(db), tmp_path / "no" / "a.pdf")
    with pytest.raises(InvalidInput, match="paper"):
        _write(db, _busiest(db), tmp_path / "a.pdf", paper="a3")
    with pytest.raises(InvalidInput, match="should end in .pdf"):
        _write(db, _busiest(db), tmp_path / "a.txt")
    assert list(tmp_path.iterdir()) == []
