"""prepbook label --print on Windows, run on any system with stand-ins: the platform test
in ``render.printing`` says Windows, ``os.startfile`` is a recorder (the shell call that
hands the PDF to its associated program's "print" verb), and no ``lp`` or ``lpr`` is on
PATH. What this cannot show is a real Windows print queue taking the file: it is not
run on a Windows machine here."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from prepbook.render import printing
from tests.cli.test_label_cli import _batch, demo_cli, demo_file  # noqa: F401 (fixtures)
from tests.conftest import Cli, row_counts


class StartFile:
    """A stand-in for ``os.startfile``: records each call, or fails as Windows does when
    no program is associated with PDF files."""

    def __init__(self, error: OSError | None = None) -> None:
        self.calls: list[tuple[str, str, bytes]] = []
        self.error = error

    def __call__(self, path: object, operation: str = "open") -> None:
        if self.error is not None:
            raise self.error
        self.calls.append((str(path), operation, Path(str(path)).read_bytes()))


@pytest.fixture
def on_windows(demo_cli: Cli, tmp_path: Path,  # noqa: F811
               monkeypatch: pytest.MonkeyPatch) -> tuple[Cli, str]:
    """The demo lab, its in-service batch, and Windows as the print code sees it."""
    code = _batch(demo_cli)
    demo_cli.ok("status")  # session and database ready before PATH is emptied
    empty = tmp_path / "no-lp"
    empty.mkdir()
    monkeypatch.setenv("PATH", str(empty))  # no lp, no lpr: the verb is the only way
    monkeypatch.setattr(printing, "windows", lambda: True)
    return demo_cli, code


def test_windows_hands_the_written_pdf_to_the_print_verb(
        on_windows: tuple[Cli, str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    cli, code = on_windows
    started = StartFile()
    monkeypatch.setattr(os, "startfile", started, raising=False)
    out = tmp_path / "l.pdf"
    res = cli.ok("label", code, "-o", str(out), "--print", user="ines")
    assert [(path, verb) for path, verb, _ in started.calls] == [(str(out), "print")]
    assert started.calls[0][2] == out.read_bytes()  # the finished file, once, in place
    assert out.read_bytes().startswith(b"%PDF")
    assert "printing: sent to the default printer" in res.stdout


def test_windows_refuses_a_printer_name_before_anything_is_written(
        on_windows: tuple[Cli, str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """The print verb prints on the default printer only: a named printer is refused in
    one line rather than the label going silently to another one."""
    cli, code = on_windows
    started = StartFile()
    monkeypatch.setattr(os, "startfile", started, raising=False)
    before = row_counts(cli.db)
    out = tmp_path / "l.pdf"
    res = cli.refused("label", code, "-o", str(out), "--print", "--printer", "bench-2",
                      user="ines")
    assert res.stderr == ("prepbook: --printer cannot choose a printer on Windows, where the "
                          "label goes to the default printer: leave out --printer, or make "
                          "that printer the default\n")
    assert started.calls == [] and not out.exists() and row_counts(cli.db) == before


def test_windows_print_failure_is_one_line_and_the_label_stays(
        on_windows: tuple[Cli, str], tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    cli, code = on_windows
    # Windows' words when no program is associated with the file type (error 1155).
    failing = StartFile(OSError(22, "No application is associated with the specified file "
                                    "for this operation"))
    monkeypatch.setattr(os, "startfile", failing, raising=False)
    out = tmp_path / "l.pdf"
    before = row_counts(cli.db)["label_prints"]
    res = cli.refused("label", code, "-o", str(out), "--print", user="ines")
    assert res.stderr == (f"prepbook: could not print {out}: No application is associated "
                          "with the specified file for this operation\n")
    # The label was written and its print recorded; only the printing failed.
    assert out.read_bytes().startswith(b"%PDF")
    assert row_counts(cli.db)["label_prints"] == before + 1
