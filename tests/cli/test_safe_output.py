"""Stored text is shown as text (issue 14): Rich markup, reportlab paragraph tags,
escape sequences and control characters in a note, a reason or a name neither style,
link nor crash a table, a label, a report or the terminal app; a write whose text
holds markup commits and prints without a traceback. Also two messages of issue 19.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.cli.test_bench_flow import _make_batch, _standardize, bench  # noqa: F401
from tests.conftest import Cli, is_url, row_counts
from tests.tampering import tamper

MARKUP = "[bold red]ACCEPTED[/] [link=http://x.example]y[/link] x [/]"
TAGS = '<b>bold</b> <font size="40">BIG</font> <link href="http://x.example">y</link> &amp;'


def test_a_write_with_markup_commits_and_prints_it_as_text(bench: Cli) -> None:  # noqa: F811
    before = row_counts(bench.db)
    out = bench.ok("spec", "add", "NaOH-0.2N", "--name", "x [/]", "--solute", "NaOH",
                   "--nominal", "0.2", user="ada")
    assert "(x [/])" in out.stdout
    assert row_counts(bench.db)["specs"] == before["specs"] + 1
    assert "x [/]" in bench.ok("spec", "list").stdout
    batch = _make_batch(bench)
    out = bench.ok("batch", "retire", batch, "--reason", "x [/bold]", "--passphrase-stdin",
                   user="ben", input="ben-passphrase\n")
    assert "retired: x [/bold]" in out.stdout
    shown = bench.ok("batch", "show", batch).stdout
    assert "x [/bold]" in shown
    assert "x [/bold]" in bench.ok("audit", "log").stdout


def test_markup_in_notes_reasons_and_certificates_prints_literally(bench: Cli) -> None:  # noqa: F811
    bench.ok("lot", "add", "KHP", "--code", "KHP-M", "--purity", "99.9", "--expires",
             "2031-01-01", "--certificate", MARKUP, user="ben")
    made = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                      "--notes", MARKUP, user="ben")
    shown = bench.ok("batch", "show", made["batch"]).stdout
    assert f"notes: {MARKUP}" in shown  # brackets kept: nothing was read as markup
    assert "\x1b" not in shown
    assert MARKUP[:20] in bench.ok("lot", "list").stdout


def test_escape_sequences_and_control_characters_in_the_record_are_shown_visibly(
        bench: Cli) -> None:  # noqa: F811
    """The tool refuses control characters at entry; a record changed behind its back
    (or written by an older version) still cannot move the cursor or clear the screen."""
    batch = _make_batch(bench)
    # PostgreSQL text cannot hold a NUL byte at all; SQLite's can.
    nul = "" if is_url(bench.db) else "\x00"
    tamper(bench.db, "UPDATE batches SET notes = ? WHERE code = ?",
            f"a\x1b[2J\x1b]8;;http://x\x1b\\b\u202ec{nul}d", batch)
    out = bench.ok("batch", "show", batch).stdout
    assert "\x1b" not in out and "\u202e" not in out and "\x00" not in out
    assert (r"a\x1b[2J\x1b]8;;http://x\x1b\b\u202ec" + (r"\x00" if nul else "") + "d") in out


def test_trace_names_a_missing_certificate_instead_of_none(bench: Cli) -> None:  # noqa: F811
    bench.ok("lot", "add", "NaOH", "--code", "NAOH-S1", "--purity", "98.5", "--expires",
             "2031-01-01", user="ben")
    made = bench.json("batch", "make", "NaOH-0.1N", "--volume", "1000", "--solute-mass", "4.1",
                      "--solute-lot", "NAOH-S1", user="ben")
    out = bench.ok("trace", made["batch"]).stdout
    assert "(None)" not in out
    assert "solute lot NAOH-S1 (no certificate recorded)" in out


def test_acid_and_base_take_their_articles() -> None:
    out = Cli(":memory:").refused("calc", "normality", "--standard", "Na2CO3", "--titrant",
                                  "NaOH", "--rep", "0.2:20")
    assert "Na2CO3 is a base and NaOH is a base" in out.stderr


def _pdf_text(path: Path) -> str:
    from pypdf import PdfReader

    return "\n".join(page.extract_text() or "" for page in PdfReader(path).pages)


def test_labels_and_reports_show_tags_and_markup_as_text(bench: Cli, tmp_path: Path) -> None:  # noqa: F811
    bench.ok("spec", "add", "NaOH-0.2N", "--name", TAGS, "--solute", "NaOH", "--nominal", "0.2",
             "--storage", "cool </para><para> [/]", user="ada")
    made = bench.json("batch", "make", "NaOH-0.2N", "--volume", "1000", "--solute-mass", "8.2",
                      "--notes", f"{MARKUP} {TAGS}", user="ben")
    batch = made["batch"]
    label, report = tmp_path / "label.pdf", tmp_path / "report.pdf"
    bench.ok("label", batch, "-o", str(label), user="ben")
    bench.ok("report", batch, "-o", str(report))
    label_text = " ".join(_pdf_text(label).split())
    report_text = " ".join(_pdf_text(report).split())
    assert "<b>bold</b>" in label_text and "</para><para> [/]" in label_text
    assert "<b>bold</b>" in report_text and "[bold red]ACCEPTED[/]" in report_text
    assert "&amp;" in report_text  # stored as typed, shown as typed


@pytest.mark.asyncio
async def test_the_terminal_app_shows_stored_markup_as_text(bench: Cli) -> None:  # noqa: F811
    pytest.importorskip("textual")
    from prepbook.store.engine import open_database
    from prepbook.tui.app import PrepbookApp
    from prepbook.tui.screens.audit import AuditScreen
    from prepbook.tui.screens.batch import BatchScreen

    batch = _make_batch(bench)
    run = _standardize(bench, batch)
    bench.ok("review", run["run"], "--reject", "--reason", MARKUP, "--passphrase-stdin",
             user="cleo", input="cleo-passphrase\n")
    app = PrepbookApp(open_database(str(bench.db)), user="cleo", poll_seconds=0)
    async with app.run_test(size=(160, 45)) as pilot:
        await pilot.pause()
        app.push_screen(AuditScreen())
        await pilot.pause()
        table = app.screen.query_one("#events")
        cells = [str(table.get_cell_at((row, 6))) for row in range(table.row_count)]
        assert MARKUP in cells
        app.pop_screen()
        app.push_screen(BatchScreen(batch))
        await pilot.pause()
        assert app.screen.is_current
