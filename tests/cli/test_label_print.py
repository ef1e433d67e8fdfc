"""prepbook label --print: the PDF goes to the system's print command (a stand-in `lp`
on PATH here, which records what it was given), the file stays written, and without a
print command the label is refused in one line before anything is written."""

from __future__ import annotations

import os
import stat
import sys
from pathlib import Path

import pytest

from tests.cli.test_label_cli import _batch, demo_cli, demo_file  # noqa: F401 (fixtures)
from tests.conftest import Cli, row_counts

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="lp is a POSIX command")


def _fake_lp(folder: Path, *, name: str = "lp", status: int = 0) -> Path:
    """A stand-in print command that writes its arguments and a copy of the file."""
    log = folder / "lp-args.txt"
    script = folder / name
    script.write_text("#!/bin/sh\n"
                      f'printf "%s\\n" "$@" > "{log}"\n'
                      'for last; do :; done\n'
                      f'cp "$last" "{folder}/queued.pdf"\n'
                      'echo "request id is fake-1 (1 file(s))"\n'
                      f"exit {status}\n")
    script.chmod(script.stat().st_mode | stat.S_IXUSR)
    return log


def _only(folder: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("PATH", str(folder))


def test_print_sends_the_written_pdf_to_lp(demo_cli: Cli, tmp_path: Path,  # noqa: F811
                                           monkeypatch: pytest.MonkeyPatch) -> None:
    bin_dir = tmp_path / "bin"
    bin_dir.mkdir()
    log = _fake_lp(bin_dir)
    code = _batch(demo_cli)
    out = tmp_path / "l.pdf"
    monkeypatch.setenv("PATH", f"{bin_dir}{os.pathsep}{os.environ['PATH']}")
    res = demo_cli.ok("label", code, "-o", str(out), "--print", "--printer", "bench-2",
                      user="ines")
    assert log.read_text().split("\n")[:4] == ["-d", "bench-2", "--", str(out)]
    assert (bin_dir / "queued.pdf").read_bytes() == out.read_bytes()  # the same file
    assert "request id is fake-1" in res.stdout


def test_print_without_a_printer_name_goes_to_the_default(
        demo_cli: Cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    log = _fake_lp(tmp_path)
    monkeypatch.setenv("PATH", f"{tmp_path}{os.pathsep}{os.environ['PATH']}")
    out = tmp_path / "l.pdf"
    demo_cli.ok("label", _batch(demo_cli), "-o", str(out), "--print", user="ines")
    assert log.read_text().split("\n")[:2] == ["--", str(out)]


def test_no_print_command_is_one_line_and_writes_nothing(
        demo_cli: Cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:  # noqa: F811
    code = _batch(demo_cli)
    demo_cli.ok("status")  # the session and database are ready before PATH is emptied
    before = row_counts(demo_cli.db)
    empty = tmp_path / "empty"
    empty.mkdir()
    out = tmp_path / "l.pdf"
    _only(empty, monkeypatch)
    res = demo_cli.refused("label", code, "-o", str(out), "--print", user="ines")
    assert "no print command found" in res.stderr
    assert not out.exists() and row_counts(demo_cli.db) == before


def test_a_refusing_printer_is_one_line(demo_cli: Cli, tmp_path: Path,  # noqa: F811
                                        monkeypatch: pytest.MonkeyPatch) -> None:
    _fake_lp(tmp_path, status=1)
    monkeypatch.setenv("PATH", f"{tmp_path}{os.pathsep}{os.environ['PATH']}")
    out = tmp_path / "l.pdf"
    res = demo_cli.refused("label", _batch(demo_cli), "-o", str(out), "--print", user="ines")
    assert "the printer refused" in res.stderr
    assert out.exists()  # the label was written and recorded; only the printing failed


def test_printer_without_print_is_refused(demo_cli: Cli, tmp_path: Path) -> None:  # noqa: F811
    demo_cli.refused("label", _batch(demo_cli), "-o", str(tmp_path / "l.pdf"),
                     "--printer", "x", user="ines")
    assert not (tmp_path / "l.pdf").exists()
